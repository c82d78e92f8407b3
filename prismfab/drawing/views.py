"""The two orthographic views of a prism, computed from its section polygon.

Main view: the principal section seen from +Z (part X to the right, part Y up on paper).
Second view: the part seen from +X (from the right of the main view), showing the height; paper
x runs along -Z, paper y along part Y. First-angle projection places it left of the main view,
third-angle right of it; the view content is the same.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from prismfab.drawing.geom import add, dist, mul, perp_cw, sub, unit
from prismfab.drawing.placer import Placer
from prismfab.drawing.sheet import Entity, Layer, Line, LineType, Polyline, Solid, Width
from prismfab.model import Part

__all__ = ["ViewFrame", "arrowhead", "clip_ray_path", "main_outline", "side_view"]

P2 = tuple[float, float]
ARROW_MM = 2.5
"""Length of a closed filled arrowhead on paper (ISO 129-1 style, 15° to 20° included)."""


@dataclass(frozen=True, slots=True)
class ViewFrame:
    """Where the part lands on paper.

    Args:
        scale: paper mm per model mm.
        origin: paper position of the part-frame origin (main view) or of Z = 0, Y = 0 (side view).
    """

    scale: float
    origin: P2

    def main(self, p: P2) -> P2:
        """Part-frame (X, Y) -> paper, main view."""
        return self.origin[0] + self.scale * p[0], self.origin[1] + self.scale * p[1]

    def side(self, z_mm: float, y_mm: float) -> P2:
        """Part-frame (Z, Y) -> paper, second view seen from +X (paper x along -Z)."""
        return self.origin[0] - self.scale * z_mm, self.origin[1] + self.scale * y_mm


def arrowhead(tip: P2, direction: P2, *, length_mm: float = ARROW_MM, layer: Layer = Layer.DIMENSION
              ) -> Solid:
    """A closed filled arrowhead with its tip at ``tip`` pointing along ``direction``."""
    u = unit(direction)
    base = sub(tip, mul(u, length_mm))
    n = (-u[1], u[0])
    half = length_mm / 6.0
    return Solid((tip, add(base, mul(n, half)), sub(base, mul(n, half))), layer=layer)


def main_outline(part: Part, vf: ViewFrame, placer: Placer) -> tuple[tuple[P2, ...], tuple[Entity, ...]]:
    """The section outline (visible edges, wide). Returns the paper vertices and the entities."""
    pts = tuple(vf.main(v) for v in part.prism.vertices_mm)
    placer.add_path(pts, closed=True)
    placer.add_region(pts)
    return pts, (Polyline(pts, closed=True, width=Width.WIDE, layer=Layer.OUTLINE),)


def clip_ray_path(points: tuple[P2, ...], *, lead_mm: float) -> tuple[P2, ...]:
    """Shorten the outside lead-in and lead-out segments of a paper ray path to ``lead_mm``."""
    if len(points) < 3:
        return points
    pts = list(points)
    if dist(pts[0], pts[1]) > lead_mm:
        pts[0] = add(pts[1], mul(unit(sub(pts[0], pts[1])), lead_mm))
    if dist(pts[-1], pts[-2]) > lead_mm:
        pts[-1] = add(pts[-2], mul(unit(sub(pts[-1], pts[-2])), lead_mm))
    return tuple(pts)


def _visible_from_plus_x(part: Part) -> tuple[bool, ...]:
    """Per vertex: does its vertical edge show as a visible line seen from +X?"""
    v = part.prism.vertices_mm
    n = len(v)
    facing = []
    for i in range(n):
        d = sub(v[(i + 1) % n], v[i])
        facing.append(perp_cw(unit(d))[0] > 1e-9)
    return tuple(facing[i] or facing[i - 1] for i in range(n))


def side_view(part: Part, vf: ViewFrame, placer: Placer) -> tuple[Entity, ...]:
    """The height view: silhouette (wide), vertical prism edges as visible or hidden lines."""
    h = part.prism.height_mm
    ys = [p[1] for p in part.prism.vertices_mm]
    y0, y1 = min(ys), max(ys)
    corners = (vf.side(0, y0), vf.side(h, y0), vf.side(h, y1), vf.side(0, y1))
    out: list[Entity] = [Polyline(corners, closed=True, width=Width.WIDE, layer=Layer.OUTLINE)]
    placer.add_path(corners, closed=True)
    placer.add_region(corners)
    seen: set[float] = {round(y0, 9), round(y1, 9)}
    visible = _visible_from_plus_x(part)
    order = sorted(range(len(ys)), key=lambda i: (not visible[i], ys[i]))
    for i in order:
        key = round(ys[i], 9)
        if key in seen:
            continue
        seen.add(key)
        a, b = vf.side(0, ys[i]), vf.side(h, ys[i])
        if visible[i]:
            out.append(Line(a, b, width=Width.WIDE, layer=Layer.OUTLINE))
        else:
            out.append(Line(a, b, LineType.HIDDEN, Width.NARROW, Layer.HIDDEN))
        placer.add_segment(a, b)
    return tuple(out)


def face_frame(pts: tuple[P2, ...], i: int) -> tuple[P2, P2, P2, float]:
    """Start, unit direction, outward normal and paper length of face ``i``."""
    a, b = pts[i], pts[(i + 1) % len(pts)]
    u = unit(sub(b, a))
    return a, u, perp_cw(u), dist(a, b)


def interior_angle_deg(pts: tuple[P2, ...], i: int) -> float:
    """Interior angle at vertex ``i`` of a counter-clockwise polygon, degrees."""
    n = len(pts)
    a = sub(pts[i - 1], pts[i])
    b = sub(pts[(i + 1) % n], pts[i])
    return math.degrees((math.atan2(a[1], a[0]) - math.atan2(b[1], b[0])) % (2 * math.pi))
