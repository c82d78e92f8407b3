"""The last pass over a laid-out view: text that collides with text or with the part outline.

Every dimension, angle, letter and callout of a view is placed one after another, each clear of
what was placed before it; a later one can still land on an earlier one. This pass reads the
finished view as a shop would (text boxes as oriented rectangles, paper mm) and moves the
movable text: a length's text along its dimension line, an angle's text outward from its vertex
with the arc extended under it. Face letters, datum boxes, tolerance frames and leader texts
stay put. What cannot be cleared is counted, and the layout treats a view with a collision as
one that does not fit (a smaller scale or a larger sheet is tried).
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field, replace

from prismfab.drawing.extent import bbox, text_boxes
from prismfab.drawing.geom import Rect, box_hits_segment, run_on, text_width_mm
from prismfab.drawing.placer import segments_cross
from prismfab.drawing.sheet import (
    AlignedDim, AngularDim, Circle, Entity, Layer, Leader, Line, LinearDim, Polyline, Text, Width,
)

__all__ = ["Box", "collisions", "resolve"]

P2 = tuple[float, float]
CLEAR_MM = 0.4  # free paper a moved text keeps from other text
STEP_MM = 0.5  # trial step along a dimension line or outward from an angle's vertex
SLIDE_BEYOND_MM = 4.0  # how far past a dimension line's end its text's near edge may go
ANGLE_REACH_MM = 24.0  # how far outward an angle's text may move
EPS = 1e-6
INK_H = 1.3  # ink height of a text line / its character (cap) height: brackets, descenders
INK_MM = Width.WIDE.value / 2  # a wide line's ink reaches this far either side of its axis


@dataclass(frozen=True, slots=True)
class Box:
    """An oriented text rectangle: centre, half width and height (paper mm), turn (degrees)."""

    centre: P2
    half_w: float
    half_h: float
    rot_deg: float = 0.0
    _axes: tuple[P2, P2] = field(init=False, repr=False, compare=False)
    _hull: tuple[float, float, float, float] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        # The collision pass asks every box for its axes and hull many thousand times.
        c, s = math.cos(math.radians(self.rot_deg)), math.sin(math.radians(self.rot_deg))
        object.__setattr__(self, "_axes", ((c, s), (-s, c)))
        ac, as_ = abs(c), abs(s)
        hx, hy = ac * self.half_w + as_ * self.half_h, as_ * self.half_w + ac * self.half_h
        object.__setattr__(self, "_hull", (self.centre[0] - hx, self.centre[1] - hy,
                                           self.centre[0] + hx, self.centre[1] + hy))

    def grown(self, pad_mm: float) -> Box:
        return replace(self, half_w=self.half_w + pad_mm, half_h=self.half_h + pad_mm)

    def axes(self) -> tuple[P2, P2]:
        return self._axes

    def corners(self) -> tuple[P2, ...]:
        (ux, uy), (vx, vy) = self.axes()
        x, y = self.centre
        return tuple((x + a * ux * self.half_w + b * vx * self.half_h,
                      y + a * uy * self.half_w + b * vy * self.half_h)
                     for a, b in ((-1, -1), (1, -1), (1, 1), (-1, 1)))

    def hull(self) -> tuple[float, float, float, float]:
        """The axis-aligned box around the rectangle."""
        return self._hull

    def local(self, p: P2) -> P2:
        (ux, uy), (vx, vy) = self.axes()
        dx, dy = p[0] - self.centre[0], p[1] - self.centre[1]
        return dx * ux + dy * uy, dx * vx + dy * vy


def boxes_overlap(a: Box, b: Box) -> bool:
    """True when the two rectangles share area (separating axis test; touching is apart)."""
    ha, hb = a.hull(), b.hull()
    if (ha[0] >= hb[2] - EPS or hb[0] >= ha[2] - EPS or ha[1] >= hb[3] - EPS
            or hb[1] >= ha[3] - EPS):
        return False
    if a.rot_deg == 0.0 and b.rot_deg == 0.0:
        return True  # axis-aligned: the hulls are the boxes
    for axis in (*a.axes(), *b.axes()):
        pa = [c[0] * axis[0] + c[1] * axis[1] for c in a.corners()]
        pb = [c[0] * axis[0] + c[1] * axis[1] for c in b.corners()]
        if min(pa) >= max(pb) - EPS or min(pb) >= max(pa) - EPS:
            return False
    return True


def box_hits(box: Box, p: P2, q: P2) -> bool:
    """True when segment p-q runs through the rectangle (not merely touching its edge)."""
    x0, y0, x1, y1 = box.hull()
    if (max(p[0], q[0]) <= x0 + EPS or min(p[0], q[0]) >= x1 - EPS
            or max(p[1], q[1]) <= y0 + EPS or min(p[1], q[1]) >= y1 - EPS):
        return False
    w, h = box.half_w - EPS, box.half_h - EPS
    return box_hits_segment((-w, -h, w, h), box.local(p), box.local(q))


@dataclass(frozen=True, slots=True)
class _Item:
    """A text box of the view: the entity index, whether the pass may move it, and whether it
    is a callout (leader text, tolerance frame) that a moved arc may cross as a last resort."""

    index: int
    box: Box
    movable: bool
    callout: bool = False


def _dim_box(e: AlignedDim | LinearDim, text_h: float) -> Box:
    return Box(e.text_pos, text_width_mm(e.text, text_h) / 2, INK_H * text_h / 2,
               e.text_rotation_deg)


def _angle_box(e: AngularDim, text_h: float) -> Box:
    return Box(e.text_pos, text_width_mm(e.text, text_h) / 2, INK_H * text_h / 2)


def _aabb(r: tuple[float, float, float, float]) -> Box:
    return Box(((r[0] + r[2]) / 2, (r[1] + r[3]) / 2), (r[2] - r[0]) / 2, (r[3] - r[1]) / 2)


def _frame_box(e: Polyline) -> Box | None:
    """A closed axis-aligned four-corner polyline (datum letter box, tolerance frame cell)."""
    if not (e.closed and len(e.points) == 4):
        return None
    xs, ys = [p[0] for p in e.points], [p[1] for p in e.points]
    r = (min(xs), min(ys), max(xs), max(ys))
    if any(min(abs(p[0] - r[0]), abs(p[0] - r[2])) > EPS
           or min(abs(p[1] - r[1]), abs(p[1] - r[3])) > EPS for p in e.points):
        return None
    return _aabb(r)


def _items(ents: Sequence[Entity], text_h: float) -> list[_Item]:
    """Every text box of a view: dimension and angle texts, letters, datum boxes, callouts."""
    out: list[_Item] = []
    holders: list[Box] = []
    for i, e in enumerate(ents):
        if isinstance(e, AlignedDim | LinearDim):
            out.append(_Item(i, _dim_box(e, text_h), True))
        elif isinstance(e, AngularDim):
            out.append(_Item(i, _angle_box(e, text_h), True))
        elif isinstance(e, Leader) and e.lines:
            out.append(_Item(i, _aabb(text_boxes(e, text_h)[0]), False, True))
        elif isinstance(e, Circle) and e.layer is Layer.ANNOTATION:
            box = Box(e.centre, e.radius_mm, e.radius_mm)
            holders.append(box)
            out.append(_Item(i, box, False))
        elif isinstance(e, Polyline) and e.layer is Layer.ANNOTATION:
            frame = _frame_box(e)
            if frame is not None:
                holders.append(frame)
                out.append(_Item(i, frame, False))
    frames = [it for it in out if isinstance(ents[it.index], Polyline)]
    cells = {it.index for it in frames for o in frames
             if o is not it and _share_edge(it.box, o.box)}
    out = [replace(it, callout=True) if it.index in cells else it for it in out]
    for i, e in enumerate(ents):  # loose text, unless it is the letter inside a circle or box
        if isinstance(e, Text):
            box = _aabb(text_boxes(e, text_h)[0])
            if not any(abs(h.local(box.centre)[0]) < h.half_w
                       and abs(h.local(box.centre)[1]) < h.half_h for h in holders):
                out.append(_Item(i, box, False))
    return out


def _share_edge(a: Box, b: Box) -> bool:
    """Two axis-aligned boxes side by side (the cells of one tolerance frame)."""
    (ax, ay), (bx, by) = a.centre, b.centre
    return (abs(abs(ax - bx) - (a.half_w + b.half_w)) < 1e-6
            and abs(ay - by) < 1e-6 and abs(a.half_h - b.half_h) < 1e-6)


def _segments(e: Entity, text_h: float = 0.0) -> Iterator[tuple[P2, P2]]:
    """The straight pieces of an entity's line work (arcs as chords); with the dimension text
    height ``text_h``, a dimension line's run-on under text beyond its ends too."""
    if isinstance(e, Line):
        yield e.start, e.end
    elif isinstance(e, Polyline):
        pts = list(e.points) + ([e.points[0]] if e.closed else [])
        yield from zip(pts, pts[1:], strict=False)
    elif isinstance(e, Leader):
        yield from zip(e.points, e.points[1:], strict=False)
    elif isinstance(e, AlignedDim | LinearDim):
        a, b = e.dim_line()
        yield a, b
        more = run_on(a, b, e.text_pos, text_width_mm(e.text, text_h) / 2) if text_h else None
        if more is not None:
            yield more
        yield from _extensions(e)
    elif isinstance(e, AngularDim):
        yield from _arc_pieces(e)


def _extensions(e: AlignedDim | LinearDim) -> Iterator[tuple[P2, P2]]:
    from prismfab.drawing.dims import EXT_BEYOND_MM, EXT_OFFSET_MM

    for p, d in zip((e.p1, e.p2), e.dim_line(), strict=True):
        n = math.hypot(d[0] - p[0], d[1] - p[1])
        if n > EPS:
            u = ((d[0] - p[0]) / n, (d[1] - p[1]) / n)
            yield ((p[0] + u[0] * EXT_OFFSET_MM, p[1] + u[1] * EXT_OFFSET_MM),
                   (d[0] + u[0] * EXT_BEYOND_MM, d[1] + u[1] * EXT_BEYOND_MM))


def _arc_pieces(e: AngularDim) -> Iterator[tuple[P2, P2]]:
    a1, a2 = (math.radians(a) for a in e.arc_deg())
    sweep = (a2 - a1) % (2 * math.pi)
    pts = [(e.vertex[0] + e.radius_mm * math.cos(a1 + sweep * k / 16),
            e.vertex[1] + e.radius_mm * math.sin(a1 + sweep * k / 16)) for k in range(17)]
    yield from zip(pts, pts[1:], strict=False)
    for p, a in ((e.p1, a1), (e.p2, a2)):  # legs shorter than the radius: extension lines
        dp = math.hypot(p[0] - e.vertex[0], p[1] - e.vertex[1])
        if dp < e.radius_mm:
            u = (math.cos(a), math.sin(a))
            far = e.radius_mm + 2.0
            yield ((e.vertex[0] + u[0] * (dp + 1.0), e.vertex[1] + u[1] * (dp + 1.0)),
                   (e.vertex[0] + u[0] * far, e.vertex[1] + u[1] * far))


HARD = (Layer.OUTLINE, Layer.APERTURE)
"""Lines of the part itself: its outline and its clear-aperture lines, which text never crosses."""


def _outline(ents: Sequence[Entity]) -> list[tuple[P2, P2]]:
    return [s for e in ents if getattr(e, "layer", None) in HARD for s in _segments(e)]


def collisions(ents: Sequence[Entity], text_h: float) -> list[str]:
    """Text boxes of a view that overlap each other or cross the part outline (or a clear
    aperture line), described.

    Args:
        ents: the entities of one or both views (paper mm).
        text_h: the dimension text height (paper mm).
    """
    items = _items(ents, text_h)
    outline = _outline(ents)
    out = []
    for k, a in enumerate(items):
        for b in items[k + 1:]:
            if boxes_overlap(a.box, b.box):
                out.append(f"{_name(ents[a.index])} overlaps {_name(ents[b.index])}")
        if any(box_hits(a.box.grown(INK_MM), p, q) for p, q in outline):
            out.append(f"{_name(ents[a.index])} crosses the outline")
    return out


def _name(e: Entity) -> str:
    text = getattr(e, "text", None) or " / ".join(getattr(e, "lines", ())) or type(e).__name__
    return f"{type(e).__name__} {text!r}"


def resolve(ents: Sequence[Entity], text_h: float, *, limit: Rect | None = None
            ) -> tuple[list[Entity], int]:
    """The view with colliding dimension and angle texts moved to free paper.

    Texts are visited in drawing order, angles first (an angle's text may move farther without
    losing its dimension); each one that overlaps text, crosses the outline or sits on another
    line moves to the nearest spot that is clear of all of those, else to the nearest clear of
    text and outline only. Returns the view and the number of collisions left
    (``collisions``), which the layout counts as not fitting.

    Args:
        ents: the entities of one view (paper mm).
        text_h: the dimension text height (paper mm).
        limit: where a moved dimension (text, arc) must stay, e.g. the room left on the sheet;
            None for anywhere.
    """
    out = list(ents)
    outline = _outline(out)
    section = [s for e in out if getattr(e, "layer", None) is Layer.OUTLINE for s in _segments(e)]
    movable = [it for it in _items(out, text_h) if it.movable]
    order = sorted((it.index for it in movable),
                   key=lambda i: (not isinstance(out[i], AngularDim), i))
    for _ in range(3):
        moved = False
        for i in order:
            items = _items(out, text_h)
            box = next(it.box for it in items if it.index == i)
            others = [it.box.grown(CLEAR_MM) for it in items if it.index != i]
            solid = [it.box for it in items if it.index != i and not it.callout]
            lines = [s for j, e in enumerate(out) if j != i
                     and getattr(e, "layer", None) not in HARD for s in _segments(e, text_h)]
            if isinstance(out[i], AlignedDim | LinearDim):
                lines += list(_extensions(out[i]))  # type: ignore[arg-type]
            elif isinstance(out[i], AngularDim):
                lines += list(_arc_pieces(out[i]))  # its own arc, unless it has to move
            bare = [it.box for it in items if it.index != i]
            if _clear(box, bare, outline, lines, pad=INK_MM):  # moved only when it collides
                continue
            loose = not _clear(box, bare, outline, None, pad=INK_MM)  # else only a line to leave
            new = _move(out[i], text_h, others, outline, lines, section=section, solid=solid,
                        loose=loose, limit=limit)
            if new is not None:
                out[i] = new
                moved = True
        if not moved:
            break
    return out, len(collisions(out, text_h))


def _clear(box: Box, others: list[Box], outline: list[tuple[P2, P2]],
           lines: list[tuple[P2, P2]] | None, *, pad: float = CLEAR_MM) -> bool:
    """The box clear of other text, and ``pad`` clear of the part's lines and of ``lines``."""
    padded = box.grown(pad)
    hull = padded.hull()
    if any(box_hits(padded, p, q) for p, q in _near(outline, hull)):
        return False
    if any(boxes_overlap(box, o) for o in others):
        return False
    return lines is None or not any(box_hits(padded, p, q) for p, q in _near(lines, hull))


def _segments_hull(segments: list[tuple[P2, P2]]) -> tuple[float, float, float, float]:
    xs = [c[0] for seg in segments for c in seg]
    ys = [c[1] for seg in segments for c in seg]
    return min(xs), min(ys), max(xs), max(ys)


def _near(segments: list[tuple[P2, P2]], hull: tuple[float, float, float, float]
          ) -> list[tuple[P2, P2]]:
    """The segments whose bounding box meets ``hull`` (a cheap filter before exact tests)."""
    x0, y0, x1, y1 = hull
    return [(p, q) for p, q in segments
            if not (max(p[0], q[0]) < x0 or min(p[0], q[0]) > x1
                    or max(p[1], q[1]) < y0 or min(p[1], q[1]) > y1)]


def _move(e: Entity, text_h: float, others: list[Box], outline: list[tuple[P2, P2]],
          lines: list[tuple[P2, P2]], *, section: list[tuple[P2, P2]], solid: list[Box],
          loose: bool, limit: Rect | None) -> Entity | None:
    """The entity with its text at the nearest clear trial spot, or None.

    First the nearest spot clear of text, outline and lines, a moved arc crossing no line nor
    text; with ``loose``, else the spot clear of text and outline that sits on the fewest lines
    (nearest first), a moved arc crossing no text but callouts (``solid`` holds the other text
    boxes).
    """
    trials = list(_angle_trials(e, text_h, section) if isinstance(e, AngularDim)
                  else _slide_trials(e, text_h))

    def fits(cand: Entity, box: Box, strict: bool) -> bool:
        if not _clear(box, others, outline, lines if strict else None):
            return False
        own = _own_lines(cand, text_h)
        if any(box_hits(o, p, q) for o in (others if strict else solid) for p, q in own):
            return False
        if isinstance(cand, AngularDim) and any(
                box_hits(box.grown(CLEAR_MM if strict else INK_MM), p, q)
                for p, q in _arc_pieces(cand)):
            return False  # the text stands clear of its own arc
        if strict and own and any(segments_cross(a, b, p, q)
                                  for p, q in _near(lines, _segments_hull(own)) for a, b in own):
            return False
        return limit is None or _within(bbox([cand], text_h), limit)

    for cand, box in trials:
        if fits(cand, box, True):
            return cand
    if not loose:
        return None
    best: tuple[int, Entity] | None = None
    for cand, box in trials:
        if (best is None or best[0] > 0) and fits(cand, box, False):
            padded = box.grown(CLEAR_MM)
            hits = sum(box_hits(padded, p, q) for p, q in lines)
            if best is None or hits < best[0]:
                best = (hits, cand)
    return None if best is None else best[1]


def _own_lines(e: Entity, text_h: float) -> list[tuple[P2, P2]]:
    """The lines a move draws anew: an angle's arc and legs, a dimension line's run-on."""
    if isinstance(e, AngularDim):
        return list(_segments(e))
    if isinstance(e, AlignedDim | LinearDim):
        a, b = e.dim_line()
        more = run_on(a, b, e.text_pos, text_width_mm(e.text, text_h) / 2)
        return [] if more is None else [more]
    return []


def _within(box: Rect | None, limit: Rect) -> bool:
    return box is not None and (box[0] >= limit[0] and box[1] >= limit[1] and box[2] <= limit[2]
                                and box[3] <= limit[3])


def _slide_trials(e: Entity, text_h: float) -> Iterator[tuple[Entity, Box]]:
    """The dimension with its text slid along its line, nearest first (both ways)."""
    assert isinstance(e, AlignedDim | LinearDim)
    a, b = e.dim_line()
    length = math.hypot(b[0] - a[0], b[1] - a[1])
    reach = (length + text_width_mm(e.text, text_h)) / 2 + SLIDE_BEYOND_MM
    rot = math.radians(e.text_rotation_deg)
    u = (math.cos(rot), math.sin(rot))
    for k in range(1, int(reach / STEP_MM) + 1):
        for sign in (1.0, -1.0):
            s = sign * k * STEP_MM
            moved = replace(e, text_pos=(e.text_pos[0] + u[0] * s, e.text_pos[1] + u[1] * s))
            yield moved, _dim_box(moved, text_h)


def _angle_trials(e: AngularDim, text_h: float, outline: Sequence[tuple[P2, P2]] = ()
                  ) -> Iterator[tuple[Entity, Box]]:
    """The angle with its text moved outward, nearest first.

    An angle on the extended legs (outside the section) grows its arc step by step, the text
    standing just beyond the arc on a direction within the sector (its own first, then the
    bisector and fanned either side). An angle inside the section keeps its arc (its legs are
    the faces) and moves its text farther in, on the same directions, while it stays inside;
    then it is tried on the extended legs (the vertically opposite, equal angle).
    """
    d = (e.text_pos[0] - e.vertex[0], e.text_pos[1] - e.vertex[1])
    n = math.hypot(*d)
    if n < EPS:
        return
    own = (d[0] / n, d[1] / n)
    if math.hypot(e.p1[0] - e.vertex[0], e.p1[1] - e.vertex[1]) <= e.radius_mm:
        yield from _outside_trials(e, own, text_h)
        return
    dirs = _sector_dirs(e, own)
    half_w = text_width_mm(e.text, text_h) / 2
    for k in range(int(ANGLE_REACH_MM / STEP_MM) + 1):  # farther in, the arc unchanged
        for u in dirs:
            reach = abs(u[0]) * half_w + abs(u[1]) * text_h / 2
            t = e.radius_mm + 1.0 + reach + k * STEP_MM
            pos = (e.vertex[0] + u[0] * t, e.vertex[1] + u[1] * t)
            if any(segments_cross(e.text_pos, pos, p, q) for p, q in outline):
                continue  # the text would leave the section
            moved = replace(e, text_pos=pos)
            yield moved, _angle_box(moved, text_h)
    e1, e2 = (_unit(e.vertex, e.p1), _unit(e.vertex, e.p2))
    flipped = replace(e, p1=(e.vertex[0] - 0.3 * e1[0], e.vertex[1] - 0.3 * e1[1]),
                      p2=(e.vertex[0] - 0.3 * e2[0], e.vertex[1] - 0.3 * e2[1]))
    yield from _outside_trials(flipped, (-own[0], -own[1]), text_h)


def _unit(a: P2, b: P2) -> P2:
    n = math.hypot(b[0] - a[0], b[1] - a[1])
    return (b[0] - a[0]) / n, (b[1] - a[1]) / n


def _sector_dirs(e: AngularDim, own: P2) -> list[P2]:
    """Text directions from the vertex: the text's own, then the bisector and fanned out."""
    a1, a2 = (math.radians(a) for a in e.arc_deg())
    sweep = (a2 - a1) % (2 * math.pi)
    return [own] + [(math.cos(a1 + f * sweep), math.sin(a1 + f * sweep))
                    for f in (0.5, 0.4, 0.6, 0.3, 0.7, 0.2, 0.8)]


def _outside_trials(e: AngularDim, own: P2, text_h: float) -> Iterator[tuple[Entity, Box]]:
    """An angle on extended legs with its arc grown and its text just beyond the arc."""
    half_w = text_width_mm(e.text, text_h) / 2
    dirs = _sector_dirs(e, own)
    for k in range(int(ANGLE_REACH_MM / STEP_MM) + 1):
        radius = e.radius_mm + k * STEP_MM
        for u in dirs:
            reach = abs(u[0]) * half_w + abs(u[1]) * text_h / 2  # box centre to its edge along u
            t = radius + 1.0 + reach
            moved = replace(e, text_pos=(e.vertex[0] + u[0] * t, e.vertex[1] + u[1] * t),
                            radius_mm=radius)
            yield moved, _angle_box(moved, text_h)
