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


MIN_VISIBLE_MM = 0.4
"""A bevel narrower than this on paper is not drawn (the note and the callout state it)."""


def has_edge(edges: tuple[tuple[str, str], ...], a: str, b: str) -> bool:
    """True when the edge joining faces ``a`` and ``b`` is listed (either order)."""
    return (a, b) in edges or (b, a) in edges


def vertex_bevel_legs_mm(part: Part) -> tuple[float, ...]:
    """Per section vertex: leg of the bevel on its vertical edge along each face, mm (0 = none).

    A symmetric bevel of face width w on a dihedral θ has legs w / (2 sin(θ/2)) (the same rule
    the solid is built with).
    """
    labels = [f.label for f in part.prism.faces]
    out = []
    for i in range(len(labels)):
        if has_edge(part.bevelled_edges, labels[i - 1], labels[i]) and part.bevel_mm > 0:
            out.append(part.bevel_mm / (2.0 * math.sin(part.prism.interior_angle_rad(i) / 2.0)))
        else:
            out.append(0.0)
    return tuple(out)


def end_bevel_leg_mm(part: Part) -> float:
    """Leg of a bevel between a side face and an end face (90° dihedral), mm."""
    return part.bevel_mm / math.sqrt(2.0)


def _cut_polygon(pts: tuple[P2, ...], legs_paper: tuple[float, ...]) -> tuple[P2, ...]:
    """The section with its bevelled corners cut (legs on paper; too small ones stay sharp)."""
    n = len(pts)
    out: list[P2] = []
    for i in range(n):
        leg = legs_paper[i]
        if leg >= MIN_VISIBLE_MM:
            out += [add(pts[i], mul(unit(sub(pts[i - 1], pts[i])), leg)),
                    add(pts[i], mul(unit(sub(pts[(i + 1) % n], pts[i])), leg))]
        else:
            out.append(pts[i])
    return tuple(out)


def main_outline(part: Part, vf: ViewFrame, placer: Placer) -> tuple[tuple[P2, ...], tuple[Entity, ...]]:
    """The section outline (visible edges, wide), bevels drawn where they show at scale.

    Returns the paper vertices of the sharp section (dimensions refer to its theoretical sharp
    corners) and the entities. Bevels on the vertical edges cut the corners. The bevels on the
    edges to the end faces would show as a line about one bevel inside the outline, on top of
    the clear-aperture lines: the second view shows them instead.
    """
    pts = tuple(vf.main(v) for v in part.prism.vertices_mm)
    legs = tuple(vf.scale * leg for leg in vertex_bevel_legs_mm(part))
    cut = _cut_polygon(pts, legs)
    out: list[Entity] = [Polyline(cut, closed=True, width=Width.WIDE, layer=Layer.OUTLINE)]
    placer.add_path(pts, closed=True)
    placer.add_region(pts)
    return pts, tuple(out)


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
    """The height view: silhouette (wide), vertical prism edges as visible or hidden lines.

    Bevels that show at scale are drawn: the 45° corners of the silhouette where its extreme
    faces meet a bevelled end edge, the lines where the end bevels meet the faces seen from +X,
    and both edges of a bevelled vertical edge.
    """
    h = part.prism.height_mm
    v = part.prism.vertices_mm
    n = len(v)
    ys = [p[1] for p in v]
    y0, y1 = min(ys), max(ys)
    labels = [f.label for f in part.prism.faces]
    end_leg = end_bevel_leg_mm(part)
    show_end = vf.scale * end_leg >= MIN_VISIBLE_MM

    def end_bevel(faces: list[int], end: str) -> float:
        ok = show_end and faces and all(has_edge(part.bevelled_edges, labels[i], end) for i in faces)
        return end_leg if ok else 0.0

    def faces_at(y: float) -> list[int]:  # faces touching the extreme Y of the section
        return sorted({k for i in range(n) if abs(ys[i] - y) < 1e-9 for k in ((i - 1) % n, i)})

    lo, hi = faces_at(y0), faces_at(y1)
    c = {("lo", 0): end_bevel(lo, "BOTTOM"), ("lo", h): end_bevel(lo, "TOP"),
         ("hi", 0): end_bevel(hi, "BOTTOM"), ("hi", h): end_bevel(hi, "TOP")}
    corners = (
        vf.side(0, y0 + c["lo", 0]), *(() if not c["lo", 0] else (vf.side(c["lo", 0], y0),)),
        vf.side(h - c["lo", h], y0), *(() if not c["lo", h] else (vf.side(h, y0 + c["lo", h]),)),
        vf.side(h, y1 - c["hi", h]), *(() if not c["hi", h] else (vf.side(h - c["hi", h], y1),)),
        vf.side(c["hi", 0], y1), *(() if not c["hi", 0] else (vf.side(0, y1 - c["hi", 0]),)),
    )
    out: list[Entity] = [Polyline(corners, closed=True, width=Width.WIDE, layer=Layer.OUTLINE)]
    box = (vf.side(0, y0), vf.side(h, y0), vf.side(h, y1), vf.side(0, y1))
    placer.add_path(box, closed=True)
    placer.add_region(box)
    visible = _visible_from_plus_x(part)
    facing = [perp_cw(unit(sub(v[(i + 1) % n], v[i])))[0] > 1e-9 for i in range(n)]
    for i in range(n):  # end-bevel edges across each face seen from +X
        if not facing[i] or abs(v[(i + 1) % n][1] - v[i][1]) < 1e-9:
            continue
        ya, yb = sorted((v[i][1], v[(i + 1) % n][1]))
        for end, z in (("BOTTOM", end_leg), ("TOP", h - end_leg)):
            if show_end and has_edge(part.bevelled_edges, labels[i], end):
                out.append(Line(vf.side(z, ya), vf.side(z, yb), width=Width.WIDE, layer=Layer.OUTLINE))
    seen: list[float] = [y0, y1]
    legs = vertex_bevel_legs_mm(part)
    edge_ys: list[tuple[float, bool]] = []
    for i in range(n):
        if vf.scale * legs[i] >= MIN_VISIBLE_MM:
            for j in (i - 1, (i + 1) % n):
                y = ys[i] + legs[i] * (ys[j] - ys[i]) / math.dist(v[i], v[j])
                edge_ys.append((y, visible[i]))
        else:
            edge_ys.append((ys[i], visible[i]))
    for y, vis in sorted(edge_ys, key=lambda e: (not e[1], e[0])):
        if any(abs(vf.scale * (y - o)) < 0.25 for o in seen):
            continue  # closer than a line width on paper to a line already drawn
        seen.append(y)
        a, b = vf.side(0, y), vf.side(h, y)
        if vis:
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
