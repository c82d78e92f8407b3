"""Shared building blocks of the design solvers: plane geometry, 2D tracing, prism assembly.

Every family solver works in the **beam plane** (the system x-z plane, y = 0) with *plane
coordinates* ``(z_mm, x_mm)``: the input beam travels along +z, x is the in-plane transverse
axis. A direction is an angle ``theta`` (rad) from +z towards +x, ``(cos theta, sin theta)``.
Because ``Pose.in_plane`` maps part (X, Y) to plane (z, x) by a proper rotation, a section that
is counter-clockwise in plane coordinates stays counter-clockwise in the part frame, and the
outward normal of the edge from vertex i to i+1 is the edge direction turned clockwise,
``(de_x, -de_z)`` written in (z, x) order, exactly as DEVELOPERS.md states for the part frame.

Contents:
  * vectors: :func:`unit`, :func:`angle_of`, :func:`refract`, :func:`reflect`
  * polygons: :func:`edge_normal`, :func:`polygon_from_lines`, :func:`polygon_from_angles`,
    :func:`is_convex_ccw`, :func:`polygons_overlap`
  * chief-ray angle model (directions only): :class:`PrismAngles`, :func:`propagate_angles`
  * exact 2D trace through placed sections: :class:`Section`, :func:`trace_plane`
  * Fresnel power reflectance :func:`fresnel_r`
  * assembly: :func:`face_coating`, :func:`place_section`, :func:`section_in_plane`,
    :func:`index_function`
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from prismfab.errors import SolveError
from prismfab.model import Coating, CoatingType, FaceRole, Polarization, Pose, Prism, Face
from prismfab.spec.types import Spec

__all__ = [
    "bracketed_root",
    "Hit",
    "PlanePath",
    "PrismAngles",
    "angular_dispersion",
    "material_of",
    "newton",
    "Section",
    "angle_of",
    "edge_normal",
    "face_coating",
    "fresnel_r",
    "index_function",
    "is_convex_ccw",
    "place_section",
    "polygon_from_angles",
    "polygon_from_lines",
    "polygons_overlap",
    "propagate_angles",
    "reflect",
    "refract",
    "section_in_plane",
    "resume_plane",
    "section_edges",
    "trace_plane",
    "trace_plane_edges",
    "unit",
]

LABELS = "ABCDEFGHIJKLMNOPQRSTUVWXYZ"
_EPS_MM = 1e-9


# --------------------------------------------------------------------------- vectors


def unit(theta_rad: float) -> np.ndarray:
    """Unit direction at ``theta_rad`` from +z towards +x, as a plane vector (z, x)."""
    return np.array([math.cos(theta_rad), math.sin(theta_rad)])


def angle_of(vector: Sequence[float]) -> float:
    """Angle (rad) of a plane vector (z, x) from +z towards +x, in (-pi, pi]."""
    return math.atan2(vector[1], vector[0])


def refract(d: np.ndarray, normal: np.ndarray, n1: float, n2: float) -> np.ndarray | None:
    """Vector Snell's law in the plane (Heckbert's form, in Glassner, Intro. to Ray Tracing, 1989).

    Args:
        d: unit direction of the incident ray.
        normal: unit normal of the surface, either orientation.
        n1, n2: index before and after the surface.

    Returns:
        The unit refracted direction, or None on total internal reflection.
    """
    nn = normal if float(d @ normal) < 0 else -normal  # against the incoming ray
    c = -float(d @ nn)
    eta = n1 / n2
    k = 1.0 - eta * eta * (1.0 - c * c)
    if k < 0.0:
        return None
    t = eta * d + (eta * c - math.sqrt(k)) * nn
    return t / np.linalg.norm(t)


def reflect(d: np.ndarray, normal: np.ndarray) -> np.ndarray:
    """Mirror reflection ``r = d - 2 (d.N) N`` (N unit, either orientation)."""
    return d - 2.0 * float(d @ normal) * normal


def fresnel_r(aoi_rad: float, n1: float, n2: float, polarization: Polarization) -> float:
    """Power reflectance of an uncoated interface (Smith, MOE 4th ed., Eq. 11.1; 1.0 beyond TIR)."""
    s = n1 * math.sin(aoi_rad) / n2
    if abs(s) >= 1.0:
        return 1.0
    ci, ct = math.cos(aoi_rad), math.sqrt(1.0 - s * s)
    rs = ((n1 * ci - n2 * ct) / (n1 * ci + n2 * ct)) ** 2
    rp = ((n2 * ci - n1 * ct) / (n2 * ci + n1 * ct)) ** 2
    if polarization is Polarization.S:
        return rs
    if polarization is Polarization.P:
        return rp
    return 0.5 * (rs + rp)


# --------------------------------------------------------------------------- polygons


def edge_normal(vertices: np.ndarray, index: int) -> np.ndarray:
    """Outward unit normal of edge ``index`` (vertex i -> i+1) of a CCW polygon (plane coords)."""
    a, b = vertices[index], vertices[(index + 1) % len(vertices)]
    e = b - a
    n = np.array([e[1], -e[0]])
    return n / np.linalg.norm(n)


def _cross(a: np.ndarray, b: np.ndarray) -> float:
    return float(a[0] * b[1] - a[1] * b[0])


def line_intersection(p: np.ndarray, d: np.ndarray, q: np.ndarray, e: np.ndarray) -> np.ndarray:
    """Intersection of the lines ``p + t d`` and ``q + u e`` (raises ValueError if parallel)."""
    den = _cross(d, e)
    if abs(den) < 1e-15:
        raise ValueError("parallel lines do not intersect")
    t = _cross(q - p, e) / den
    return p + t * d


def polygon_from_lines(points: Sequence[np.ndarray], normals: Sequence[np.ndarray]) -> np.ndarray:
    """Polygon bounded by face lines given in CCW order.

    Face i is the line through ``points[i]`` with outward normal ``normals[i]``; vertex i is the
    intersection of face i-1 and face i, so face i runs from vertex i to vertex i+1, as in
    ``Prism``. Returns an (n, 2) array in plane coordinates.
    """
    n = len(points)
    verts = []
    for i in range(n):
        j = i - 1
        dj = np.array([-normals[j][1], normals[j][0]])
        di = np.array([-normals[i][1], normals[i][0]])
        verts.append(line_intersection(np.asarray(points[j]), dj, np.asarray(points[i]), di))
    return np.array(verts)


def polygon_from_angles(interior_angles_rad: Sequence[float], sides_mm: Sequence[float]) -> np.ndarray:
    """CCW polygon from its interior angles and its first ``n - 2`` sides.

    Vertex 0 sits at the origin and side 0 (vertex 0 -> 1) runs along +X. The last two sides
    follow from closure. Interior angles must sum to ``(n - 2) pi``.

    Args:
        interior_angles_rad: interior angle at each vertex, rad.
        sides_mm: lengths of sides 0 .. n-3 (a triangle needs one side).

    Raises:
        ValueError: wrong counts, angle sum, or a non-positive closing side.
    """
    n = len(interior_angles_rad)
    if n < 3 or len(sides_mm) != n - 2:
        raise ValueError(f"{n} angles need {n - 2} given sides, got {len(sides_mm)}")
    if abs(sum(interior_angles_rad) - (n - 2) * math.pi) > 1e-9:
        raise ValueError("interior angles must sum to (n - 2) * 180 deg")
    heading = 0.0
    pts = [np.zeros(2)]
    dirs = []
    for i in range(n):
        dirs.append(np.array([math.cos(heading), math.sin(heading)]))
        heading += math.pi - interior_angles_rad[(i + 1) % n]
    for i in range(n - 2):
        pts.append(pts[-1] + sides_mm[i] * dirs[i])
    # close: pts[-1] + a dirs[n-2] + b dirs[n-1] = 0
    mat = np.column_stack([dirs[n - 2], dirs[n - 1]])
    a, b = np.linalg.solve(mat, -pts[-1])
    if a <= 0 or b <= 0:
        raise ValueError("the given sides and angles do not close into a convex polygon")
    pts.append(pts[-1] + a * dirs[n - 2])
    return np.array(pts)


def is_convex_ccw(vertices: np.ndarray) -> bool:
    """True if the polygon is strictly convex and counter-clockwise."""
    n = len(vertices)
    for i in range(n):
        a, b, c = vertices[i - 1], vertices[i], vertices[(i + 1) % n]
        if _cross(b - a, c - b) <= 1e-12:
            return False
    return True


def polygons_overlap(a: np.ndarray, b: np.ndarray, *, gap_mm: float = 0.0) -> bool:
    """Separating-axis test for two convex polygons; True if closer than ``gap_mm``."""
    va, vb = a.tolist(), b.tolist()  # plain floats: a few vertices, called in search loops
    for poly in (va, vb):
        for i in range(len(poly)):
            (x0, y0), (x1, y1) = poly[i], poly[(i + 1) % len(poly)]
            nx, ny = y1 - y0, x0 - x1
            ln = math.hypot(nx, ny)
            nx, ny = nx / ln, ny / ln
            pa = [x * nx + y * ny for x, y in va]
            pb = [x * nx + y * ny for x, y in vb]
            if max(pa) + gap_mm <= min(pb) or max(pb) + gap_mm <= min(pa):
                return False
    return True


# --------------------------------------------------------------------------- angle model


@dataclass(frozen=True, slots=True)
class PrismAngles:
    """Orientation of one refracting prism for the chief-ray angle model.

    Args:
        beta_rad: direction of the entry face's inward normal (into the glass), from +z
            towards +x, system frame.
        apex_rad: apex angle between entry and exit faces.
        sense: +1 when the apex lies on the +x side of the ray (the prism deviates towards -x),
            -1 for the mirror image. The exit face's outward normal points along
            ``beta + sense * apex``.
    """

    beta_rad: float
    apex_rad: float
    sense: int = 1

    @property
    def exit_normal_rad(self) -> float:
        """Direction of the exit face's outward normal."""
        return self.beta_rad + self.sense * self.apex_rad

    def rotated(self, delta_rad: float) -> PrismAngles:
        """The same prism turned by ``delta_rad`` about the y axis."""
        return PrismAngles(self.beta_rad + delta_rad, self.apex_rad, self.sense)


@dataclass(frozen=True, slots=True)
class AngleEvent:
    """One refraction in the angle model: signed incidence and refraction angles (rad), index pair."""

    incidence_rad: float
    refraction_rad: float
    n1: float
    n2: float

    @property
    def k(self) -> float:
        """Beam-width ratio out/in at this face, ``cos(refraction) / cos(incidence)``."""
        return math.cos(self.refraction_rad) / math.cos(self.incidence_rad)


def _refract_angle(theta: float, normal_rad: float, n1: float, n2: float) -> tuple[float, AngleEvent]:
    """Refract a direction at a face whose normal (along the travel) points at ``normal_rad``."""
    inc = math.remainder(theta - normal_rad, 2 * math.pi)
    s = n1 * math.sin(inc) / n2
    if abs(s) >= 1.0:
        raise ValueError("total internal reflection")
    ref = math.asin(s)
    return normal_rad + ref, AngleEvent(inc, ref, n1, n2)


def propagate_angles(theta_in_rad: float, prisms: Sequence[PrismAngles], indices: Sequence[float]
                     ) -> tuple[float, float, tuple[AngleEvent, ...]]:
    """Chief-ray direction through a sequence of two-face refracting prisms (positions ignored).

    Args:
        theta_in_rad: input direction.
        prisms: prism orientations in beam order.
        indices: refractive index of each prism at the wavelength.

    Returns:
        (output direction, in-plane magnification = product of the face ratios k, events: entry
        and exit refraction of each prism in order).

    Raises:
        ValueError: the ray is totally reflected or misses a face's front side.
    """
    theta = theta_in_rad
    events: list[AngleEvent] = []
    mag = 1.0
    for pr, n in zip(prisms, indices, strict=True):
        theta, ev1 = _refract_angle(theta, pr.beta_rad, 1.0, n)
        theta, ev2 = _refract_angle(theta, pr.exit_normal_rad, n, 1.0)
        for ev in (ev1, ev2):
            if abs(ev.incidence_rad) >= math.pi / 2:
                raise ValueError("the ray meets a face from behind")
            mag *= ev.k
        events += (ev1, ev2)
    return theta, mag, tuple(events)


# --------------------------------------------------------------------------- exact 2D trace


@dataclass(frozen=True, slots=True)
class Section:
    """A placed prism section for the 2D trace.

    Args:
        vertices: (n, 2) CCW polygon in plane coordinates (z, x), mm.
        roles: role of each face (edge i from vertex i to i+1).
        index: refractive index at the traced wavelength.
    """

    vertices: np.ndarray
    roles: tuple[FaceRole, ...]
    index: float


@dataclass(frozen=True, slots=True)
class Hit:
    """A ray meeting a face: where, at which angle, and what happened.

    Args:
        section: index of the section in the traced list.
        face: face index in that section.
        point: hit point, plane coordinates.
        along_mm: distance of the hit from the face's start vertex.
        aoi_rad: unsigned incidence in the medium the ray comes from.
        event: "refract", "tir", "mirror", or "blocked" (a ground face: the ray stops).
    """

    section: int
    face: int
    point: np.ndarray
    along_mm: float
    aoi_rad: float
    event: str


@dataclass(frozen=True, slots=True)
class PlanePath:
    """Result of a 2D trace: the points visited, the face events, the final state."""

    points: tuple[np.ndarray, ...]
    hits: tuple[Hit, ...]
    direction: np.ndarray
    complete: bool  # False when blocked, trapped, or out of events


def _edges(vertices: np.ndarray) -> list[tuple[float, ...]]:
    """Per edge: start point, edge vector, outward unit normal (plain floats, for speed)."""
    v = vertices.tolist()
    out = []
    for i in range(len(v)):
        (ax, ay), (bx, by) = v[i], v[(i + 1) % len(v)]
        ex, ey = bx - ax, by - ay
        ln = math.hypot(ex, ey)
        out.append((ax, ay, ex, ey, ey / ln, -ex / ln))
    return out


def _first_hit(px: float, py: float, dx: float, dy: float, edges: list, inside: bool
               ) -> tuple[float, int] | None:
    best_t, best_i = math.inf, -1
    i = 0
    for ax, ay, ex, ey, nx, ny in edges:
        facing = dx * nx + dy * ny
        if (facing > 0) if inside else (facing < 0):
            den = dx * ey - dy * ex
            if abs(den) >= 1e-15:
                qx, qy = ax - px, ay - py
                t = (qx * ey - qy * ex) / den
                if _EPS_MM < t < best_t:
                    u = (qx * dy - qy * dx) / den
                    if -1e-12 <= u <= 1 + 1e-12:
                        best_t, best_i = t, i
        i += 1
    return (best_t, best_i) if best_i >= 0 else None


def trace_plane(sections: Sequence[Section], start: Sequence[float], theta_rad: float, *,
                max_events: int = 24, lead_out_mm: float = 20.0,
                sequential: bool = False) -> PlanePath:
    """Trace one ray through placed sections in air (non-sequential, exact).

    At optical faces the ray refracts, or is totally reflected where Snell has no solution.
    MIRROR faces reflect. GROUND faces stop the ray (``complete`` False).

    Args:
        sections: placed sections with their index at the ray's wavelength.
        start: start point, plane coordinates (z, x), mm, outside every section.
        theta_rad: start direction.
        max_events: stop after this many face events.
        lead_out_mm: length of the last drawn segment after the ray leaves the system.
        sequential: meet the sections strictly in list order (sizing of partly built systems,
            where a provisional oversize section must not catch rays meant for another).
    """
    return trace_plane_edges(sections, [_edges(sec.vertices) for sec in sections], start,
                             theta_rad, max_events=max_events, lead_out_mm=lead_out_mm,
                             sequential=sequential)


def section_edges(sections: Sequence[Section]) -> list[list[tuple[float, ...]]]:
    """Per section, the edge data ``trace_plane_edges`` takes (computed once per section set)."""
    return [_edges(sec.vertices) for sec in sections]


def trace_plane_edges(sections: Sequence[Section], geo: list, start: Sequence[float],
                      theta_rad: float, *, max_events: int = 24, lead_out_mm: float = 20.0,
                      sequential: bool = False) -> PlanePath:
    """``trace_plane`` with the sections' edge data (``section_edges``) given, so that many rays
    through the same sections share it."""
    px, py = float(start[0]), float(start[1])
    return _trace_from(sections, geo, [np.array([px, py])], [], 0,
                       (px, py, math.cos(theta_rad), math.sin(theta_rad)),
                       max_events=max_events, lead_out_mm=lead_out_mm, sequential=sequential)


def resume_plane(sections: Sequence[Section], geo: list, prefix: PlanePath, *,
                 max_events: int = 24, lead_out_mm: float = 20.0) -> PlanePath:
    """Continue a sequential trace whose first section was traced alone (``prefix``).

    ``prefix`` is ``trace_plane_edges(sections[:1], geo[:1], ..., sequential=True)`` of the same
    ray: where it left section 0 (complete, with hits) the trace goes on through
    ``sections[1:]`` exactly as one sequential trace through all of them would; otherwise (the ray
    missed, was blocked or trapped in section 0) ``prefix`` is already the whole trace.
    """
    if not (prefix.complete and prefix.hits):
        return prefix
    last = prefix.points[-2]  # the exit point of section 0 (the last point is the lead-out)
    return _trace_from(sections, geo, list(prefix.points[:-1]), list(prefix.hits), 1,
                       (float(last[0]), float(last[1]), float(prefix.direction[0]),
                        float(prefix.direction[1])),
                       max_events=max_events - len(prefix.hits), lead_out_mm=lead_out_mm,
                       sequential=True)


def _trace_from(sections: Sequence[Section], geo: list, points: list, hits: list, next_k: int,
                ray: tuple[float, float, float, float], *, max_events: int, lead_out_mm: float,
                sequential: bool) -> PlanePath:
    """The trace loop from a point outside every section; ``ray`` is (px, py, dx, dy)."""
    px, py, dx, dy = ray
    inside: int | None = None
    for _ in range(max_events):
        if inside is None:
            best = None
            if sequential:
                if next_k < len(geo):
                    h = _first_hit(px, py, dx, dy, geo[next_k], False)
                    if h is not None:
                        best = (h[0], h[1], next_k)
            else:
                for k, edges in enumerate(geo):
                    h = _first_hit(px, py, dx, dy, edges, False)
                    if h and (best is None or h[0] < best[0]):
                        best = (h[0], h[1], k)
            if best is None:
                points.append(np.array([px + lead_out_mm * dx, py + lead_out_mm * dy]))
                return PlanePath(tuple(points), tuple(hits), np.array([dx, dy]), True)
            t, face, k = best
        else:
            h = _first_hit(px, py, dx, dy, geo[inside], True)
            if h is None:  # numerically lost inside: treat as trapped
                return PlanePath(tuple(points), tuple(hits), np.array([dx, dy]), False)
            t, face, k = h[0], h[1], inside
        sec = sections[k]
        px, py = px + t * dx, py + t * dy
        p = np.array([px, py])
        points.append(p)
        ax, ay, _ex, _ey, nx, ny = geo[k][face]
        c = dx * nx + dy * ny
        aoi = math.acos(min(1.0, abs(c)))
        along = math.hypot(px - ax, py - ay)
        role = sec.roles[face]
        if role is FaceRole.GROUND:
            hits.append(Hit(k, face, p, along, aoi, "blocked"))
            return PlanePath(tuple(points), tuple(hits), np.array([dx, dy]), False)
        if role is FaceRole.MIRROR:
            dx, dy = dx - 2 * c * nx, dy - 2 * c * ny
            hits.append(Hit(k, face, p, along, aoi, "mirror"))
            continue
        eta = 1.0 / sec.index if inside is None else sec.index  # n1 / n2
        # vector Snell (Heckbert, in Glassner 1989) with the normal against the ray
        if c > 0:
            sx, sy, cosi = -nx, -ny, c
        else:
            sx, sy, cosi = nx, ny, -c
        kk = 1.0 - eta * eta * (1.0 - cosi * cosi)
        if kk < 0.0:
            dx, dy = dx - 2 * c * nx, dy - 2 * c * ny
            hits.append(Hit(k, face, p, along, aoi, "tir"))
            continue
        f = eta * cosi - math.sqrt(kk)
        dx, dy = eta * dx + f * sx, eta * dy + f * sy
        norm = math.hypot(dx, dy)
        dx, dy = dx / norm, dy / norm
        hits.append(Hit(k, face, p, along, aoi, "refract"))
        if inside is None:
            inside = k
        else:
            next_k, inside = k + 1, None
    return PlanePath(tuple(points), tuple(hits), np.array([dx, dy]), False)


# --------------------------------------------------------------------------- assembly


def material_of(spec: Spec, material: str, *, path: str):  # -> prismfab.materials.Material
    """The catalogue material, checked over the spec's design wavelength and band.

    Raises:
        MaterialError: unknown material, or a band wavelength outside its valid range.
    """
    from prismfab import materials

    mat = materials.get(material, catalogue_file=spec.materials_file or None, path=path)
    for wl in (spec.beam.wavelength_nm, *spec.beam.band_nm):
        mat.check_range(wl, path=path)
    return mat


def index_function(spec: Spec, material: str, *, path: str) -> Callable[[float], float]:
    """``n(wavelength_nm)`` of a catalogue material, checked over the spec's band.

    Raises:
        MaterialError: unknown material, or a band wavelength outside its valid range.
    """
    mat = material_of(spec, material, path=path)
    return lambda wl: float(mat.n(wl))


def angular_dispersion(theta_in_rad: float, prisms: Sequence[PrismAngles],
                       indices: Sequence[float], dn_dlambda: Sequence[float]) -> float:
    """First-order angular dispersion d(theta_out)/d(lambda) of a prism sequence (rad per unit
    of ``dn_dlambda``'s wavelength).

    This is the multiple-prism recursion of Duarte and Piper (Am. J. Phys. 51 (1983); Duarte
    (ed.), Tunable Lasers Handbook, ch. 2, Eqs. 11-15) written face by face in signed angles:
    differentiating ``n1 sin i = n2 sin r`` with ``i = theta - N`` gives
    ``d theta' = (n1 cos i d theta + sin i dn1 - sin r dn2) / (n2 cos r)``, which, chained over
    the entry and exit faces, reproduces ``H2 dn + (k1 k2)^-1 (H1 dn +/- d phi_prev)`` with the
    orientation sign carried by the signed angles.
    """
    _theta, _mag, events = propagate_angles(theta_in_rad, prisms, indices)
    d = 0.0
    for j, dn in enumerate(dn_dlambda):
        for ev, dn1, dn2 in ((events[2 * j], 0.0, dn), (events[2 * j + 1], dn, 0.0)):
            i, r = ev.incidence_rad, ev.refraction_rad
            d = (ev.n1 * math.cos(i) * d + math.sin(i) * dn1 - math.sin(r) * dn2) / (
                ev.n2 * math.cos(r))
    return d


def bracketed_root(f: Callable[[float], float], lo: float, hi: float, *, xtol: float = 1e-12,
                   rtol: float = 4e-16, maxiter: int = 200) -> float:
    """A root of ``f`` in ``[lo, hi]``, where ``f(lo)`` and ``f(hi)`` differ in sign.

    Regula falsi with the Illinois modification, falling back to bisection whenever an
    interpolated step would not shrink the bracket by half; stops when the bracket is narrower
    than ``xtol + rtol * |x|``. Keeps scipy's optimizer (a slow import) off the solve path.

    Raises:
        ValueError: ``f`` does not change sign over the bracket.
    """
    a, b = float(lo), float(hi)
    fa, fb = f(a), f(b)
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0) == (fb > 0):
        raise ValueError(f"no sign change between {a!r} and {b!r}")
    side = 0
    for _ in range(maxiter):
        width = abs(b - a)
        x = (a * fb - b * fa) / (fb - fa)
        if not (min(a, b) < x < max(a, b)):
            x = 0.5 * (a + b)
        fx = f(x)
        if fx == 0.0:
            return x
        if (fx > 0) == (fb > 0):
            b, fb = x, fx
            if side == -1:
                fa *= 0.5
            side = -1
        else:
            a, fa = x, fx
            if side == 1:
                fb *= 0.5
            side = 1
        if abs(b - a) > 0.5 * width:  # slow progress: bisect once
            m = 0.5 * (a + b)
            fm = f(m)
            if fm == 0.0:
                return m
            if (fm > 0) == (fb > 0):
                b, fb = m, fm
            else:
                a, fa = m, fm
            side = 0
        if abs(b - a) <= xtol + rtol * max(abs(a), abs(b)):
            break
    return 0.5 * (a + b)


def newton(residual: Callable[[np.ndarray], np.ndarray], x0: Sequence[float], *,
           tol: float = 1e-13, max_iter: int = 60, step_rad: float = 1e-7) -> np.ndarray | None:
    """Damped Newton iteration with a forward-difference Jacobian (square systems).

    Returns the root, or None when it does not converge or the residual cannot be evaluated
    (a ValueError from ``residual``, e.g. total internal reflection on the way).
    """
    x = np.asarray(x0, float)
    try:
        f = residual(x)
    except ValueError:
        return None
    f_max = _max_abs(f)
    for _ in range(max_iter):
        if f_max < tol:
            return x
        jac = np.empty((len(f), len(x)))
        try:
            for k in range(len(x)):
                xk = x.copy()
                xk[k] += step_rad
                jac[:, k] = (residual(xk) - f) / step_rad
            dx = _newton_step(jac, f)
        except (ValueError, np.linalg.LinAlgError):
            return None
        lam = 1.0
        for _ in range(30):
            try:
                fn = residual(x + lam * dx)
                fn_max = _max_abs(fn)
                if fn_max < f_max or lam < 1e-3:
                    break
            except ValueError:
                pass
            lam *= 0.5
        else:
            return None
        x, f, f_max = x + lam * dx, fn, fn_max
    return x if f_max < tol * 1e3 else None


def _max_abs(f: np.ndarray) -> float:
    """Largest absolute component (plain floats: the residuals here have a few components)."""
    return max(abs(v) for v in f.tolist()) if len(f) else 0.0


def _newton_step(jac: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Solve ``jac dx = -f``: closed form for a well-conditioned 2x2, least squares otherwise."""
    if jac.shape == (2, 2):
        (a, b), (c, d) = jac.tolist()
        det = a * d - b * c
        scale = max(abs(a), abs(b), abs(c), abs(d))
        if scale > 0.0 and abs(det) > 1e-10 * scale * scale:
            f0, f1 = f.tolist()
            return np.array([(-f0 * d + f1 * b) / det, (-f1 * a + f0 * c) / det])
    return np.linalg.lstsq(jac, -f, rcond=None)[0]


def face_coating(spec: Spec, role: FaceRole, *, aoi_max_rad: float = 0.0,
                 brewster_ok: bool = False) -> Coating:
    """The coating of a face from ``spec.fabrication.coatings`` and the optics of the face.

    Rules: TIR faces stay uncoated ("internal reflection"); GROUND faces get none; a
    transmitting face that already reflects less than the requested limit uncoated (p light at
    or near Brewster's angle, ``brewster_ok``) stays uncoated ("Brewster"); MIRROR faces get the
    "mirror" entry (default reflectance >= 99.5 %, common practice); other transmitting faces get
    the entry for their role or the default.

    Args:
        spec: the spec (its fabrication.coatings table).
        role: the face role.
        aoi_max_rad: largest chief-ray incidence on the face (unused by the rules, kept for
            coating texts written later).
        brewster_ok: the uncoated face meets the reflectance limit over the band.
    """
    del aoi_max_rad
    if role is FaceRole.GROUND:
        return Coating()
    if role is FaceRole.TIR:
        return Coating(CoatingType.NONE, reason="internal reflection")
    table = dict(spec.fabrication.coatings)
    if role is FaceRole.MIRROR:
        cs = table.get("mirror")
        rmin = cs.reflectance_min_pct if cs and cs.reflectance_min_pct is not None else 99.5
        return Coating(CoatingType.MIRROR, reflectance_min_pct=rmin)
    if brewster_ok:
        return Coating(CoatingType.NONE, reason="Brewster")
    cs = spec.fabrication.coating_for(role.value)
    kind = {"antireflection": CoatingType.ANTIREFLECTION, "mirror": CoatingType.MIRROR,
            "none": CoatingType.NONE}.get(cs.type, CoatingType.ANTIREFLECTION)
    if kind is CoatingType.NONE:
        return Coating(CoatingType.NONE, reason="uncoated by request")
    return Coating(kind, reflectance_max_pct=cs.reflectance_max_pct,
                   reflectance_min_pct=cs.reflectance_min_pct)


def place_section(*, name: str, material: str, vertices_plane: np.ndarray,
                  faces: Sequence[Face], height_mm: float) -> Prism:
    """A ``Prism`` from a CCW section given in plane coordinates.

    Vertex 0 becomes the datum vertex at the part origin and face A (vertex 0 -> 1) lies along
    part +X; the pose puts the section back where it was, centred on y = 0.

    Args:
        name: prism name.
        material: catalogue key.
        vertices_plane: (n, 2) CCW polygon, plane coordinates (z, x), mm.
        faces: one per edge, labels in order.
        height_mm: extent along y.
    """
    v = np.asarray(vertices_plane, float)
    origin = v[0]
    e = v[1] - v[0]
    angle = math.atan2(e[1], e[0])
    c, s = math.cos(angle), math.sin(angle)
    rel = v - origin
    part = [(round_mm(float(c * p[0] + s * p[1])), round_mm(float(-s * p[0] + c * p[1])))
            for p in rel]
    part[0] = (0.0, 0.0)
    part[1] = (part[1][0], 0.0)
    pose = Pose.in_plane(angle_rad=angle, x_mm=float(origin[1]), z_mm=float(origin[0]),
                         height_mm=height_mm)
    return Prism(name, material, tuple(part), tuple(faces), height_mm, pose)


def round_mm(value: float) -> float:
    """Round a coordinate to 1e-9 mm so printed files do not carry float noise."""
    r = round(value, 9)
    return 0.0 if r == 0 else r


def section_in_plane(prism: Prism) -> np.ndarray:
    """The prism's section vertices in plane coordinates (z, x), from its pose."""
    pts = [prism.pose.apply((x, y, 0.0)) for x, y in prism.vertices_mm]
    return np.array([[p[2], p[0]] for p in pts])


def labels(count: int) -> tuple[str, ...]:
    """Face labels A, B, C, ... for ``count`` faces."""
    return tuple(LABELS[i] for i in range(count))


def require(condition: bool, path: str, reason: str, reachable: str | None = None) -> None:
    """Raise ``SolveError(path, reason, reachable=...)`` unless ``condition`` holds."""
    if not condition:
        raise SolveError(path, reason, reachable=reachable)
