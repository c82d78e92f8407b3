"""Tolerances the design can stand: sensitivities, compensation, Monte Carlo yield, classes, cost.

``derive(spec, system, parts)`` re-traces the system exactly with each fabrication and mount
error applied (``prismfab.design.sensitivity``), linearises, lets the alignment compensator
restore the pointing, and runs seeded Monte Carlo builds (``prismfab.design.montecarlo``) to
choose, per part and per toleranced quantity, the loosest standard class (common practice,
``prismfab.design.classes``) that keeps the yield at or above ``requirements.yield_target``.
Surface form comes from the transmitted-wavefront budget; thermal drift from dn/dT.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from prismfab.design import classes as C
from prismfab.design.montecarlo import Limits, Linear, Result, draws, linearise, monte_carlo
from prismfab.design.report import FaceFormRow, SensitivityRow, ToleranceReport, YieldRow
from prismfab.design.sensitivity import Model, build_model
from prismfab.model import FaceRole, Part, System
from prismfab.spec.types import Spec

__all__ = ["DEFAULT_BUILDS", "DEFAULT_SEED", "ToleranceReport", "derive", "opd_factor",
           "select_classes"]

DEFAULT_BUILDS = 2000
DEFAULT_SEED = 10110
ARCSEC_RAD = math.pi / (180.0 * 3600.0)
ARCMIN_RAD = 60.0 * ARCSEC_RAD
QUANTITIES = ("angle", "pyramidal", "nd", "vd")
_UNITS = {"angle": "arcsec", "pyramidal": "arcsec", "nd": "", "vd": "%"}
_TO_INTERNAL = {"angle": ARCSEC_RAD, "pyramidal": ARCSEC_RAD, "nd": 1.0, "vd": 0.01}
_PER = {"angle": (ARCMIN_RAD, "1′"), "pyramidal": (ARCMIN_RAD, "1′"), "nd": (1e-4, "Δn 1e-4"),
        "vd": (0.01, "Δvd 1 %"), "mount_rot": (1e-3, "1 mrad"), "mount_tilt": (1e-3, "1 mrad")}
Ladder = tuple[tuple[float, str], ...]


def derive(spec: Spec, system: System, parts: tuple[Part, ...], *, n_builds: int = DEFAULT_BUILDS,
           seed: int = DEFAULT_SEED) -> tuple[tuple[Part, ...], ToleranceReport]:
    """Derive the tolerances of every part from the system requirements.

    Args:
        spec: the validated spec (requirements, fabrication choices).
        system: the solved system the parts were made from.
        parts: one per prism, in beam order, with grade-default tolerances.
        n_builds: Monte Carlo builds per candidate tolerance set.
        seed: seed of the build draws.

    Returns:
        The parts with derived ``Tolerances`` and surface-form indications, and the report.

    Raises:
        DesignCheckError: the chief ray of the nominal system does not pass the prisms.
        MaterialError: a prism material is unknown.
    """
    from prismfab.materials import get

    cat = spec.materials_file or None
    mats = [get(p.material, catalogue_file=cat) for p in system.prisms]
    wl = system.beam.wavelengths_nm
    n = np.array([[float(m.n(w)) for m in mats] for w in wl])
    nd = np.array([_nd_or(m, n[0, k]) for k, m in enumerate(mats)])
    model = build_model(system, n, nd, datum_faces=tuple(datum_index(p) for p in parts),
                        wavelengths_nm=wl)
    jac = model.jacobian()
    lin = linearise(model, compensator_prisms=tuple(reversed(range(len(parts)))), jac=jac)
    req = spec.requirements
    limits = Limits(req.pointing_mrad * 1e-3, req.magnification_pct / 100.0, req.offset_mm)
    ladders = _ladders(spec, len(parts))
    unit = draws(len(lin.model_index), n_builds, seed)
    choice, result, looser = select_classes(model, lin, ladders, limits, unit, req.yield_target)
    forms = [_surface_forms(spec, part, float(n[0, k])) for k, part in enumerate(parts)]
    thermal = tuple((p.name, float(jac["pointing_in"][0, _pidx(model, k, "nd")] * m.dn_dt_per_k * 1e3))
                    for k, (p, m) in enumerate(zip(system.prisms, mats, strict=True))
                    if m.dn_dt_per_k is not None)
    new_parts, yields = [], []
    for k, part in enumerate(parts):
        rows = [_yield_row(part, q, ladders[(k, q)], choice[(k, q)], looser.get((k, q))) for q in QUANTITIES]
        yields += rows
        new_parts.append(_with_tolerances(spec, part, rows, forms[k], result.yield_fraction))
    report = ToleranceReport(
        wavelengths_nm=tuple(wl), sensitivities=_sensitivity_rows(model, jac),
        compensator=_compensator_text(model, lin), removes=_removes(lin), leaves=_leaves(lin),
        requirements=(("pointing_mrad", req.pointing_mrad, "mrad"),
                      ("magnification_pct", req.magnification_pct, "%"),
                      ("offset_mm", req.offset_mm, "mm")),
        n_builds=n_builds, seed=seed, yields=tuple(yields), system_yield=result.yield_fraction,
        yield_target=req.yield_target, failing=result.failing, driving=_driving(yields, result),
        thermal_mrad_per_k=thermal,
        thermal_total_mrad_per_k=sum(v for _, v in thermal) if thermal else None,
        surface_form=tuple(r for rows in forms for r in rows),
        cost=tuple((p.number, p.tolerances.cost_index) for p in new_parts),
        warnings=_warnings(result, req.yield_target, forms))
    return tuple(new_parts), report


def datum_index(part: Part) -> int:
    """Face index of datum B of a part ("face X ..." in ``Part.datums``; else the first ground face)."""
    for letter, what in part.datums:
        if letter == "B" and what.startswith("face "):
            label = what.split()[1]
            return part.prism.face_index(label)
    grounds = [i for i, f in enumerate(part.prism.faces) if not f.role.is_optical]
    return grounds[0] if grounds else 0


def _nd_or(material, fallback: float) -> float:  # type: ignore[no-untyped-def]
    try:
        return float(material.nd)
    except ValueError:  # the d line is outside the material's range (infrared crystals)
        return fallback


def _pidx(model: Model, prism: int, kind: str) -> int:
    return next(i for i, p in enumerate(model.params) if p.prism == prism and p.kind == kind)


def _ladders(spec: Spec, n_parts: int) -> dict[tuple[int, str], Ladder]:
    fab = spec.fabrication
    out: dict[tuple[int, str], Ladder] = {}
    for k in range(n_parts):
        out[(k, "angle")] = ((fab.angle_tolerance_arcsec, "explicit"),) \
            if fab.angle_tolerance_arcsec is not None else C.ANGLE_LADDER_ARCSEC
        out[(k, "pyramidal")] = ((fab.pyramidal_tolerance_arcsec, "explicit"),) \
            if fab.pyramidal_tolerance_arcsec is not None else C.PYRAMIDAL_LADDER_ARCSEC
        out[(k, "nd")] = C.ND_LADDER
        out[(k, "vd")] = C.VD_LADDER_PCT
    return out


def _scale(model: Model, lin: Linear, ladders, choice) -> np.ndarray:  # type: ignore[no-untyped-def]
    out = np.zeros(len(lin.model_index))
    for j, i in enumerate(lin.model_index):
        p = model.params[i]
        value, _ = ladders[(p.prism, p.kind)][choice[(p.prism, p.kind)]]
        out[j] = value * _TO_INTERNAL[p.kind]
    return out


def select_classes(model: Model, lin: Linear, ladders, limits: Limits, unit: np.ndarray,  # type: ignore[no-untyped-def]
                   target: float):
    """Loosest class per (prism, quantity) that keeps the yield at or above ``target``.

    Greedy: from the loosest classes, tighten the step that lowers the target-quantile of the
    worst requirement ratio most per unit of added cost, until the yield meets the target; then
    loosen any step that can be loosened without losing the target.

    Returns:
        (choice: ladder index per key, Result of the choice, looser: per key the Result one step
        looser, where a looser step exists).
    """
    choice = {key: 0 for key in ladders}
    done: dict[tuple, Result] = {}  # the search revisits class sets: each is run once

    def run(ch):  # type: ignore[no-untyped-def]
        key = tuple(ch[k] for k in ladders)
        if key not in done:
            done[key] = monte_carlo(lin, _scale(model, lin, ladders, ch), limits, unit,
                                    quantile=target)
        return done[key]

    res = run(choice)
    while res.yield_fraction < target:
        best = None
        for key, ladder in ladders.items():
            if choice[key] + 1 >= len(ladder):
                continue
            trial = {**choice, key: choice[key] + 1}
            r = run(trial)
            cost = C.CLASS_COST.get(ladder[choice[key] + 1][1], 1.0) - \
                C.CLASS_COST.get(ladder[choice[key]][1], 1.0) + 0.25
            gain = ((res.worst_ratio - r.worst_ratio) / cost, r.yield_fraction)
            if best is None or gain > best[0]:
                best = (gain, trial, r)
        if best is None or best[0][0] <= 0.0:
            break
        choice, res = best[1], best[2]
    relaxed = True
    while relaxed and res.yield_fraction >= target:
        relaxed = False
        for key in ladders:
            if choice[key] > 0:
                trial = {**choice, key: choice[key] - 1}
                r = run(trial)
                if r.yield_fraction >= target:
                    choice, res, relaxed = trial, r, True
    looser = {key: run({**choice, key: choice[key] - 1}) for key in ladders if choice[key] > 0}
    return choice, res, looser


def opd_factor(role: FaceRole, aoi_deg: float, n: float) -> float:
    """Wavefront error per unit surface height error of one face (dimensionless).

    A surface displaced by h along its normal changes the optical path of a ray by
    ``h (n cos θt − cos θi)`` when it refracts between air (θi) and glass (θt), and by
    ``2 n h cos θ`` when it reflects inside glass at θ (derived from the path difference of two
    parallel planes; at normal incidence these are the familiar (n − 1) h and 2 n h).
    ``aoi_deg`` is outside for entry faces, inside for exit and reflecting faces (as measured).
    A face the beam crosses twice counts both passes.
    """
    a = math.radians(abs(aoi_deg))
    if role.reflects:
        return 2.0 * n * math.cos(a)
    if role is FaceRole.EXIT:
        t = a
        i = math.asin(min(1.0, n * math.sin(t)))
    else:
        i = a
        t = math.asin(math.sin(i) / n)
    single = abs(n * math.cos(t) - math.cos(i))
    return 2.0 * single if role is FaceRole.ENTRY_EXIT else single


def _surface_forms(spec: Spec, part: Part, n: float) -> list[FaceFormRow]:
    """Irregularity per optical face from the transmitted-wavefront budget (RSS, equal shares)."""
    req = spec.requirements
    optical = [f for f in part.faces if f.role.is_optical]
    passes = sum(2 if f.role is FaceRole.ENTRY_EXIT else 1 for f in optical) or 1
    share_waves = req.wavefront_waves_pv / math.sqrt(passes)
    rows = []
    for f in optical:
        factor = opd_factor(f.role, f.aoi_deg[0] if f.aoi_deg else 0.0, n)
        height_nm = share_waves * req.wavefront_wavelength_nm / factor
        allowed = 2.0 * height_nm / part.tolerances.test_wavelength_nm
        fits = [(v, g) for v, g in C.FLATNESS_LADDER_FRINGES if v <= allowed + 1e-12]
        value, grade = fits[0] if fits else C.FLATNESS_LADDER_FRINGES[-1]
        rows.append(FaceFormRow(part.number, f.label, f.role.value, factor, allowed, value, grade))
    return rows


def _yield_row(part: Part, q: str, ladder: Ladder, i: int, looser) -> YieldRow:  # type: ignore[no-untyped-def]
    value, grade = ladder[i]
    return YieldRow(part=part.number, quantity=q, value=value, unit=_UNITS[q], grade=grade,
                    looser_value=ladder[i - 1][0] if looser is not None else None,
                    looser_yield=looser.yield_fraction if looser is not None else None,
                    looser_failing=looser.failing if looser is not None else ())


def _class_of(value: float, ladder: Ladder) -> str:
    fits = [g for v, g in ladder if v <= value + 1e-12]
    return fits[0] if fits else ladder[-1][1]


def _with_tolerances(spec: Spec, part: Part, rows: list[YieldRow], forms: list[FaceFormRow],
                     system_yield: float) -> Part:
    by_q = {r.quantity: r for r in rows}
    form = {r.face: r for r in forms}
    faces = tuple(replace(f, surface_form=C.surface_form(
        2.0 * form[f.label].chosen_fringes, form[f.label].chosen_fringes,
        part.tolerances.test_wavelength_nm, decimal_comma=spec.sheet.decimal_comma))
        if f.label in form else f for f in part.faces)
    tightest = min(forms, key=lambda r: r.chosen_fringes) if forms else None
    tags = {q: _class_of(by_q[q].value, ladder) for q, ladder in (
        ("angle", C.ANGLE_LADDER_ARCSEC), ("pyramidal", C.PYRAMIDAL_LADDER_ARCSEC))}
    grade = "explicit" if "explicit" in (by_q["angle"].grade, by_q["pyramidal"].grade) else \
        max(tags.values(), key=lambda g: C.CLASS_COST[g])
    tol = replace(
        part.tolerances,
        angle_arcsec=by_q["angle"].value, pyramidal_arcsec=by_q["pyramidal"].value,
        nd_tolerance=by_q["nd"].value, vd_tolerance_pct=by_q["vd"].value,
        surface_form_fringes=(2.0 * tightest.chosen_fringes, tightest.chosen_fringes)
        if tightest else part.tolerances.surface_form_fringes,
        yield_fraction=system_yield, driving=_part_driving(rows), grade=grade,
        looser_yield=tuple((r.quantity, r.looser_yield) for r in rows if r.looser_yield is not None))
    part = replace(part, faces=faces, tolerances=tol)
    return replace(part, tolerances=replace(tol, cost_index=cost_index(spec, part, tags, tightest)))


def cost_index(spec: Spec, part: Part, tags: dict[str, str], tightest: FaceFormRow | None) -> float:
    """Relative cost of a part: commercial part up to 25 mm = 1.0 (common-practice multipliers).

    Weighted mean of the class multipliers (angles 0.3, pyramidal 0.2, surface form 0.25,
    surface imperfections 0.15, material 0.1), times a size factor sqrt(largest / 25 mm) (at
    least 1), times 1.1 for edges that must stay sharp and 1.1 per coated face used away from
    normal incidence (special-angle coating run), at most 1.3 for coatings.
    """
    grade = spec.fabrication.grade.value
    weights = ((tags["angle"], 0.3), (tags["pyramidal"], 0.2),
               (tightest.grade if tightest else grade, 0.25), (grade, 0.15), (grade, 0.1))
    base = sum(C.CLASS_COST[g] * w for g, w in weights)
    xs = [v[0] for v in part.prism.vertices_mm]
    ys = [v[1] for v in part.prism.vertices_mm]
    largest = max(max(xs) - min(xs), max(ys) - min(ys), part.prism.height_mm)
    size = max(1.0, math.sqrt(largest / 25.0))
    sharp = 1.1 if part.sharp_edges else 1.0
    oblique = sum(1 for f in part.faces if f.coating.type.value != "none" and f.aoi_deg
                  and abs(f.aoi_deg[0]) > 15.0)
    return round(base * size * sharp * min(1.3, 1.1**oblique), 2)


_REQUIREMENT_WORDS = {
    "pointing_mrad": "the pointing requirement",
    "magnification_pct": "the magnification requirement",
    "offset_mm": "the lateral-offset requirement",
}


def _requirement_words(name: str) -> str:
    """A requirement's spec field name in words."""
    return _REQUIREMENT_WORDS.get(name, name)


_NOTHING_BINDS = "no requirement binds: the loosest standard classes meet the requirements"


def _binding(rows: list[YieldRow]) -> tuple[YieldRow, str] | None:
    """The tolerance whose next looser class loses the most yield, and the requirement it fails."""
    bound = [r for r in rows if r.looser_yield is not None]
    if not bound:
        return None
    r = min(bound, key=lambda r: r.looser_yield)  # type: ignore[arg-type,return-value]
    req = _requirement_words(max(r.looser_failing, key=lambda x: x[1])[0]
                             if r.looser_failing else "yield")
    return r, req


def _part_driving(rows: list[YieldRow]) -> str:
    found = _binding(rows)
    if found is None:
        return _NOTHING_BINDS
    r, req = found
    return f"{r.quantity} (one class looser: {r.looser_yield:.1%} yield, limited by {req})"


def _driving(rows: list[YieldRow], result) -> str:  # type: ignore[no-untyped-def]
    found = _binding(rows)
    if found is None:
        return _NOTHING_BINDS
    r, req = found
    return (f"{r.part} {r.quantity} ±{C.fmt_number(r.value)} {r.unit}".rstrip()
            + f": one class looser gives {r.looser_yield:.1%}, limited by {req}")


def _sensitivity_rows(model: Model, jac: dict[str, np.ndarray]) -> tuple[SensitivityRow, ...]:
    rows = []
    for i, p in enumerate(model.params):
        unit, per = _PER[p.kind]
        rows.append(SensitivityRow(
            prism=model.system.prisms[p.prism].name, parameter=f"{p.kind} {p.label}".strip(),
            per=per, pointing_in_mrad=jac["pointing_in"][0, i] * unit * 1e3,
            pointing_out_mrad=jac["pointing_out"][0, i] * unit * 1e3,
            magnification_pct=jac["magnification"][0, i] * unit * 100.0,
            offset_mm=jac["offset"][0, i] * unit))
    return tuple(rows)


def _compensator_text(model: Model, lin: Linear) -> str:
    if lin.comp_index is None:
        return ("none: no prism rotation about y moves the pointing enough (constant-deviation "
                "or minimum-deviation geometry); pointing errors stay as built")
    p = model.params[lin.comp_index]
    return (f"rotation of {model.system.prisms[p.prism].name} about the system y axis "
            f"(within ±1°, common practice) restores the in-plane pointing at the design wavelength")


def _removes(lin: Linear) -> tuple[str, ...]:
    return ("in-plane pointing at the design wavelength",) if lin.comp is not None else ()


def _leaves(lin: Linear) -> tuple[str, ...]:
    left = ["out-of-plane pointing (pyramidal errors)", "magnification change", "lateral offset change",
            "pointing change at the band edges (index and dispersion)"]
    if lin.comp is None:
        left.insert(0, "in-plane pointing")
    return tuple(left)


def _warnings(result, target: float, forms: list[list[FaceFormRow]]) -> tuple[str, ...]:  # type: ignore[no-untyped-def]
    out = []
    if result.yield_fraction < target:
        out.append(f"the tightest standard classes give {result.yield_fraction:.1%} yield, below the "
                   f"target {target:.0%}: loosen requirements or add an alignment adjustment")
    for rows in forms:
        for r in rows:
            if r.allowed_fringes < C.FLATNESS_LADDER_FRINGES[-1][0]:
                out.append(f"{r.part} face {r.face}: the wavefront budget needs "
                           f"{r.allowed_fringes:.2f} fringes, tighter than λ/20; raise "
                           "requirements.wavefront_waves_pv")
    return tuple(out)
