"""Tuning an anamorphic pair: rotate both prisms, keep the output parallel, change M.

With the apex angles fixed, rotating P1 by ``r1`` and P2 by ``r2`` (each about its chief-ray
entry point, the usual mount axis) changes M along a one-parameter family on which the output
stays parallel to the input (chief-ray angle model, ``common.propagate_angles``; Newton on
``log M`` and the output direction). What limits the family in a real adjustable pair:

* the angle limits: incidence on every face, and the exit angle of every exit face, at most
  ``max_incidence_deg`` (80 deg by default: loss and tolerance sensitivity grow fast beyond,
  common practice); no total internal reflection at an exit face;
* the parts: at every tuned M the traced beam (1/e^2 footprint x margin, over the band) must stay
  inside the clear aperture each face was sized for, and the rotated prisms must not touch;
* the output stays parallel by construction (checked by the re-trace in the tests).

Ranges are found by continuation in ``log M`` from the design M, doubling the step while it
holds and halving it at a failure, down to 1 % in M (3 % for the angle limits), and at most a factor 30 either way.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace

import numpy as np

from prismfab.design import sizing
from prismfab.design.common import PrismAngles, polygons_overlap, propagate_angles
from prismfab.model import Pose, System

__all__ = ["angle_range", "part_range", "rows_over", "tune", "tuned_system"]

GAP_MM = 0.5
"""Smallest clearance kept between the rotated prisms (common practice)."""
_MAX_FACTOR = 30.0
_STEP0, _STEP_MAX = 0.05, 0.5
_STEP_MIN_ANGLES, _STEP_MIN_PARTS = 3e-2, 1e-2  # edges to 3 % and 1 % in M


def _within_limits(events, limit_rad: float) -> bool:
    for j, ev in enumerate(events):
        if abs(ev.incidence_rad) > limit_rad:
            return False
        if j % 2 == 1 and abs(ev.refraction_rad) > limit_rad:  # exit angle of an exit face
            return False
    return True


def tune(pair: tuple[PrismAngles, PrismAngles], ns: tuple[float, float], m_target: float,
         x0: np.ndarray, *, max_incidence_deg: float, max_iter: int = 30) -> np.ndarray | None:
    """Rotations (rad) of P1, P2 giving ``m_target`` with parallel output, or None.

    None when Newton fails, an exit face totally reflects, or an angle limit is passed.
    """
    limit = math.radians(max_incidence_deg)
    x = _newton_pair(pair, ns, math.log(m_target), [float(v) for v in x0], max_iter=max_iter)
    if x is None:
        return None
    _t, _m, ev = propagate_angles(0.0, [pair[0].rotated(x[0]), pair[1].rotated(x[1])], ns)
    return x if _within_limits(ev, limit) else None


def _newton_pair(pair: tuple[PrismAngles, PrismAngles], ns: tuple[float, float],
                 log_target: float, x0: list[float], *, max_iter: int, tol: float = 1e-13
                 ) -> np.ndarray | None:
    """Damped Newton on (log M - log target, output direction) over the two rotations (rad).

    The iteration of ``common.newton`` (same damping, stopping rule and failure cases) with the
    exact Jacobian of ``_theta_mag``, carried along the trace: one pass per trial point instead of
    three. None when it does not converge or a trial point cannot be traced from the start.
    """
    try:
        f, jac = _residual_jac(pair, ns, log_target, x0)
    except ValueError:
        return None
    x, f_max = x0, max(abs(f[0]), abs(f[1]))
    for _ in range(max_iter):
        if f_max < tol:
            return np.array(x)
        (a, b), (c, d) = jac
        det = a * d - b * c
        scale = max(abs(a), abs(b), abs(c), abs(d))
        if scale > 0.0 and abs(det) > 1e-10 * scale * scale:
            dx = ((-f[0] * d + f[1] * b) / det, (-f[1] * a + f[0] * c) / det)
        else:  # (nearly) singular: the least-squares step, as common.newton takes
            try:
                dx = tuple(np.linalg.lstsq(np.array(jac), -np.array(f), rcond=None)[0].tolist())
            except np.linalg.LinAlgError:
                return None
        lam = 1.0
        for _ in range(30):
            try:
                x_new = [x[0] + lam * dx[0], x[1] + lam * dx[1]]
                f_new, jac_new = _residual_jac(pair, ns, log_target, x_new)
                f_new_max = max(abs(f_new[0]), abs(f_new[1]))
                if f_new_max < f_max or lam < 1e-3:
                    break
            except ValueError:
                pass
            lam *= 0.5
        else:
            return None
        x, f, jac, f_max = x_new, f_new, jac_new, f_new_max
    return np.array(x) if f_max < tol * 1e3 else None


def _residual_jac(pair: tuple[PrismAngles, PrismAngles], ns: tuple[float, float],
                  log_target: float, rot_rad: list[float]
                  ) -> tuple[tuple[float, float], tuple[tuple[float, float], tuple[float, float]]]:
    """Residual (log M - log target, output direction) of the rotated pair and its Jacobian
    (rows: residual components; columns: rotation of P1, P2).

    The values are the arithmetic of ``propagate_angles`` on ``PrismAngles.rotated``; the
    derivatives follow each face's Snell law ``n1 sin i = n2 sin r`` with ``i = theta - N``:
    ``dr = n1 cos i / (n2 cos r) di`` and ``d ln(cos r / cos i) = tan i di - tan r dr``; turning
    a prism by ``dx`` turns both its face normals N by ``dx``.

    Raises:
        ValueError: total internal reflection, or a face met from behind.
    """
    theta, mag = 0.0, 1.0
    dth, dlog = [0.0, 0.0], [0.0, 0.0]
    half_pi, two_pi = math.pi / 2, 2 * math.pi
    for j, (pa, n, r) in enumerate(zip(pair, ns, rot_rad, strict=True)):
        beta = pa.beta_rad + r
        for normal, n1, n2 in ((beta, 1.0, n), (beta + pa.sense * pa.apex_rad, n, 1.0)):
            inc = math.remainder(theta - normal, two_pi)
            s = n1 * math.sin(inc) / n2
            if abs(s) >= 1.0:
                raise ValueError("total internal reflection")
            ref = math.asin(s)
            if abs(inc) >= half_pi:
                raise ValueError("the ray meets a face from behind")
            cos_i, cos_r = math.cos(inc), math.cos(ref)
            gain = n1 * cos_i / (n2 * cos_r)
            tan_i, tan_r = math.tan(inc), math.tan(ref)
            for k in (0, 1):
                d_inc = dth[k] - (1.0 if k == j else 0.0)
                d_ref = gain * d_inc
                dlog[k] += tan_i * d_inc - tan_r * d_ref
                dth[k] = (1.0 if k == j else 0.0) + d_ref
            theta = normal + ref
            mag *= cos_r / cos_i
    return (math.log(mag) - log_target, theta), ((dlog[0], dlog[1]), (dth[0], dth[1]))


def _continue(m0: float, sign: int, step_ok: Callable[[float, np.ndarray], np.ndarray | None],
              step_min: float) -> float:
    """Furthest M reached from ``m0`` in direction ``sign`` (+1 up, -1 down); the edge is
    found to ``step_min`` in ``log M`` and is always a point that passed."""
    u, x, h = math.log(m0), np.zeros(2), _STEP0
    u_end = math.log(m0) + sign * math.log(_MAX_FACTOR)
    while h >= step_min and sign * (u_end - u) > 1e-12:
        u_next = u + sign * min(h, sign * (u_end - u))
        x_next = step_ok(math.exp(u_next), x)
        if x_next is None:
            h /= 2.0
            continue
        u, x, h = u_next, x_next, min(2.0 * h, _STEP_MAX)
    return math.exp(u)


def angle_range(pair: tuple[PrismAngles, PrismAngles], ns: tuple[float, float], m0: float, *,
                max_incidence_deg: float) -> tuple[float, float]:
    """M range the angle limits allow (any prism size), continuation from ``m0``."""
    def step(m: float, x: np.ndarray) -> np.ndarray | None:
        return tune(pair, ns, m, x, max_incidence_deg=max_incidence_deg, max_iter=12)

    return (_continue(m0, -1, step, _STEP_MIN_ANGLES), _continue(m0, +1, step, _STEP_MIN_ANGLES))


def part_range(spec, system: System, drafts: list, pair: tuple[PrismAngles, PrismAngles],
               ns: tuple[float, float], m0: float, *, max_incidence_deg: float
               ) -> tuple[float, float]:
    """M range of the sized prisms: angle limits, beam inside every sized clear aperture over
    the band (nominal alignment), and no contact between the rotated prisms."""
    cas = {(c[0], c[1]): (c[4] - c[2] / 2.0, c[4] + c[2] / 2.0) for c in system.clear_apertures}
    groups = [g for g in sizing.beam_groups(spec, start_z_mm=sizing.start_z_mm(drafts) - 50.0,
                                            states=2, pivot_z_mm=0.0)
              if g.case == "nominal" and g.state == 1]
    margin = spec.fabrication.clear_aperture_margin

    def step(m: float, x: np.ndarray) -> np.ndarray | None:
        x_new = tune(pair, ns, m, x, max_incidence_deg=max_incidence_deg, max_iter=12)
        if x_new is None:
            return None
        placed = [sizing.Placed(d.vertices, d.roles, d.index, d.pivot, (0.0, float(r)))
                  for d, r in zip(drafts, x_new, strict=True)]
        if polygons_overlap(placed[0].vertices_at(1), placed[1].vertices_at(1), gap_mm=GAP_MM):
            return None
        traced = sizing.trace_groups(placed, groups, sequential=True)
        if not all(p.complete for _g, paths in traced for p in paths):
            return None
        for k, d in enumerate(drafts):
            for i, role in enumerate(d.roles):
                if not role.is_optical:
                    continue
                fps = sizing.footprints(traced, k, i, lambda h: h.along_mm)
                lo, hi = sizing.clear_aperture(fps, margin) if fps else (math.inf, -math.inf)
                ca_lo, ca_hi = cas[(d.name, chr(ord("A") + i))]
                if lo < ca_lo - 1e-6 or hi > ca_hi + 1e-6:
                    return None
        return x_new

    return _continue(m0, -1, step, _STEP_MIN_PARTS), _continue(m0, +1, step, _STEP_MIN_PARTS)


def rows_over(pair: tuple[PrismAngles, PrismAngles], ns: tuple[float, float], m0: float,
              targets, *, max_incidence_deg: float) -> list[tuple[float, float, float]] | None:
    """Tuning rows (M, rot1_deg, rot2_deg) for each target M, by continuation from ``m0``."""
    rows = []
    for mt in targets:
        mt = round(float(mt), 6)  # the table states M to 6 decimals: solve for that M exactly
        x = np.zeros(2)
        steps = max(2, int(abs(math.log(mt / m0)) / 0.02) + 1)
        for mm in np.geomspace(m0, mt, steps):
            x = tune(pair, ns, float(mm), x, max_incidence_deg=max_incidence_deg)
            if x is None:
                return None
        rows.append((mt, math.degrees(x[0]), math.degrees(x[1])))
    return rows


def tuned_system(system: System, row: tuple[float, ...]) -> System:
    """The system with each prism turned by the row's rotation (deg) about its chief-ray entry
    point, as the tuning table prescribes (system frame, rotation about +y, +z towards +x)."""
    from prismfab.design.common import Section, section_in_plane, trace_plane

    from prismfab import materials

    wl0 = system.beam.wavelength_nm
    secs = [Section(section_in_plane(p), tuple(f.role for f in p.faces), float(materials.get(
        p.material, catalogue_file=system.materials_file or None).n(wl0))) for p in system.prisms]
    chief = trace_plane(secs, (system.beam.origin_mm[2], 0.0), 0.0)
    pivots = {}
    for h in chief.hits:
        pivots.setdefault(h.section, h.point)
    prisms = []
    for k, (p, rot_deg) in enumerate(zip(system.prisms, row[1:], strict=True)):
        prisms.append(replace(p, pose=_rotated(p.pose, math.radians(rot_deg), pivots[k])))
    return replace(system, prisms=tuple(prisms))


def _rotated(pose: Pose, angle_rad: float, pivot_zx: np.ndarray) -> Pose:
    c, s = math.cos(angle_rad), math.sin(angle_rad)
    ry = np.array([[c, 0.0, s], [0.0, 1.0, 0.0], [-s, 0.0, c]])  # +z turns towards +x
    r = ry @ np.array(pose.rotation)
    p = np.array([pivot_zx[1], 0.0, pivot_zx[0]])
    t = ry @ (np.array(pose.translation_mm) - p) + p
    return Pose(rotation=tuple(tuple(float(v) for v in row) for row in r),  # type: ignore[arg-type]
                translation_mm=(float(t[0]), float(t[1]), float(t[2])))
