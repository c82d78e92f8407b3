"""The tolerance report: frozen rows the solve command and the system report print."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["FaceFormRow", "SensitivityRow", "ToleranceReport", "YieldRow"]


@dataclass(frozen=True, slots=True)
class SensitivityRow:
    """Change of the outputs at the design wavelength per unit error ``per``.

    Args:
        prism: prism name.
        parameter: "angle B/C", "pyramidal B", "nd", "vd", "mount_rot", "mount_tilt".
        per: the unit error, e.g. "1′", "Δn 1e-4", "1 mrad".
        pointing_in_mrad, pointing_out_mrad: in-plane and out-of-plane pointing change.
        magnification_pct: relative in-plane magnification change, percent.
        offset_mm: in-plane lateral offset change.
    """

    prism: str
    parameter: str
    per: str
    pointing_in_mrad: float
    pointing_out_mrad: float
    magnification_pct: float
    offset_mm: float


@dataclass(frozen=True, slots=True)
class YieldRow:
    """The class chosen for one toleranced quantity of one part, and the yield one class looser."""

    part: str
    quantity: str  # angle | pyramidal | nd | vd
    value: float
    unit: str
    grade: str
    looser_value: float | None = None
    looser_yield: float | None = None
    looser_failing: tuple[tuple[str, float], ...] = ()


@dataclass(frozen=True, slots=True)
class FaceFormRow:
    """Surface form of one optical face from the wavefront budget.

    Args:
        opd_factor: wavefront error per unit surface height error.
        allowed_fringes: largest irregularity the budget allows, fringes at the test wavelength.
        chosen_fringes: the class chosen (loosest standard class within the allowance).
    """

    part: str
    face: str
    role: str
    opd_factor: float
    allowed_fringes: float
    chosen_fringes: float
    grade: str


@dataclass(frozen=True, slots=True)
class ToleranceReport:
    """The tolerance analysis of one system (see ``prismfab.design.tolerance.derive``)."""

    wavelengths_nm: tuple[float, ...]
    sensitivities: tuple[SensitivityRow, ...]
    compensator: str
    removes: tuple[str, ...]
    leaves: tuple[str, ...]
    requirements: tuple[tuple[str, float, str], ...]
    n_builds: int
    seed: int
    yields: tuple[YieldRow, ...]
    system_yield: float
    yield_target: float
    failing: tuple[tuple[str, float], ...]
    driving: str
    thermal_mrad_per_k: tuple[tuple[str, float], ...]
    thermal_total_mrad_per_k: float | None
    surface_form: tuple[FaceFormRow, ...]
    cost: tuple[tuple[str, float], ...]
    warnings: tuple[str, ...] = ()
    method: tuple[str, ...] = (
        "Sensitivities: exact chief-ray re-trace with each error applied, central differences.",
        "Angle errors act on the chain of functional angles from datum B; pyramidal errors tilt "
        "one optical face out of the principal section.",
        "Monte Carlo: every error uniform within its tolerance, linearised outputs, seeded; "
        "outputs are changes from the nominal design at every wavelength.",
        "Classes and cost multipliers are common practice of optics shops, not normative values.",
        "Surface form: wavefront budget shared equally (RSS) over the optical passes; "
        "OPD per unit height h(n cos θt − cos θi) in refraction, 2nh cos θ in internal reflection; "
        "power (first ISO 10110-5 number) twice the irregularity, as focus absorbs it.",
        "Thermal drift: (dδ/dn)(dn/dT); uniform temperature leaves the angles unchanged.",
    )

    def lines(self) -> tuple[str, ...]:
        """Plain-text lines for the command line and the system report."""
        out = [f"Tolerance analysis ({self.n_builds} builds, seed {self.seed}, "
               f"wavelengths {', '.join(f'{w:g}' for w in self.wavelengths_nm)} nm)"]
        out.append("  requirements: " + ", ".join(f"{n} {v:g} {u}" for n, v, u in self.requirements)
                   + f", yield target {self.yield_target:.0%}")
        out.append(f"  compensator: {self.compensator}")
        if self.leaves:
            out.append("  alignment leaves: " + "; ".join(self.leaves))
        out.append(f"  system yield {self.system_yield:.1%}; driving: {self.driving}")
        for r in self.yields:
            looser = "" if r.looser_yield is None else \
                f" (one class looser {r.looser_value:g}: {r.looser_yield:.1%})"
            unit = f" {r.unit}" if r.unit else ""
            out.append(f"  {r.part} {r.quantity} ±{r.value:g}{unit} [{r.grade}]{looser}")
        out.append("  sensitivities (design wavelength): prism, error, per, pointing in/out mrad, "
                   "magnification %, offset mm")
        for s in self.sensitivities:
            out.append(f"    {s.prism} {s.parameter} per {s.per}: {s.pointing_in_mrad:+.4f} "
                       f"{s.pointing_out_mrad:+.4f} {s.magnification_pct:+.4f} {s.offset_mm:+.4f}")
        for f in self.surface_form:
            out.append(f"  {f.part} face {f.face} ({f.role}): OPD factor {f.opd_factor:.3f}, allows "
                       f"{f.allowed_fringes:.2f} fringes, chosen {f.chosen_fringes:g} [{f.grade}]")
        if self.thermal_total_mrad_per_k is not None:
            out.append(f"  thermal pointing drift {self.thermal_total_mrad_per_k * 1e3:+.3f} µrad/K")
        out += [f"  cost index {p}: {c:g} (common practice)" for p, c in self.cost]
        out += [f"  warning: {w}" for w in self.warnings]
        return tuple(out)
