"""Exact 2D ray trace through placed prism sections in the beam plane (non-sequential).

Rays start outside every section in plane coordinates ``(z_mm, x_mm)`` and meet the faces
exactly: optical faces refract (or reflect totally), MIRROR faces reflect, GROUND faces stop
the ray. Edge data (``section_edges``) can be computed once and shared by many rays.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from prismfab.model import FaceRole

__all__ = [
    "Hit",
    "PlanePath",
    "Section",
    "resume_plane",
    "section_edges",
    "trace_plane",
    "trace_plane_edges",
]

_EPS_MM = 1e-9


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
