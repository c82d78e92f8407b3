"""Where sheet entities lie on paper: bounding boxes, text boxes, and translation.

The layout uses these to choose the drawing scale (views with everything attached to them must
fit the view area), to place the views, and the tests use them to read a drawing as a shop would
(no text over lines, nothing off the sheet).
"""

from __future__ import annotations

import math
from dataclasses import replace

from prismfab.drawing.geom import Rect, text_width_mm
from prismfab.drawing.sheet import (
    LINE_PITCH, AlignedDim, AngularDim, Arc, Circle, Entity, Leader, Line, LinearDim, Polyline,
    Solid, Table, Text,
)

__all__ = ["bbox", "entity_points", "text_boxes", "translate", "union"]

P2 = tuple[float, float]
EXT_BEYOND_MM = 2.0


def _rotated_box(centre: P2, w: float, h: float, rot_deg: float) -> Rect:
    c, s = math.cos(math.radians(rot_deg)), math.sin(math.radians(rot_deg))
    pts = [(centre[0] + c * x - s * y, centre[1] + s * x + c * y)
           for x, y in ((-w / 2, -h / 2), (w / 2, -h / 2), (w / 2, h / 2), (-w / 2, h / 2))]
    xs, ys = [p[0] for p in pts], [p[1] for p in pts]
    return min(xs), min(ys), max(xs), max(ys)


def _text_box(t: Text) -> Rect:
    w = text_width_mm(t.text, t.height_mm, t.bold)
    dx = {"left": w / 2, "center": 0.0, "right": -w / 2}[t.h_align]
    dy = {"bottom": t.height_mm / 2, "middle": 0.0, "top": -t.height_mm / 2}[t.v_align]
    c, s = math.cos(math.radians(t.rotation_deg)), math.sin(math.radians(t.rotation_deg))
    centre = (t.position[0] + c * dx - s * dy, t.position[1] + s * dx + c * dy)
    return _rotated_box(centre, w, t.height_mm, t.rotation_deg)


def text_boxes(e: Entity, dim_text_h: float) -> tuple[Rect, ...]:
    """Boxes of the text an entity shows (paper mm; rotated text by its axis-aligned hull)."""
    if isinstance(e, Text):
        return (_text_box(e),)
    if isinstance(e, LinearDim | AlignedDim):
        w = text_width_mm(e.text, dim_text_h)
        return (_rotated_box(e.text_pos, w, dim_text_h, e.text_rotation_deg),)
    if isinstance(e, AngularDim):
        return (_rotated_box(e.text_pos, text_width_mm(e.text, dim_text_h), dim_text_h, 0.0),)
    if isinstance(e, Leader) and e.lines:
        w = max(text_width_mm(s, e.height_mm) for s in e.lines)
        h = e.height_mm + (len(e.lines) - 1) * LINE_PITCH * e.height_mm
        x, top = e.text_pos
        x0 = x if e.h_align == "left" else x - w
        return ((x0, top - h - 0.3 * e.height_mm, x0 + w, top),)
    return ()


def entity_points(e: Entity) -> tuple[P2, ...]:
    """Points whose hull covers the line work of an entity (arcs sampled)."""
    if isinstance(e, Line):
        return (e.start, e.end)
    if isinstance(e, Polyline | Solid):
        return e.points
    if isinstance(e, Circle):
        x, y, r = e.centre[0], e.centre[1], e.radius_mm
        return ((x - r, y - r), (x + r, y + r))
    if isinstance(e, Arc):
        sweep = (e.end_deg - e.start_deg) % 360.0
        return tuple((e.centre[0] + e.radius_mm * math.cos(math.radians(e.start_deg + sweep * k / 16)),
                      e.centre[1] + e.radius_mm * math.sin(math.radians(e.start_deg + sweep * k / 16)))
                     for k in range(17))
    if isinstance(e, LinearDim | AlignedDim):
        a, b = e.dim_line()
        out = [e.p1, e.p2]
        for p, d in ((e.p1, a), (e.p2, b)):
            v = (d[0] - p[0], d[1] - p[1])
            n = math.hypot(*v)
            out.append(d if n < 1e-9 else (d[0] + v[0] / n * EXT_BEYOND_MM, d[1] + v[1] / n * EXT_BEYOND_MM))
        return tuple(out)
    if isinstance(e, AngularDim):
        a1, a2 = (math.radians(a) for a in e.arc_deg())
        sweep = (a2 - a1) % (2 * math.pi)
        r = e.radius_mm + EXT_BEYOND_MM
        return (e.vertex, e.p1, e.p2, *((e.vertex[0] + r * math.cos(a1 + sweep * k / 12),
                                         e.vertex[1] + r * math.sin(a1 + sweep * k / 12))
                                        for k in range(13)))
    if isinstance(e, Leader):
        return e.points
    if isinstance(e, Table):
        return tuple(p for c in e.cells for p in ((c.x, c.y), (c.x + c.w, c.y + c.h)))
    return ()


def union(boxes: list[Rect] | tuple[Rect, ...]) -> Rect | None:
    """Smallest box holding all boxes; None for none."""
    if not boxes:
        return None
    return (min(b[0] for b in boxes), min(b[1] for b in boxes), max(b[2] for b in boxes),
            max(b[3] for b in boxes))


def bbox(entities: list[Entity] | tuple[Entity, ...], dim_text_h: float) -> Rect | None:
    """Bounding box of entities with their text (paper mm)."""
    boxes: list[Rect] = []
    for e in entities:
        pts = entity_points(e)
        if pts:
            boxes.append((min(p[0] for p in pts), min(p[1] for p in pts), max(p[0] for p in pts),
                          max(p[1] for p in pts)))
        boxes += text_boxes(e, dim_text_h)
    return union(boxes)


def _mv(p: P2, dx: float, dy: float) -> P2:
    return p[0] + dx, p[1] + dy


def translate(e: Entity, dx: float, dy: float) -> Entity:
    """The entity moved by (dx, dy) paper mm."""
    if isinstance(e, Line):
        return replace(e, start=_mv(e.start, dx, dy), end=_mv(e.end, dx, dy))
    if isinstance(e, Polyline | Solid):
        return replace(e, points=tuple(_mv(p, dx, dy) for p in e.points))
    if isinstance(e, Arc | Circle):
        return replace(e, centre=_mv(e.centre, dx, dy))
    if isinstance(e, Text):
        return replace(e, position=_mv(e.position, dx, dy))
    if isinstance(e, LinearDim):
        return replace(e, p1=_mv(e.p1, dx, dy), p2=_mv(e.p2, dx, dy), base=_mv(e.base, dx, dy),
                       text_pos=_mv(e.text_pos, dx, dy))
    if isinstance(e, AlignedDim):
        return replace(e, p1=_mv(e.p1, dx, dy), p2=_mv(e.p2, dx, dy), text_pos=_mv(e.text_pos, dx, dy))
    if isinstance(e, AngularDim):
        return replace(e, vertex=_mv(e.vertex, dx, dy), p1=_mv(e.p1, dx, dy), p2=_mv(e.p2, dx, dy),
                       text_pos=_mv(e.text_pos, dx, dy))
    if isinstance(e, Leader):
        return replace(e, points=tuple(_mv(p, dx, dy) for p in e.points),
                       text_pos=_mv(e.text_pos, dx, dy))
    if isinstance(e, Table):
        return replace(e, cells=tuple(replace(c, x=c.x + dx, y=c.y + dy) for c in e.cells))
    raise TypeError(f"cannot move {type(e).__name__}")
