"""Optical wedges: the wedge angle for a required deviation, solved on the exact trace.

The exact deviation of a wedge of angle A and index n at incidence phi1 is
``delta = phi1 + phi2 - A`` with ``phi2 = asin(sin A sqrt(n^2 - sin^2 phi1) - cos A sin phi1)``
(exact refraction at both faces, Snell's law); it rises monotonically with A (``d delta / dA =
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
  * ``design.pair``: two identical wedges in the same orientation (a Risley pair) turning about
    the input axis. ``deviation_deg`` is then the pair's maximum deviation, reached with the
    wedges aligned; each wedge is solved so the exact trace of the aligned pair gives it.
    Counter-rotating the wedges (relative rotation rho, each turned by rho/2 in opposite
    senses) steers the beam along one line, from that maximum at rho = 0 down to a small
    residual at rho = 180 deg (thin-prism limit ``2 delta1 cos(rho/2)``); turning both together
    sweeps a cone of the same half-angle. The steering range comes from an exact 3D trace of
    the chief ray and is reported as facts and as ``System.tuning`` rows (relative rotation
    deg, deviation deg). Both wedges are centred on the rotation axis; their faces are sized
    for the beam's walk on the second wedge at any rotation and cut square (as high as wide),
    since the beam turns relative to each wedge.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable

import numpy as np

from prismfab.design import _reflecting as rf
from prismfab.design.common import bracketed_root, material_of, polygon_from_lines, refract
from prismfab.design.sizing import Draft, finish_system, height_mm, round_up
from prismfab.errors import DesignCheckError, SolveError
from prismfab.model import FaceRole, System
from prismfab.spec.types import Spec, WedgeDesign

__all__ = ["MAX_EXIT_DEG", "MIN_THICKNESS_RATIO", "chain_deviation_rad", "design", "solve_apex_rad"]

MAX_EXIT_DEG = 89.0
"""Largest exit angle accepted for any ray of the band and input spread (just short of grazing)."""
MIN_THICKNESS_RATIO = 0.1
"""Centre thickness at least this fraction of the face length (common practice, about 10:1)."""
BACK_REFLECTION_MRAD = 2.0
"""A reflection within this angle of the reversed input beam returns into the source (the
trace's back-reflection limit)."""
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
    return float(bracketed_root(f, 0.0, limit, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200))


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
            # wedge 2 sits on the rotation axis (the input axis), behind wedge 1's exit face
            z2 = _exit_on_axis_mm(apex_rad, rho, t) + _pair_gap_mm(
                spec, apex_rad=apex_rad, rho_rad=rho, face_mm=face_mm)
            drafts.append(Draft("W2", material, index, local + np.array([z2, 0.0]), _ROLES,
                                _NOTES))
        return tuple(drafts)
    return make


def _exit_on_axis_mm(apex_rad: float, rho_rad: float, centre_mm: float) -> float:
    """z where wedge 1's exit face crosses the input axis (entry-face centre at the origin)."""
    px, py = centre_mm * math.cos(rho_rad), centre_mm * math.sin(rho_rad)
    return px + py * math.tan(apex_rad + rho_rad)


def _pair_gap_mm(spec: Spec, *, apex_rad: float, rho_rad: float, face_mm: float) -> float:
    """Gap on the axis from wedge 1's exit face to wedge 2's entry face, so the tilted faces
    clear each other at any rotation of either wedge: each face plane leans by its tilt from
    the axis normal, over the corner radius of a square wedge (half its diagonal)."""
    _ca, height = height_mm(spec, path_mm=face_mm)
    radius = 0.5 * math.hypot(face_mm, max(face_mm, height))
    lean = math.tan(abs(apex_rad + rho_rad)) + math.tan(abs(rho_rad))
    return round_up(radius * lean + ROTATION_CLEARANCE_MM)


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
                          incidence_rad=inc, count=count,
                          band_indices=tuple(index(w) for w in spec.beam.band_nm),
                          spread_rad=rf.input_spread_rad(spec),
                          path="design.deviation_deg")
    sized = _sizing_spec(spec)
    guess = sized.fabrication.clear_aperture_margin * sized.beam.diameter_in_plane_mm
    reach = ("raise fabrication.max_face_mm, or use a smaller beam or clear-aperture margin"
             + ("; in a rotating pair the tilted faces need a gap that grows with them and the "
                "beam walks across the second wedge by gap x tan(deviation of the first), so a "
                "smaller design.incidence_deg or deviation_deg also helps" if count == 2 else ""))
    face, drafts = rf.fit_scale(sized, _maker(sized, apex, index, mat.key, count), guess,
                                path="design", ground_min=d.thickness_mm is None, reach=reach)
    _check_thickness(spec, apex_rad=apex, face_mm=face)
    placed = [p.placed() for p in drafts]
    facts = _facts(spec, apex, face, placed, index)
    tuning: list[tuple[float, ...]] = []
    if count == 2:
        rows = steering_rows(apex, index(wl0), inc)
        lost = [rho for rho, dev in rows if not math.isfinite(dev)]
        if lost:
            raise DesignCheckError(
                "design.incidence_deg", f"with the wedges turned {lost[0]:g} deg against each "
                f"other the beam cannot leave W2 (total internal reflection at "
                f"{d.incidence_deg:g} deg incidence)",
                reachable="a smaller incidence or deviation, so the pair steers over its "
                "whole range")
        tuning = [(rho, round(dev, 9)) for rho, dev in rows]
        facts += _steering_facts(rows)
    system = finish_system(sized, drafts, facts=facts, tuning=tuning,
                           warnings=_warnings(spec), path="design")
    if count == 2:
        system = dataclasses.replace(_square_for_rotation(spec, system),
                                     tuning_columns=TUNING_COLUMNS)
    return dataclasses.replace(system, beam=dataclasses.replace(
        system.beam, diameter_in_plane_mm=spec.beam.diameter_in_plane_mm,
        diameter_out_of_plane_mm=spec.beam.diameter_out_of_plane_mm,
        divergence_in_plane_mrad=spec.beam.divergence_in_plane_mrad,
        divergence_out_of_plane_mrad=spec.beam.divergence_out_of_plane_mrad))


def _warnings(spec: Spec) -> list[str]:
    """A near-normal entry face whose reflection lands close to (not on) the source.

    Exactly normal faces (reflection within 2 mrad of the source) are reported by the
    back-reflection check of the trace; this adds the case a designer would still tilt away.
    """
    inc = abs(spec.design.incidence_deg)  # type: ignore[union-attr]
    if not 0.5 * BACK_REFLECTION_MRAD * 1e-3 < math.radians(inc) < math.radians(0.5):
        return []
    return [f"W1 face D: the entry face is {inc:.3g} deg from normal incidence, so its "
            f"reflection returns {2.0 * inc:.3g} deg from the source; tilt the wedge by 0.5-2 deg "
            "(design.incidence_deg) or use an isolator, and treat the return as a stray beam "
            "(IEC 60825-1 / ANSI Z136.1)"]


def _sizing_spec(spec: Spec) -> Spec:
    """The spec the faces are sized for: a rotating pair sees the beam at any roll (round)."""
    return rf.round_beam_spec(spec) if spec.design.pair else spec  # type: ignore[union-attr]


def _square_for_rotation(spec: Spec, system: System) -> System:
    """Centre every clear aperture on its face (the beam's walk turns with the wedges) and cut
    the wedges as high as their widest optical face, so the clear aperture holds at any roll."""
    cas, height = [], 0.0
    lengths = {(p.name, f.label): p.face_length_mm(i) for p in system.prisms
               for i, f in enumerate(p.faces)}
    for name, label, w, h, c, _ch in system.clear_apertures:
        length = lengths[(name, label)]
        half = max(abs(c - 0.5 * w - 0.5 * length), abs(c + 0.5 * w - 0.5 * length))
        side = max(2.0 * half, h)
        if side > length + 1e-6:
            raise DesignCheckError(
                "design.pair", f"{name} face {label}: the beam's walk on the rotating wedges "
                f"needs a clear aperture of {side:.2f} mm on a {length:.2f} mm face",
                reachable="a smaller beam or deviation, or a single wedge")
        cas.append((name, label, round(side, 4), round(side, 4), round(0.5 * length, 4)))
        height = max(height, length)
    height = max(round_up(height), max(p.height_mm for p in system.prisms))
    prisms = []
    for p in system.prisms:
        tx, _ty, tz = p.pose.translation_mm
        pose = dataclasses.replace(p.pose, translation_mm=(tx, -0.5 * height, tz))
        prisms.append(dataclasses.replace(p, height_mm=height, pose=pose))
    full = tuple((*ca, round(0.5 * height, 4)) for ca in cas)
    return dataclasses.replace(system, prisms=tuple(prisms), clear_apertures=full)


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
    (exact vector Snell's law)."""
    d = np.array([0.0, 0.0, 1.0])
    entry, exit_ = _normals_3d(apex_rad, incidence_rad)
    for roll in (roll1_rad, roll2_rad):
        for normal, n1, n2 in ((_roll(entry, roll), 1.0, n), (_roll(exit_, roll), n, 1.0)):
            out = refract(d, normal, n1, n2)
            if out is None:
                return np.full(3, math.nan)
            d = out
    return d


TUNING_COLUMNS = ("relative rotation of the wedges (deg)", "pair deviation (deg)")
"""What the columns of a pair's ``System.tuning`` rows hold."""
STEERING_STEP_DEG = 15.0
"""Step of relative rotation between the tabulated steering rows, deg."""


def pair_deviation_deg(apex_rad: float, n: float, incidence_rad: float, roll1_rad: float,
                       roll2_rad: float) -> float:
    """Deviation of the pair's output chief ray from the input axis, deg (exact 3D trace)."""
    d = risley_direction(apex_rad, n, incidence_rad, roll1_rad, roll2_rad)
    return math.degrees(math.atan2(math.hypot(float(d[0]), float(d[1])), float(d[2])))


def steering_rows(apex_rad: float, n: float, incidence_rad: float
                  ) -> list[tuple[float, float]]:
    """(relative rotation deg, pair deviation deg) from aligned (0) to opposed (180 deg), each
    wedge turned by half the relative rotation in opposite senses (exact 3D trace)."""
    rows = []
    steps = int(round(180.0 / STEERING_STEP_DEG))
    for k in range(steps + 1):
        rho = k * STEERING_STEP_DEG
        half = math.radians(0.5 * rho)
        rows.append((rho, pair_deviation_deg(apex_rad, n, incidence_rad, half, -half)))
    return rows


def _steering_facts(rows: list[tuple[float, float]]) -> list[tuple[str, float, str]]:
    """The steering range of the pair: its ends and where it reaches half the maximum."""
    top, bottom = rows[0][1], rows[-1][1]
    facts = [("steering range: maximum deviation (wedges aligned)", round(top, 9), "deg"),
             ("steering range: minimum deviation (wedges opposed, 180 deg apart)",
              round(bottom, 9), "deg"),
             ("steering range: cone half-angle swept by turning both wedges together",
              round(top, 9), "deg")]
    for (r0, d0), (r1, d1) in zip(rows, rows[1:]):
        if d0 >= 0.5 * top > d1:
            rho = r0 + (r1 - r0) * (d0 - 0.5 * top) / (d0 - d1)
            facts.append(("steering range: relative rotation for half the maximum deviation",
                          round(rho, 3), "deg"))
            break
    return facts
