"""Tolerance classes, material grades, ISO 10110 indications and coating requirement texts.

The class values are common practice of optics shops (published shop tolerance charts and glass
catalogue grades), not normative numbers; each ladder step carries the grade it belongs to.
The indication strings follow the ISO 10110 code syntax: ``0/`` stress birefringence, ``1/``
bubbles and inclusions, ``2/`` inhomogeneity and striae (ISO 10110-2/-3/-4, now ISO 10110-18),
``3/`` surface form (ISO 10110-5, test wavelength always stated), ``5/`` surface imperfections
(ISO 10110-7), or MIL-PRF-13830B scratch-dig. Coating texts state what ISO 9211-2 asks for.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from prismfab.model import Coating, CoatingType, FaceRole, Polarization

__all__ = [
    "ANGLE_LADDER_ARCSEC",
    "CLASS_COST",
    "FLATNESS_LADDER_FRINGES",
    "GRADES",
    "ND_LADDER",
    "PYRAMIDAL_LADDER_ARCSEC",
    "VD_LADDER_PCT",
    "GradeDefaults",
    "MaterialGrade",
    "coating_text",
    "fmt_number",
    "grade_number",
    "imperfections_iso",
    "material_grade",
    "scratch_dig",
    "surface_form",
]

COMMERCIAL, PRECISION, HIGH = "commercial", "precision", "high-precision"

# Ladders run from the loosest step to the tightest: (value, grade tag). Common practice.
ANGLE_LADDER_ARCSEC = ((300.0, COMMERCIAL), (180.0, COMMERCIAL), (60.0, PRECISION),
                       (30.0, PRECISION), (10.0, HIGH), (5.0, HIGH), (3.0, HIGH))
PYRAMIDAL_LADDER_ARCSEC = ((300.0, COMMERCIAL), (180.0, COMMERCIAL), (60.0, PRECISION),
                           (30.0, HIGH), (10.0, HIGH))
ND_LADDER = ((0.0005, COMMERCIAL), (0.0003, PRECISION), (0.0002, HIGH))  # common practice
VD_LADDER_PCT = ((0.8, COMMERCIAL), (0.5, PRECISION), (0.3, HIGH))
# Irregularity PV in fringes at 632.8 nm (1 fringe = λ/2): 1λ, λ/4, λ/10, λ/20 flatness
# (common practice).
FLATNESS_LADDER_FRINGES = ((2.0, COMMERCIAL), (0.5, PRECISION), (0.2, HIGH), (0.1, HIGH))

CLASS_COST = {COMMERCIAL: 1.0, PRECISION: 2.0, HIGH: 5.0}
"""Relative unit cost per class step, common practice (1×, ~1.5-3×, ~3-10×; mid values)."""


@dataclass(frozen=True, slots=True)
class GradeDefaults:
    """Default tolerances of one grade (common practice)."""

    angle_arcsec: float
    pyramidal_arcsec: float
    length_mm: float
    flatness_fringes: float  # irregularity at 632.8 nm
    scratch_dig: str  # MIL-PRF-13830B
    localized_grade_mm: float  # ISO 10110-7 A (√area), from the dig size by equal area
    long_scratch_mm: float  # ISO 10110-7 L width
    edge_chip_mm: float  # ISO 10110-7 E, and the chip limit of bevelled edges
    sharp_chip_mm: float  # chip limit on edges left sharp


GRADES = {
    COMMERCIAL: GradeDefaults(180.0, 180.0, 0.25, 2.0, "60-40", 0.40, 0.016, 0.5, 0.2),
    PRECISION: GradeDefaults(60.0, 60.0, 0.10, 0.5, "40-20", 0.25, 0.010, 0.3, 0.1),
    HIGH: GradeDefaults(10.0, 30.0, 0.05, 0.2, "20-10", 0.10, 0.004, 0.1, 0.05),
}
_SCRATCH_STEPS = (("60-40", 0.40, 0.016), ("40-20", 0.25, 0.010), ("20-10", 0.10, 0.004),
                  ("10-5", 0.063, 0.0025))


def fmt_number(value: float, *, decimal_comma: bool = False, digits: int = 4) -> str:
    """Shortest plain text of a number (no trailing zeros), with a point or an ISO comma."""
    text = f"{value:.{digits}f}".rstrip("0").rstrip(".")
    if text in ("-0", ""):
        text = "0"
    return text.replace(".", ",") if decimal_comma else text


def grade_number(value_mm: float, *, decimal_comma: bool = False) -> str:
    """An ISO 10110 grade number as the series writes it: 0.10, 0.25, 0.063, 0.010, 0.0025."""
    text = f"{value_mm:.4f}".rstrip("0")
    decimals = len(text.split(".")[1]) if "." in text else 0
    text = f"{value_mm:.{max(decimals, 2 if value_mm >= 0.1 else 3)}f}"
    return text.replace(".", ",") if decimal_comma else text


def surface_form(power_fringes: float, irregularity_fringes: float, wavelength_nm: float = 632.8,
                 *, decimal_comma: bool = False) -> str:
    """ISO 10110-5 ``3/A(B)`` indication in fringes, with the test wavelength stated.

    Example: ``surface_form(1, 0.5)`` -> ``"3/ 1(0.5); λ = 632.8 nm"``.
    """
    f = lambda v: fmt_number(v, decimal_comma=decimal_comma)  # noqa: E731
    return f"3/ {f(power_fringes)}({f(irregularity_fringes)}); λ = {f(wavelength_nm)} nm"


def scratch_dig(grade: str, *, tighter_steps: int = 0) -> str:
    """MIL-PRF-13830B scratch-dig of a grade, optionally tightened by application steps."""
    names = [s[0] for s in _SCRATCH_STEPS]
    i = min(names.index(GRADES[grade].scratch_dig) + tighter_steps, len(names) - 1)
    return names[i]


def imperfections_iso(grade: str, *, clear_aperture_mm: tuple[float, float] | None,
                      coated: bool, edge_chip_mm: float | None = None, tighter_steps: int = 0,
                      decimal_comma: bool = False) -> str:
    """ISO 10110-7 ``5/ N×A; C N×A; L N×A; E A`` of a face.

    A follows the grade (the equal-area size of its dig, rounded up to the ×1.6 grade series,
    non-normative); N grows with the equal-area diameter of the clear aperture, one more per
    10 mm (common practice); the C term is written only for coated faces.
    """
    names = [s[0] for s in _SCRATCH_STEPS]
    i = min(names.index(GRADES[grade].scratch_dig) + tighter_steps, len(names) - 1)
    _, a_mm, l_mm = _SCRATCH_STEPS[i]
    w, h = clear_aperture_mm or (10.0, 10.0)
    d_eq = 2.0 * math.sqrt(w * h / math.pi)
    count = min(1 + math.ceil(d_eq / 10.0), 10)
    g = lambda v: grade_number(v, decimal_comma=decimal_comma)  # noqa: E731
    chip = GRADES[grade].edge_chip_mm if edge_chip_mm is None else edge_chip_mm
    parts = [f"5/ {count}×{g(a_mm)}"]
    if coated:
        parts.append(f"C {count}×{g(a_mm)}")
    parts += [f"L {max(count - 1, 1)}×{g(l_mm)}", f"E {fmt_number(chip, decimal_comma=decimal_comma)}"]
    return "; ".join(parts)


@dataclass(frozen=True, slots=True)
class MaterialGrade:
    """Material quality of a part (common practice; codes per ISO 10110-18)."""

    stress_nm_per_cm: float
    bubbles: tuple[int, float]  # (N, grade A in mm)
    homogeneity_class: int
    striae_class: int
    nd_tolerance: float
    vd_tolerance_pct: float
    melt_data: bool
    application: str

    def indications(self, *, decimal_comma: bool = False) -> tuple[str, ...]:
        """ISO 10110 material codes ``0/``, ``1/``, ``2/``."""
        f = lambda v: fmt_number(v, decimal_comma=decimal_comma)  # noqa: E731
        n, a = self.bubbles
        return (f"0/{f(self.stress_nm_per_cm)}", f"1/{n}×{grade_number(a, decimal_comma=decimal_comma)}",
                f"2/{self.homogeneity_class};{self.striae_class}")


def material_grade(grade: str, *, family: str, polarization_critical: bool,
                   largest_mm: float) -> MaterialGrade:
    """Material grade from the fabrication grade and the application (common practice).

    Every prismfab family carries a laser beam, so precision and high-precision parts get the
    laser beam-shaping row (fine anneal ≤5 nm/cm, ≤2 nm/cm when polarisation matters,
    homogeneity class 2 or better, striae class 5 in the beam direction, bubble class 0, melt
    data). Large dispersing prisms get homogeneity class 3 (high precision: 4).
    """
    nd_tol, _ = ND_LADDER[[g for _, g in ND_LADDER].index(grade)]
    vd_tol, _ = VD_LADDER_PCT[[g for _, g in VD_LADDER_PCT].index(grade)]
    if grade == COMMERCIAL:
        return MaterialGrade(10.0, (3, 0.16), 1, 1, nd_tol, vd_tol, False, "commercial")
    stress = 2.0 if polarization_critical or grade == HIGH else 5.0
    homog = 3 if grade == HIGH else 2
    app = "laser beam shaping"
    if family in ("dispersing", "brewster") and largest_mm > 30.0:
        homog, app = homog + 1, "large dispersing prism"
    bubbles = (1, 0.063) if grade == HIGH else (2, 0.10)
    return MaterialGrade(stress, bubbles, homog, 5, nd_tol, vd_tol, True, app)


def _pol_words(polarization: Polarization) -> str:
    return {Polarization.P: "p-polarised (E in the principal section)",
            Polarization.S: "s-polarised (E normal to the principal section)",
            Polarization.UNPOLARIZED: "unpolarised (average of s and p)"}[polarization]


def coating_text(coating: Coating, *, role: FaceRole, band_nm: tuple[float, float],
                 aoi_deg: tuple[float, float, float] | None, n_glass: float,
                 polarization: Polarization, decimal_comma: bool = False) -> str:
    """The coating requirement in words, with the items ISO 9211-2 asks for.

    Band, angle of incidence with its range and the medium, polarisation, the reflectance limit,
    durability tests (ISO 9211-4) and verification at the angle of use; or the reason a face is
    left uncoated.
    """
    f = lambda v, d=1: fmt_number(round(v, d), decimal_comma=decimal_comma)  # noqa: E731
    if coating.type is CoatingType.NONE:
        reason = coating.reason or ("internal reflection" if role is FaceRole.TIR else "by spec")
        return f"uncoated: {reason}"
    lo, hi = band_nm
    band = f"{f(lo, 1)} nm" if abs(hi - lo) < 1e-9 else f"{f(lo, 1)}-{f(hi, 1)} nm"
    aoi = ""
    if aoi_deg is not None:
        nom, amin, amax = aoi_deg
        inside = role in (FaceRole.EXIT, FaceRole.TIR, FaceRole.MIRROR)
        medium = "in glass" if inside else "in air"
        spread = f" ({f(amin)}° to {f(amax)}°)" if abs(amax - amin) >= 0.05 else ""
        aoi = f"AOI {f(nom)}°{spread} {medium}"
        if inside and role is FaceRole.EXIT:
            s = min(1.0, n_glass * math.sin(math.radians(abs(nom))))
            aoi += f", {f(math.degrees(math.asin(s)))}° in air"
    if coating.type is CoatingType.MIRROR:
        limit = f"R ≥ {f(coating.reflectance_min_pct or 99.5, 2)} %"
        head = "HR (back-surface reflector, protected, overcoated)"
    else:
        limit = f"R ≤ {f(coating.reflectance_max_pct or 0.5, 2)} % per surface"
        head = "AR"
    items = [head, limit, band, aoi, _pol_words(polarization),
             "durability ISO 9211-4 (abrasion, adhesion, water)",
             "witness sample measured at the AOI and polarisation of use"]
    return ", ".join(i for i in items if i)
