"""Plane geometry of the beam plane: directions, interface laws and section polygons.

Plane coordinates are ``(z_mm, x_mm)`` in the beam plane (system x-z plane, y = 0); a direction
is an angle ``theta`` (rad) from +z towards +x (the conventions of ``design.common``). A CCW
polygon's edge i runs from vertex i to vertex i+1, its outward normal is the edge direction
turned clockwise.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from prismfab.model import Polarization

__all__ = [
    "angle_of",
    "edge_normal",
    "fresnel_r",
    "is_convex_ccw",
    "line_intersection",
    "polygon_from_angles",
    "polygon_from_lines",
    "polygons_overlap",
    "reflect",
    "refract",
    "unit",
]


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
