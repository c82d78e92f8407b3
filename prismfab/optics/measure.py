"""What a solved system does to its beam, per wavelength: the ``Performance`` of a ``System``.

For each wavelength (design first) one exact trace carries: the chief ray; two differential rays
displaced by ``DIFF_MM`` (1 % of the beam for beams under 1 mm) along the in-plane and
out-of-plane beam axes (plane faces map parallel
rays linearly, so these give magnification and footprints exactly); the four 1/e^2 envelope rays
(a cross-check of the magnification and a clipping check); and two chief rays at
``lambda +/- DLAMBDA_NM`` for the angular dispersion. Angles of the output are taken in the beam
frame (``beam.beam_frame``): in-plane pointing ``atan2(d.ex, d.ez)``, out-of-plane ``asin(d.ey)``.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from prismfab.model import Performance, System, Vec3, WavelengthResult
from prismfab.optics.beam import beam_frame
from prismfab.optics.ghosts import ghost_warning, ghosts
from prismfab.optics.solid import ConvexSolid
from prismfab.optics.trace import (
    STATUS_EXITED,
    IndexFunction,
    RayBundle,
    TraceResult,
    catalogue_index,
    trace,
)

__all__ = ["DIFF_MM", "DLAMBDA_NM", "measure"]

DIFF_MM = 0.01
"""Offset of the differential rays from the chief ray, mm."""
DLAMBDA_NM = 0.01
"""Half step of the central difference for the angular dispersion, nm."""
CROSS_CHECK_REL = 1e-6
"""Relative disagreement of envelope and differential magnification that raises a warning."""
_RAYS = 9  # per wavelength: chief, +dx, +dy, +x, -x, +y, -y envelope, chief at lambda -/+


def _diff_mm(system: System) -> float:
    """Offset of the differential rays: ``DIFF_MM``, or 1 % of the smaller beam diameter for
    beams under 1 mm, so the differential rays stay inside faces sized for a tiny beam."""
    beam = system.beam
    smallest = min(beam.diameter_in_plane_mm, beam.diameter_out_of_plane_mm)
    return min(DIFF_MM, 0.01 * smallest) if smallest > 0 else DIFF_MM


def _bundle(system: System, wavelengths: tuple[float, ...]) -> RayBundle:
    beam = system.beam
    ex, ey, ez = beam_frame(beam)
    wx, wy = beam.diameter_in_plane_mm / 2.0, beam.diameter_out_of_plane_mm / 2.0
    diff = _diff_mm(system)
    offsets = np.array([[0, 0], [diff, 0], [0, diff], [wx, 0], [-wx, 0], [0, wy], [0, -wy],
                        [0, 0], [0, 0]], float)
    o = np.asarray(beam.origin_mm, float) + offsets[:, :1] * ex + offsets[:, 1:] * ey
    shift = np.array([0, 0, 0, 0, 0, 0, 0, -DLAMBDA_NM, DLAMBDA_NM])
    wl = np.concatenate([w + shift for w in wavelengths])
    return RayBundle.create(np.tile(o, (len(wavelengths), 1)), ez, wl, polarization=beam.polarization)


def measure(
    system: System, *, back_reflection_mrad: float = 2.0, index_of: IndexFunction | None = None,
) -> Performance:
    """Trace ``system`` and measure its performance at every wavelength of its beam.

    Quantities that do not exist because the chief ray does not leave the system (absorbed,
    leaked, trapped) are NaN, with a warning naming the face.

    Args:
        system: the solved system (system frame).
        back_reflection_mrad: a ghost leaving within this angle of the reversed input beam is
            flagged as returning to the source.
        index_of: ``index_of(material, wavelengths_nm) -> n``; default: the shipped material
            catalogue extended by ``system.materials_file``.
    """
    index_of = catalogue_index(system.materials_file) if index_of is None else index_of
    wavelengths = system.beam.wavelengths_nm
    res = trace(system, _bundle(system, wavelengths), index_of=index_of)
    warnings: list[str] = []
    results = tuple(_result(system, res, i * _RAYS, w, index_of, warnings)
                    for i, w in enumerate(wavelengths))
    found = ghosts(system, res, 0, wavelength_nm=wavelengths[0], back_reflection_mrad=back_reflection_mrad,
                   index_of=index_of)
    warnings += [ghost_warning(g, back_reflection_mrad) for g in found if g.warning]
    return Performance(results=results, ghosts=found, chief_ray_mm=_chief_path(system, res),
                       warnings=tuple(warnings))


def _angles(system: System, d: NDArray[np.float64]) -> tuple[float, float]:
    ex, ey, ez = beam_frame(system.beam)
    return math.atan2(float(d @ ex), float(d @ ez)), math.asin(max(-1.0, min(1.0, float(d @ ey))))


def _width(res: TraceResult, a: int, b: int) -> float:
    """Distance between the output lines of rays a and b, perpendicular to ray a."""
    delta = res.origins[b] - res.origins[a]
    d = res.directions[a]
    return float(np.linalg.norm(delta - (delta @ d) * d))


def _result(system: System, res: TraceResult, i: int, wavelength_nm: float, index_of: IndexFunction,
            warnings: list[str]) -> WavelengthResult:
    beam = system.beam
    ex, _, _ = beam_frame(beam)
    ok = res.status[i:i + _RAYS] == STATUS_EXITED
    nan = float("nan")
    if not ok[0]:
        warnings.append(_lost(res, i, wavelength_nm))
    if not ok[3:7].all() and ok[0]:
        warnings.append(f"at {wavelength_nm:g} nm a 1/e^2 envelope ray does not leave the system: "
                        "the beam is clipped; enlarge the faces or move the beam")
    diff = _diff_mm(system)
    m_in = _width(res, i, i + 1) / diff if ok[0] and ok[1] else nan
    m_out = _width(res, i, i + 2) / diff if ok[0] and ok[2] else nan
    if ok[0] and ok[3:5].all() and beam.diameter_in_plane_mm > 0:
        m_env = _width(res, i + 3, i + 4) / beam.diameter_in_plane_mm
        if abs(m_env - m_in) > CROSS_CHECK_REL * m_in:
            warnings.append(f"at {wavelength_nm:g} nm the envelope magnification {m_env:.6f} differs "
                            f"from the differential value {m_in:.6f}")
    point_in, point_out = _angles(system, res.directions[i]) if ok[0] else (nan, nan)
    offset = float((res.origins[i] - np.asarray(beam.origin_mm)) @ ex) if ok[0] else nan
    disp = nan
    if ok[7] and ok[8]:
        lo, hi = _angles(system, res.directions[i + 7])[0], _angles(system, res.directions[i + 8])[0]
        disp = (hi - lo) / (2.0 * DLAMBDA_NM * 1e-3)
    aoi, tir, foot = _faces(system, res, i, wavelength_nm, index_of)
    return WavelengthResult(
        wavelength_nm=wavelength_nm, magnification_in_plane=m_in, magnification_out_of_plane=m_out,
        pointing_mrad=point_in * 1e3, pointing_out_of_plane_mrad=point_out * 1e3,
        lateral_offset_mm=offset, transmission=float(res.power[i]) if ok[0] else 0.0,
        dispersion_rad_per_um=disp, aoi_deg=aoi, tir_margin_deg=tir, footprint_mm=foot,
    )


def _lost(res: TraceResult, i: int, wavelength_nm: float) -> str:
    k = int(res.n_events[i]) - 1
    what = {1: "is absorbed", 2: "leaks out (TIR lost)", 3: "is still trapped"}[int(res.status[i])]
    if k < 0:
        return f"at {wavelength_nm:g} nm the chief ray {what}"
    solid = res.solids[int(res.event_prism[i, k])]
    return (f"at {wavelength_nm:g} nm the chief ray {what} at {solid.name} face "
            f"{solid.labels[int(res.event_face[i, k])]}")


def _faces(system: System, res: TraceResult, i: int, wavelength_nm: float, index_of: IndexFunction
           ) -> tuple[tuple[tuple[str, str, float], ...], tuple[tuple[str, str, float], ...],
                      tuple[tuple[str, str, float, float, float, float], ...]]:
    """AOI, TIR margins and footprints of the faces met by chief ray ``i``."""
    beam = system.beam
    wx, wy = beam.diameter_in_plane_mm / 2.0, beam.diameter_out_of_plane_mm / 2.0
    prisms, faces = res.event_prism[i:i + 3], res.event_face[i:i + 3]
    points, aoi = res.event_points[i:i + 3], np.degrees(res.event_aoi_rad[i])
    aois, tirs, foots = [], [], []
    for k in range(int(res.n_events[i])):
        solid: ConvexSolid = res.solids[int(prisms[0, k])]
        f = int(faces[0, k])
        name, label = solid.name, solid.labels[f]
        aois.append((name, label, float(aoi[k])))
        if solid.roles[f] == "internal-reflection":
            n = float(np.asarray(index_of(solid.material, np.array([wavelength_nm])), float).ravel()[0])
            tirs.append((name, label, float(aoi[k]) - math.degrees(math.asin(min(1.0, 1.0 / n)))))
        if f >= solid.n_sides:
            continue
        s, h = solid.face_coordinates(f, points[:, k])
        same = (prisms[1:, k] == prisms[0, k]) & (faces[1:, k] == f)
        sx, hx = ((s[1] - s[0]), (h[1] - h[0])) if same[0] else (0.0, 0.0)
        sy, hy = ((s[2] - s[0]), (h[2] - h[0])) if same[1] else (0.0, 0.0)
        diff = _diff_mm(system)
        scale_x, scale_y = wx / diff, wy / diff
        foots.append((name, label, float(s[0]), 2.0 * math.hypot(sx * scale_x, sy * scale_y),
                      float(h[0]), 2.0 * math.hypot(hx * scale_x, hy * scale_y)))
    return tuple(aois), tuple(tirs), tuple(foots)


def _chief_path(system: System, res: TraceResult) -> tuple[Vec3, ...]:
    """Design-wavelength chief ray: lead-in point, every hit, lead-out point (system frame, mm)."""
    _, _, ez = beam_frame(system.beam)
    k = int(res.n_events[0])
    hits = res.event_points[0, :k]
    start = np.asarray(system.beam.origin_mm, float)
    if k == 0:
        pts = np.array([start, start + 10.0 * ez])
    else:
        length = float(np.sum(np.linalg.norm(np.diff(hits, axis=0), axis=1))) if k > 1 else 0.0
        lead = max(5.0, 0.25 * length)
        tail = [hits[-1] + lead * res.directions[0]] if res.status[0] == STATUS_EXITED else []
        pts = np.array([hits[0] - lead * ez, *hits, *tail])
    return tuple((float(p[0]), float(p[1]), float(p[2])) for p in pts)
