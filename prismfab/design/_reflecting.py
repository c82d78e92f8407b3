"""Private functions of the fold, wedge and custom solvers: TIR checks, scale fitting, chief facts.

All geometry is in plane coordinates ``(z_mm, x_mm)`` of the beam plane (see
``prismfab.design.common``); the input chief ray is the system z axis.

* **TIR check** (Snell's law; the margins are common practice): a reflecting face keeps total
  internal reflection when its internal angle of incidence stays above the critical angle
  ``asin(1/n)`` for every wavelength of the band, every input direction within half the in-plane
  divergence plus the alignment tilt, *and* an allowance of the grade's angle tolerance (a face
  angle error of e turns the internal incidence by about e). The reported worst margin already
  subtracts all three.
* **Scale fitting** (sizing.py rules): a family gives a section as a function of one defining
  length; the length grows until every optical face holds its clear aperture with the grade
  border and the bevel legs at both ends, and no face is shorter than ``min_face_mm``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np

from prismfab.design.classes import GRADES
from prismfab.design.common import PlanePath, Section, bracketed_root, trace_plane
from prismfab.design.sizing import (
    Draft,
    Placed,
    beam_groups,
    bevel_leg_mm,
    border_mm,
    clear_aperture,
    footprints,
    round_up,
    start_z_mm,
    trace_groups,
)
from prismfab.errors import DesignCheckError
from prismfab.design.common import labels
from prismfab.model import FaceRole, System
from prismfab.spec.types import Spec

__all__ = [
    "MARGIN_WARN_DEG",
    "Reflection",
    "angle_allowance_rad",
    "check_face_limit",
    "chief_path",
    "deviation_deg",
    "fit_scale",
    "glass_path_mm",
    "input_spread_rad",
    "interior_angle_rad",
    "pointing_deg",
    "reflection_facts",
    "reflections",
    "tilt_before_loss_deg",
    "without_generic_tir_warnings",
]

MARGIN_WARN_DEG = 2.0
"""A TIR margin below this (after allowances) is reported as a warning (common practice)."""
_TILT_SEARCH_DEG = 40.0


def angle_allowance_rad(spec: Spec) -> float:
    """The angle-tolerance allowance: the explicit ``fabrication.angle_tolerance_arcsec`` or
    the grade's default functional-angle tolerance (classes.GRADES, common practice)."""
    fab = spec.fabrication
    arcsec = fab.angle_tolerance_arcsec
    if arcsec is None:
        arcsec = GRADES[fab.grade.value].angle_arcsec
    return math.radians(arcsec / 3600.0)


def input_spread_rad(spec: Spec) -> float:
    """Largest in-plane tilt of an input ray: half the full divergence plus the alignment tilt."""
    b = spec.beam
    return (0.5 * b.divergence_in_plane_mrad + b.alignment.tilt_mrad) * 1e-3


def round_beam_spec(spec: Spec) -> Spec:
    """The spec with a round beam (the larger diameter and divergence in both axes), for parts
    that see the beam at any roll: a dove prism turned about its axis, a rotating wedge pair."""
    b = spec.beam
    dia = max(b.diameter_in_plane_mm, b.diameter_out_of_plane_mm)
    div = max(b.divergence_in_plane_mrad, b.divergence_out_of_plane_mrad)
    beam = replace(b, diameter_in_plane_mm=dia, diameter_out_of_plane_mm=dia,
                   divergence_in_plane_mrad=div, divergence_out_of_plane_mrad=div)
    return replace(spec, beam=beam)


def interior_angle_rad(vertices: np.ndarray, index: int) -> float:
    """Interior angle (rad) at vertex ``index`` of a CCW convex polygon."""
    n = len(vertices)
    a = vertices[index - 1] - vertices[index]
    b = vertices[(index + 1) % n] - vertices[index]
    c = float(a @ b) / (float(np.linalg.norm(a)) * float(np.linalg.norm(b)))
    return math.acos(max(-1.0, min(1.0, c)))


# --------------------------------------------------------------------------- chief ray


def _as_mirrors(placed: Sequence[Placed], wavelength_nm: float) -> list[Section]:
    """Sections at a wavelength with TIR faces traced as mirrors (same path, no leak)."""
    out = []
    for p in placed:
        roles = tuple(FaceRole.MIRROR if r is FaceRole.TIR else r for r in p.roles)
        out.append(Section(p.vertices, roles, p.index(wavelength_nm)))
    return out


def chief_path(placed: Sequence[Placed], wavelength_nm: float, *, tilt_rad: float = 0.0,
               start_z: float | None = None, mirrors: bool = False) -> PlanePath:
    """Trace the chief ray (the z axis, optionally tilted) at one wavelength.

    Args:
        placed: the sections in plane coordinates.
        wavelength_nm: wavelength.
        tilt_rad: in-plane tilt of the input ray from +z towards +x, about the point where
            the untilted chief ray enters the first prism.
        start_z: start z (default: upstream of every section).
        mirrors: trace TIR faces as mirrors, so a lost TIR does not change the path.
    """
    z0 = _start(placed) if start_z is None else start_z
    secs = (_as_mirrors(placed, wavelength_nm) if mirrors
            else [p.section(0, wavelength_nm) for p in placed])
    start = np.array([z0, 0.0])
    if tilt_rad:
        # pivot the tilted ray about the chief ray's entry point, so it meets the same face
        first = trace_plane(secs, start, 0.0)
        if first.hits:
            start = first.hits[0].point - 10.0 * np.array([math.cos(tilt_rad), math.sin(tilt_rad)])
    return trace_plane(secs, start, tilt_rad)


def _start(placed: Sequence[Placed]) -> float:
    return math.floor(min(0.0, min(float(p.vertices[:, 0].min()) for p in placed)) - 10.0)


def deviation_deg(path: PlanePath) -> float:
    """Unsigned angle between the input direction +z and the output direction, deg."""
    return math.degrees(math.acos(max(-1.0, min(1.0, float(path.direction[0])))))


def pointing_deg(path: PlanePath) -> float:
    """Signed in-plane output direction from +z towards +x, deg."""
    return math.degrees(math.atan2(float(path.direction[1]), float(path.direction[0])))


def glass_path_mm(path: PlanePath) -> float:
    """Geometric length of the chief ray inside glass, mm (refractions toggle inside/outside)."""
    total, inside = 0.0, False
    for k, hit in enumerate(path.hits):
        if inside:
            total += float(np.linalg.norm(path.points[k + 1] - path.points[k]))
        if hit.event == "refract":
            inside = not inside
    return total


# --------------------------------------------------------------------------- TIR


@dataclass(frozen=True, slots=True)
class Reflection:
    """The TIR budget of one reflecting face.

    Args:
        section: index of the prism in the traced list.
        face: face index.
        aoi_deg: internal chief-ray incidence at the design wavelength, deg.
        critical_deg: critical angle at the design wavelength, deg.
        nominal_margin_deg: ``aoi - critical`` at the design wavelength, deg.
        worst_margin_deg: the smallest margin over band and input spread, minus the angle
            tolerance allowance, deg.
    """

    section: int
    face: int
    aoi_deg: float
    critical_deg: float
    nominal_margin_deg: float
    worst_margin_deg: float

    @property
    def holds(self) -> bool:
        """True when TIR survives every allowance."""
        return self.worst_margin_deg > 0.0


def reflections(spec: Spec, placed: Sequence[Placed]) -> tuple[Reflection, ...]:
    """TIR budget of every face that reflects the chief ray (TIR or MIRROR role).

    Raises:
        DesignCheckError: the chief ray does not pass (a geometry error of the family).
    """
    spread = input_spread_rad(spec)
    allowance = math.degrees(angle_allowance_rad(spec))
    wl0 = spec.beam.wavelength_nm
    worst: dict[tuple[int, int], float] = {}
    nominal: dict[tuple[int, int], tuple[float, float]] = {}
    for wl in _wls(spec):
        for tilt in (0.0, spread, -spread):
            path = chief_path(placed, wl, tilt_rad=tilt, mirrors=True)
            for h in path.hits:
                if h.event != "mirror":
                    continue
                crit = math.degrees(math.asin(min(1.0, 1.0 / placed[h.section].index(wl))))
                aoi = math.degrees(h.aoi_rad)
                key = (h.section, h.face)
                worst[key] = min(worst.get(key, math.inf), aoi - crit)
                if wl == wl0 and tilt == 0.0:
                    nominal[key] = (aoi, crit)
    out = []
    for key, (aoi, crit) in sorted(nominal.items()):
        out.append(Reflection(key[0], key[1], aoi, crit, aoi - crit, worst[key] - allowance))
    return tuple(out)


def _wls(spec: Spec) -> tuple[float, ...]:
    b = spec.beam
    return tuple(dict.fromkeys([b.wavelength_nm, *b.band_nm]))


def tilt_before_loss_deg(placed: Sequence[Placed], wavelength_nm: float, section: int,
                         face: int) -> float | None:
    """Smallest input tilt (either sign, in air, deg) that brings a face to its critical angle.

    None when TIR holds for every tilt up to 40 deg, or is already lost at zero tilt.
    """
    crit = math.asin(min(1.0, 1.0 / placed[section].index(wavelength_nm)))

    def margin(tilt_rad: float) -> float:
        path = chief_path(placed, wavelength_nm, tilt_rad=tilt_rad, mirrors=True)
        hs = [h for h in path.hits if (h.section, h.face) == (section, face)]
        if not hs:
            raise ValueError("face not reached")
        return min(h.aoi_rad for h in hs) - crit

    if margin(0.0) <= 0:
        return None
    best: float | None = None
    step = math.radians(1.0)
    for sign in (1.0, -1.0):
        lo = 0.0
        while abs(lo) < math.radians(_TILT_SEARCH_DEG):
            hi = lo + sign * step
            try:
                if margin(hi) > 0:
                    lo = hi
                    continue
            except ValueError:  # the ray misses the face before TIR is lost
                break
            try:
                root = bracketed_root(margin, lo, hi, xtol=1e-11)
            except ValueError:
                break
            best = abs(root) if best is None else min(best, abs(root))
            break
    return None if best is None else math.degrees(best)


# --------------------------------------------------------------------------- sizing


def _face_deficits(spec: Spec, placed: Sequence[Placed], traced: list, *, ground_min: bool = True
                   ) -> tuple[float, float]:
    """(largest relative growth any optical face needs, 0 if none; shortest face, mm).

    ``ground_min`` False leaves ground faces out of the shortest-face figure (their length is
    set and checked by the family, e.g. a wedge's edges from a given thickness).
    """
    fab = spec.fabrication
    grow, shortest = 0.0, math.inf
    for _g, paths in traced:
        chief = _sequence(paths[0])
        for path in paths:
            if not path.complete or _sequence(path) != chief:
                grow = max(grow, 0.1)  # an edge ray misses or leaves the chief ray's faces
    for k, p in enumerate(placed):
        v = p.vertices
        for i, role in enumerate(p.roles):
            length = float(np.linalg.norm(v[(i + 1) % len(v)] - v[i]))
            if ground_min or role.is_optical:
                shortest = min(shortest, length)
            if not role.is_optical:
                continue
            fps = footprints(traced, k, i, lambda h: h.along_mm)
            if not fps:  # the beam misses a face it must use (e.g. walks off a second prism)
                grow = max(grow, 0.1)
                continue
            lo, hi = clear_aperture(fps, fab.clear_aperture_margin)
            b = border_mm(hi - lo, fab.grade)
            leg0 = bevel_leg_mm(fab.bevel_mm, interior_angle_rad(v, i))
            leg1 = bevel_leg_mm(fab.bevel_mm, interior_angle_rad(v, (i + 1) % len(v)))
            deficit = max(b + leg0 - lo, hi - (length - b - leg1), 0.0)
            grow = max(grow, 2.0 * deficit / length)
    return grow, shortest


def _sequence(path: PlanePath) -> tuple[tuple[int, int, str], ...]:
    return tuple((h.section, h.face, h.event) for h in path.hits)


def fit_scale(spec: Spec, make: Callable[[float], Sequence[Draft]], start_mm: float, *,
              path: str, ground_min: bool = True, reach: str = ""
              ) -> tuple[float, tuple[Draft, ...]]:
    """Smallest defining length (a multiple of 0.1 mm) whose sections hold the beam.

    Args:
        spec: the spec (margin, grade, bevel, face limits, beam).
        make: ``make(length_mm)`` gives the drafts (plane coordinates, beam on the z axis).
        start_mm: a first guess of the defining length, mm.
        path: spec field named when the faces would exceed ``max_face_mm``.
        ground_min: hold ground faces to ``min_face_mm`` too (False: optical faces only).
        reach: what would fix a face over the limit, in words (default: the generic advice).

    Raises:
        DesignCheckError: a face would exceed ``fabrication.max_face_mm``.
    """
    fab = spec.fabrication
    s = round_up(max(start_mm, 0.1))
    for _ in range(200):
        drafts = tuple(make(s))
        placed = [d.placed() for d in drafts]
        z0 = start_z_mm(drafts)
        traced = trace_groups(placed, beam_groups(spec, start_z_mm=z0))
        grow, shortest = _face_deficits(spec, placed, traced, ground_min=ground_min)
        longest = max(_longest(d.vertices) for d in drafts)
        if grow <= 1e-12 and shortest >= fab.min_face_mm - 1e-9:
            if longest > fab.max_face_mm + 1e-9:
                break
            return s, drafts
        factor = max(1.0 + grow, fab.min_face_mm / shortest if shortest > 0 else 2.0)
        s = round_up(max(s * factor, s + 0.1))
        if longest * factor > 20.0 * fab.max_face_mm or longest > 2.0 * fab.max_face_mm:
            break
    need = (f"a face of about {longest:.1f} mm" if longest <= 2.0 * fab.max_face_mm else
            f"faces well over twice that limit (they still had not caught the beam at "
            f"{2.0 * fab.max_face_mm:g} mm)")
    raise DesignCheckError(
        "fabrication.max_face_mm",
        f"holding the beam on its faces needs {need}, above the limit of {fab.max_face_mm:g} mm "
        f"({path})", reachable=reach or "raise fabrication.max_face_mm, or use a smaller beam "
        "or clear-aperture margin")


def _longest(vertices: np.ndarray) -> float:
    v = vertices
    return max(float(np.linalg.norm(v[(i + 1) % len(v)] - v[i])) for i in range(len(v)))


def check_face_limit(spec: Spec, drafts: Sequence[Draft]) -> None:
    """Raise when any face exceeds ``fabrication.max_face_mm``."""
    fab = spec.fabrication
    for d in drafts:
        longest = _longest(d.vertices)
        if longest > fab.max_face_mm + 1e-9:
            raise DesignCheckError(
                "fabrication.max_face_mm",
                f"{d.name} needs a face of {longest:.1f} mm, above the limit of "
                f"{fab.max_face_mm:g} mm",
                reachable="raise fabrication.max_face_mm, or use a smaller beam")


def reflection_facts(spec: Spec, placed: Sequence[Placed], budget: Sequence[Reflection],
                     draft: Draft) -> list[tuple[str, float, str]]:
    """Facts per reflecting face of ``draft``: TIR margins (design wavelength and worst case)
    and the input tilt before TIR is lost, or the incidence on a mirror-coated face."""
    wl0 = spec.beam.wavelength_nm
    lab = labels(len(draft.roles))
    facts: list[tuple[str, float, str]] = []
    for r in budget:
        face = f"{draft.name} face {lab[r.face]}"
        if draft.roles[r.face] is FaceRole.MIRROR:
            facts.append((f"internal incidence at {face} (mirror-coated)", round(r.aoi_deg, 6),
                          "deg"))
            facts.append((f"TIR margin {face} if left uncoated", round(r.nominal_margin_deg, 4),
                          "deg"))
            continue
        facts.append((f"TIR margin {face} at {wl0:g} nm (internal)",
                      round(r.nominal_margin_deg, 4), "deg"))
        facts.append((f"TIR margin {face}, worst case", round(r.worst_margin_deg, 4), "deg"))
        tilt = tilt_before_loss_deg(placed, wl0, r.section, r.face)
        if tilt is not None:
            facts.append((f"input tilt in air before TIR is lost at {face}", round(tilt, 4),
                          "deg"))
    return facts


def without_generic_tir_warnings(system: System, budget: Sequence[Reflection]) -> System:
    """Drop the assembly's nominal-only TIR warning of faces whose worst-case budget this module
    already reported (the worst-case sentence says more)."""
    import dataclasses

    names = {f"{system.prisms[r.section].name} face {system.prisms[r.section].faces[r.face].label}"
             for r in budget}
    kept = tuple(w for w in system.warnings
                 if not any(w.startswith(f"{n}: TIR margin only") for n in names))
    return dataclasses.replace(system, warnings=kept)
