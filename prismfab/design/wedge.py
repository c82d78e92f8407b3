"""Optical wedges: the wedge angle for a required deviation, solved on the exact trace.

The exact deviation of a wedge of angle A and index n at incidence phi1 is
``delta = phi1 + phi2 - A`` with ``phi2 = asin(sin A sqrt(n^2 - sin^2 phi1) - cos A sin phi1)``
(shared/reference/optics.md section 3); it rises monotonically with A (``d delta / dA =
n cos psi2 / cos phi2 - 1 >= 0``) from 0 at A = 0 to its grazing-exit limit, so the solver brackets
the root and finds A to machine precision. For small A it tends to the thin-prism value
``(n - 1) A``.

Conventions (system frame, beam plane):
  * ``design.incidence_deg`` is the chief ray's incidence on the entry face, positive when the
    ray leans from the entry-face normal towards the thin end (the sign of the
    minimum-deviation geometry). The beam is deviated towards the thick end, to -x.
  * Section: face A the thick edge (ground), B the exit face, C the thin edge (ground), D the
    entry face; the datum vertex is the thick corner of the entry face. The chief ray crosses
    the centre of the entry face at the system origin.
  * ``design.thickness_mm`` is the thickness on the chief ray (centre thickness). When None it
    is the smallest multiple of 0.1 mm that leaves a thin edge of at least
    ``fabrication.min_face_mm`` and keeps the wedge no thinner than a tenth of its face
    (rigidity for polishing, common practice).
  * ``design.pair``: two identical wedges in the same orientation (a Risley pair). The
    deviation target is that of one wedge at the design incidence (the part the shop makes);
    the System lays the pair out aligned, where it deviates by about twice that. Counter-
    rotating the wedges by +/-r about the input axis steers the beam along one line, from the
    aligned value at r = 0 down to a small residual at r = 90 deg; rotating both together
    sweeps the cone. These figures come from an exact 3D trace of the chief ray and are facts.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy.optimize import brentq

from prismfab.design import _reflecting as rf
from prismfab.design.common import material_of, polygon_from_lines, refract
from prismfab.design.sizing import Draft, finish_system, height_mm, round_up
from prismfab.errors import DesignCheckError, SolveError
from prismfab.model import FaceRole, System
from prismfab.spec.types import Spec, WedgeDesign

__all__ = ["MAX_EXIT_DEG", "MIN_THICKNESS_RATIO", "chain_deviation_rad", "design", "solve_apex_rad"]

MAX_EXIT_DEG = 89.0
"""Largest exit angle accepted for any ray of the band and input spread (just short of grazing)."""
MIN_THICKNESS_RATIO = 0.1
"""Centre thickness at least this fraction of the face length (common practice, about 10:1)."""
ROTATION_CLEARANCE_MM = 1.0
"""Free gap left between the wedges of a pair when they turn (common practice)."""
_ROLES = (FaceRole.GROUND, FaceRole.EXIT, FaceRole.GROUND, FaceRole.ENTRY)
_NOTES = ("thick edge", "", "thin edge", "")


def chain_deviation_rad(apex_rad: float, n: float, incidence_rad: float, count: int = 1
                        ) -> tuple[float, float]:
    """Exact deviation of ``count`` identical wedges in the same orientation, in air.

    Each wedge meets the ray leaving the previous one: its incidence is the previous incidence
    minus the previous deviation.

    Returns:
        (total deviation, largest |exit angle|), rad; NaN when a ray cannot leave a wedge.
    """
    phi, total, worst = incidence_rad, 0.0, 0.0
    sa, ca = math.sin(apex_rad), math.cos(apex_rad)
    for _ in range(count):
        # closed_forms.prism_exit_angle, in scalar form (this runs inside bisections)
        s = sa * math.sqrt(n * n - math.sin(phi) ** 2) - ca * math.sin(phi)
        if abs(s) > 1.0:
            return math.nan, math.nan
        phi2 = math.asin(s)
        dev = phi + phi2 - apex_rad
        total += dev
        worst = max(worst, abs(phi2))
        phi -= dev
    return total, worst


def _feasible(apex_rad: float, indices: list[float], incidence_rad: float, spread_rad: float,
              count: int) -> bool:
    """Every band index and input direction leaves every wedge below ``MAX_EXIT_DEG``."""
    for n in indices:
        for tilt in (-spread_rad, 0.0, spread_rad):
            _dev, exit_rad = chain_deviation_rad(apex_rad, n, incidence_rad + tilt, count)
            if math.isnan(exit_rad) or exit_rad > math.radians(MAX_EXIT_DEG):
                return False
    return True


def _apex_limit_rad(indices: list[float], incidence_rad: float, spread_rad: float, count: int
                    ) -> float:
    """Largest wedge angle that stays feasible (bisection; feasibility shrinks as A grows)."""
    lo, hi = 0.0, math.pi / 2
    if _feasible(hi, indices, incidence_rad, spread_rad, count):
        return hi
    for _ in range(56):
        mid = 0.5 * (lo + hi)
        if _feasible(mid, indices, incidence_rad, spread_rad, count):
            lo = mid
        else:
            hi = mid
    return lo


def solve_apex_rad(*, deviation_rad: float, n: float, incidence_rad: float, count: int = 1,
                   band_indices: tuple[float, ...] = (), spread_rad: float = 0.0,
                   path: str = "design.deviation_deg", transmit_count: int | None = None) -> float:
    """Wedge angle whose exact trace deviates the chief ray by ``deviation_rad``.

    Args:
        deviation_rad: target deviation of the first ``count`` aligned wedges, rad.
        n: index at the design wavelength.
        incidence_rad: chief-ray incidence on the first entry face (sign: see module docstring).
        count: wedges the target applies to (1: one wedge; 2: the aligned pair).
        transmit_count: wedges that must all pass the beam (default ``count``; 2 for a pair
            whose target is per wedge).
        band_indices: indices over the band; every one must still leave below ``MAX_EXIT_DEG``.
        spread_rad: input-direction spread (half divergence plus alignment tilt), rad.
        path: spec field named in errors.

    Raises:
        SolveError: the target is not positive or beyond the reachable deviation.
    """
    indices = [n, *band_indices]
    limit = _apex_limit_rad(indices, incidence_rad, spread_rad, transmit_count or count)
    reach = chain_deviation_rad(limit, n, incidence_rad, count)[0] if limit > 0 else 0.0
    reachable = (f"0 to {math.degrees(reach):.4f} deg at this incidence and material (every ray "
                 f"of the band and input spread leaving below {MAX_EXIT_DEG:g} deg)")
    if not deviation_rad > 0.0:
        raise SolveError(path, "the deviation must be greater than 0 deg", reachable=reachable)
    if not deviation_rad < reach:
        raise SolveError(path, f"a deviation of {math.degrees(deviation_rad):.4f} deg is beyond "
                         "what the material allows before the exit ray grazes the face",
                         reachable=reachable + "; use a higher-index material or another "
                         "incidence")
    f = lambda a: chain_deviation_rad(a, n, incidence_rad, count)[0] - deviation_rad  # noqa: E731
    return float(brentq(f, 0.0, limit, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200))


def _local_section(apex_rad: float, face_mm: float, centre_mm: float) -> np.ndarray:
    """Wedge section in a local frame: entry face on z = 0 centred on the origin, exit face
    ``centre_mm`` behind it on the axis, thick end towards -x."""
    h = face_mm / 2.0
    points = [np.array([0.0, -h]), np.array([centre_mm, 0.0]), np.array([0.0, h]), np.zeros(2)]
    normals = [np.array([0.0, -1.0]), np.array([math.cos(apex_rad), math.sin(apex_rad)]),
               np.array([0.0, 1.0]), np.array([-1.0, 0.0])]
    return polygon_from_lines(points, normals)


def _rotate(v: np.ndarray, angle_rad: float) -> np.ndarray:
    c, s = math.cos(angle_rad), math.sin(angle_rad)
    return v @ np.array([[c, -s], [s, c]]).T


def centre_thickness_mm(spec: Spec, *, apex_rad: float, face_mm: float) -> float:
    """Centre thickness: the spec's value, or the smallest one a thin edge and rigidity allow."""
    d: WedgeDesign = spec.design  # type: ignore[assignment]
    edge = spec.fabrication.min_face_mm
    need = edge + 0.5 * face_mm * math.tan(apex_rad)
    if d.thickness_mm is None:
        return round_up(max(need, MIN_THICKNESS_RATIO * face_mm))
    return d.thickness_mm


def _maker(spec: Spec, apex_rad: float, index: Callable[[float], float], material: str,
           count: int) -> Callable[[float], tuple[Draft, ...]]:
    rho = -math.radians(spec.design.incidence_deg)  # type: ignore[union-attr]

    def make(face_mm: float) -> tuple[Draft, ...]:
        t = centre_thickness_mm(spec, apex_rad=apex_rad, face_mm=face_mm)
        local = _rotate(_local_section(apex_rad, face_mm, t), rho)
        drafts = [Draft("W1", material, index, local, _ROLES, _NOTES)]
        if count == 2:
            path = rf.chief_path([drafts[0].placed()], spec.beam.wavelength_nm)
            exit_point, u = path.points[-2], path.direction
            gap = _pair_gap_mm(spec, apex_rad=apex_rad, face_mm=face_mm)
            drafts.append(Draft("W2", material, index, local + exit_point + gap * u, _ROLES,
                                _NOTES))
        return tuple(drafts)
    return make


def _pair_gap_mm(spec: Spec, *, apex_rad: float, face_mm: float) -> float:
    """Gap along the chief ray from wedge 1's exit face to wedge 2's entry face, so the tilted
    faces clear each other at any roll (the corner radius is half the face diagonal)."""
    _ca, height = height_mm(spec, path_mm=face_mm)
    radius = 0.5 * math.hypot(face_mm, height)
    tilt = math.radians(abs(spec.design.incidence_deg))  # type: ignore[union-attr]
    return round_up(radius * (math.tan(apex_rad) + 2.0 * math.tan(tilt)) + ROTATION_CLEARANCE_MM)


def design(spec: Spec) -> System:
    """Solve a wedge or a wedge pair (``spec.design`` is a ``WedgeDesign``).

    Raises:
        SolveError: the deviation is beyond the reachable range (the message gives it).
        DesignCheckError: the given thickness leaves too thin an edge, or a face exceeds
            ``fabrication.max_face_mm``.
        MaterialError: unknown material or a band wavelength outside its range.
    """
    d: WedgeDesign = spec.design  # type: ignore[assignment]
    mat = material_of(spec, d.material, path="design.material")
    index = lambda wl: float(mat.n(wl))  # noqa: E731
    wl0, count = spec.beam.wavelength_nm, 2 if d.pair else 1
    inc = math.radians(d.incidence_deg)
    if not abs(d.incidence_deg) < MAX_EXIT_DEG:
        raise SolveError("design.incidence_deg", f"an incidence of {d.incidence_deg:g} deg grazes "
                         "the entry face", reachable=f"|incidence| below {MAX_EXIT_DEG:g} deg")
    apex = solve_apex_rad(deviation_rad=math.radians(d.deviation_deg), n=index(wl0),
                          incidence_rad=inc, count=1, transmit_count=count,
                          band_indices=tuple(index(w) for w in spec.beam.band_nm),
                          spread_rad=rf.input_spread_rad(spec))
    guess = spec.fabrication.clear_aperture_margin * spec.beam.diameter_in_plane_mm
    face, drafts = rf.fit_scale(spec, _maker(spec, apex, index, mat.key, count), guess,
                                path="design", ground_min=d.thickness_mm is None)
    _check_thickness(spec, apex_rad=apex, face_mm=face)
    placed = [p.placed() for p in drafts]
    facts = _facts(spec, apex, face, placed, index)
    warnings = []
    if abs(d.incidence_deg) < 0.5:
        warnings.append("W1 face D: the entry face is at normal incidence, so its reflection "
                        "returns into the source (optics.md section 8); tilt the wedge by 0.5-2 "
                        "deg (design.incidence_deg) or use an isolator")
    return finish_system(spec, drafts, facts=facts, warnings=warnings, path="design")


def _check_thickness(spec: Spec, *, apex_rad: float, face_mm: float) -> None:
    d: WedgeDesign = spec.design  # type: ignore[assignment]
    if d.thickness_mm is None:
        return
    edge = spec.fabrication.min_face_mm
    thin = d.thickness_mm - 0.5 * face_mm * math.tan(apex_rad)
    if thin < edge - 1e-9:
        need = round_up(edge + 0.5 * face_mm * math.tan(apex_rad))
        raise DesignCheckError(
            "design.thickness_mm",
            f"a centre thickness of {d.thickness_mm:g} mm leaves a thin edge of {thin:.2f} mm "
            f"on the {face_mm:g} mm wedge (angle {math.degrees(apex_rad):.4f} deg), below the "
            f"{edge:g} mm minimum edge (fabrication.min_face_mm)",
            reachable=f"a centre thickness of at least {need:g} mm, or leave it empty")


def _facts(spec: Spec, apex: float, face: float, placed: list,
           index: Callable[[float], float]) -> list[tuple[str, float, str]]:
    d: WedgeDesign = spec.design  # type: ignore[assignment]
    wl0, count = spec.beam.wavelength_nm, 2 if d.pair else 1
    n0 = index(wl0)
    path = rf.chief_path(placed, wl0)
    t = centre_thickness_mm(spec, apex_rad=apex, face_mm=face)
    facts = [("wedge angle", round(math.degrees(apex), 9), "deg"),
             ("wedge angle", round(math.degrees(apex) * 60.0, 6), "arcmin"),
             ("deviation per wedge", round(math.degrees(chain_deviation_rad(
                 apex, n0, math.radians(d.incidence_deg))[0]), 9), "deg"),
             ("deviation", round(rf.deviation_deg(path), 9), "deg"),
             ("thin-prism estimate (n - 1) A per wedge", round(math.degrees((n0 - 1) * apex), 9),
              "deg"),
             ("exit angle of the last wedge", round(math.degrees(
                 chain_deviation_rad(apex, n0, math.radians(d.incidence_deg), count)[1]), 6), "deg"),
             ("centre thickness", t, "mm"),
             ("thin edge", round(t - 0.5 * face * math.tan(apex), 4), "mm"),
             ("thick edge", round(t + 0.5 * face * math.tan(apex), 4), "mm"),
             ("path length in glass", round(rf.glass_path_mm(path), 4), "mm")]
    for wl in dict.fromkeys(spec.beam.band_nm):
        p = rf.chief_path(placed, wl)
        facts.append((f"deviation at {wl:g} nm", round(rf.deviation_deg(p), 9), "deg"))
    if count == 2:
        facts += _risley_facts(apex, n0, math.radians(d.incidence_deg))
    return facts


# --------------------------------------------------------------------------- Risley pair


def _normals_3d(apex_rad: float, incidence_rad: float) -> tuple[np.ndarray, np.ndarray]:
    """Entry (inward) and exit (outward) face normals of an unrolled wedge, system (x, y, z)."""
    rho = -incidence_rad
    entry = np.array([math.sin(rho), 0.0, math.cos(rho)])
    exit_ = np.array([math.sin(rho + apex_rad), 0.0, math.cos(rho + apex_rad)])
    return entry, exit_


def _roll(v: np.ndarray, angle_rad: float) -> np.ndarray:
    c, s = math.cos(angle_rad), math.sin(angle_rad)
    return np.array([c * v[0] - s * v[1], s * v[0] + c * v[1], v[2]])


def risley_direction(apex_rad: float, n: float, incidence_rad: float, roll1_rad: float,
                     roll2_rad: float) -> np.ndarray:
    """Output chief-ray direction of the pair with each wedge rolled about the system z axis
    (exact vector Snell's law, optics.md section 1)."""
    d = np.array([0.0, 0.0, 1.0])
    entry, exit_ = _normals_3d(apex_rad, incidence_rad)
    for roll in (roll1_rad, roll2_rad):
        for normal, n1, n2 in ((_roll(entry, roll), 1.0, n), (_roll(exit_, roll), n, 1.0)):
            out = refract(d, normal, n1, n2)
            if out is None:
                return np.full(3, math.nan)
            d = out
    return d


def _risley_facts(apex: float, n: float, inc: float) -> list[tuple[str, float, str]]:
    facts = []
    for r_deg in (0.0, 30.0, 60.0, 90.0):
        r = math.radians(r_deg)
        d = risley_direction(apex, n, inc, r, -r)
        dev = math.degrees(math.acos(max(-1.0, min(1.0, float(d[2])))))
        facts.append((f"pair deviation, wedges counter-rotated by +/-{r_deg:g} deg", round(dev, 6),
                      "deg"))
    cone = [math.degrees(math.acos(float(risley_direction(apex, n, inc, r, r)[2])))
            for r in np.radians([0.0, 90.0, 180.0, 270.0])]
    facts.append(("pair deviation, both wedges turned together (min over a turn)",
                  round(min(cone), 6), "deg"))
    facts.append(("pair deviation, both wedges turned together (max over a turn)",
                  round(max(cone), 6), "deg"))
    return facts
