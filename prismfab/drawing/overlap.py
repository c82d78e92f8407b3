"""The last pass over a laid-out view: text that collides with text or with the part outline.

Every dimension, angle, letter and callout of a view is placed one after another, each clear of
what was placed before it; a later one can still land on an earlier one. This pass reads the
finished view as a shop would (text boxes as oriented rectangles, paper mm) and moves the
movable text: a length's text along its dimension line, an angle's text outward from its vertex
with the arc extended under it. Face letters, datum boxes, tolerance frames and leader texts
stay put. What cannot be cleared is counted, and the layout treats a view with a collision as
one that does not fit (a smaller scale or a larger sheet is tried). The text boxes and line
pieces are read in ``textbox``; the trial spots and the search among them are in ``spots``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

from prismfab.drawing.extent import text_boxes
from prismfab.drawing.geom import Rect, dist_to_segment, text_width_mm
from prismfab.drawing.sheet import (
    AlignedDim, AngularDim, Circle, Entity, Layer, Leader, LinearDim, Polyline, Text,
)
from prismfab.drawing.spots import ANGLE_REACH_MM, SLIDE_BEYOND_MM, STEP_MM, move, within
from prismfab.drawing.textbox import (
    CLEAR_MM, EPS, HARD, INK_H, INK_MM, Box, angle_box, any_through, arc_pieces, box_hits,
    boxes_overlap, clear, dim_box, extensions, footprint, misread, outline_pieces, own_lines, segments,
    segments_near, text_box,
)

__all__ = ["Box", "collisions", "footprint", "resolve", "text_items", "thin_lines"]

P2 = tuple[float, float]


@dataclass(frozen=True, slots=True)
class _Item:
    """A text box of the view: the entity index, whether the pass may move it, and whether it
    is a callout (leader text, tolerance frame) that a moved arc may cross as a last resort."""

    index: int
    box: Box
    movable: bool
    callout: bool = False


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
            out.append(_Item(i, dim_box(e, text_h), True))
        elif isinstance(e, AngularDim):
            out.append(_Item(i, angle_box(e, text_h), True))
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


def collisions(ents: Sequence[Entity], text_h: float) -> list[str]:
    """Text boxes of a view that overlap each other, cross the part outline (or a clear
    aperture line) or are crossed by a thin line of another entity, described.

    Thin lines are dimension, extension and construction lines, arcs, leaders and the ray path;
    an entity's own lines do not count against its own text (a dimension's text stands on its
    own dimension line), except a dimension's own extension lines (ISO 129-1: the value stands
    between them or beyond one, never across one).

    Args:
        ents: the entities of one or both views (paper mm).
        text_h: the dimension text height (paper mm).
    """
    items = _items(ents, text_h)
    outline = outline_pieces(ents)
    thin = _thin_pieces(ents, text_h, items)
    out = []
    for k, a in enumerate(items):
        for b in items[k + 1:]:
            if boxes_overlap(a.box, b.box):
                out.append(f"{_name(ents[a.index])} overlaps {_name(ents[b.index])}")
        if any(box_hits(a.box.grown(INK_MM), p, q) for p, q in outline):
            out.append(f"{_name(ents[a.index])} crosses the outline")
        for j in sorted({j for j, p, q in _near_pieces(thin, a.box.hull())
                         if j != a.index and _item_hit(ents[a.index], a.box, p, q)}):
            out.append(f"{_name(ents[j])} runs through {_name(ents[a.index])}")
        own = ents[a.index]
        if isinstance(own, AlignedDim | LinearDim) and any_through([a.box], list(extensions(own))):
            out.append(f"{_name(own)} is crossed by its own extension line")
    return out


def text_items(ents: Sequence[Entity], text_h: float) -> list[tuple[int, Box]]:
    """Every text box of a view (dimension and angle texts, letters, datum boxes, callouts)
    with the index of the entity it belongs to."""
    return [(it.index, it.box) for it in _items(ents, text_h)]


def thin_lines(ents: Sequence[Entity], text_h: float) -> list[tuple[int, P2, P2]]:
    """Every thin line piece of a view (not the part's lines, not text frames) with the index
    of the entity that draws it."""
    return [(j, p, q) for j, p, q, _ in _thin_pieces(ents, text_h, _items(ents, text_h))]


Piece = tuple[int, P2, P2, tuple[float, float, float, float]]
"""A thin line piece: the index of the entity that draws it, its ends, its bounding box."""


def _thin_pieces(ents: Sequence[Entity], text_h: float, items: Sequence[_Item]) -> list[Piece]:
    """Every thin line piece of the view (not the part's lines, not the edges of boxes that are
    text items themselves: those count as box overlaps)."""
    boxed = {it.index for it in items if isinstance(ents[it.index], Polyline)}
    out: list[Piece] = []
    for j, e in enumerate(ents):
        if getattr(e, "layer", None) in HARD or j in boxed:
            continue
        for p, q in segments(e, text_h):
            out.append((j, p, q, (min(p[0], q[0]), min(p[1], q[1]), max(p[0], q[0]),
                                  max(p[1], q[1]))))
    return out


def _near_pieces(pieces: Sequence[Piece], hull: tuple[float, float, float, float]
                 ) -> list[tuple[int, P2, P2]]:
    """The pieces whose bounding box meets ``hull`` (a cheap filter before exact tests)."""
    x0, y0, x1, y1 = hull
    return [(j, p, q) for j, p, q, r in pieces
            if not (r[2] < x0 or r[0] > x1 or r[3] < y0 or r[1] > y1)]


def _item_hit(e: Entity, box: Box, p: P2, q: P2) -> bool:
    """True when line p-q runs through the text item: a face letter's circle by its disc (a
    leader ends on the circle), any other by its box."""
    if isinstance(e, Circle):
        return dist_to_segment(e.centre, p, q) < e.radius_mm - 1e-3
    return box_hits(box, p, q)


def _name(e: Entity) -> str:
    text = getattr(e, "text", None) or " / ".join(getattr(e, "lines", ())) or type(e).__name__
    return f"{type(e).__name__} {text!r}"


Attempts = dict
"""Texts that found no better spot (``resolve(memo=...)``): the entity, what stood near it, the
room it was given. Shared by the passes over one view group, a text whose surroundings did not
change is not searched again."""


def resolve(ents: Sequence[Entity], text_h: float, *, limit: Rect | None = None,
            memo: Attempts | None = None) -> tuple[list[Entity], int]:
    """The view with colliding dimension and angle texts moved to free paper.

    Texts are visited in drawing order, angles first (an angle's text may move farther without
    losing its dimension); each one that overlaps text, crosses the outline, sits on another
    line, or whose own arc or run-on runs through other text moves to the nearest spot that is
    clear of all of those (along its line, then on the other side of it; an angle outward),
    else to the spot clear of text and outline with the fewest lines through it, when that has
    fewer than where it stands. Returns the view and the number of collisions left
    (``collisions``), which the layout counts as not fitting.

    Args:
        ents: the entities of one view (paper mm).
        text_h: the dimension text height (paper mm).
        limit: where a moved dimension (text, arc) must stay, e.g. the room left on the sheet;
            None for anywhere.
        memo: searches that found nothing, kept between calls over the same view group (a
            later call over the group with leaders added searches again only for the texts
            that something new or moved stands near); None for none.
    """
    out = list(ents)
    memo = {} if memo is None else memo
    outline = outline_pieces(out)
    section = [s for e in out if getattr(e, "layer", None) is Layer.OUTLINE for s in segments(e)]
    items = _items(out, text_h)
    slot = {it.index: k for k, it in enumerate(items)}
    segs = [[] if getattr(e, "layer", None) in HARD else list(segments(e, text_h)) for e in out]
    extents = [_extent(items[slot[j]].box if j in slot else None,
                       segs[j] or (list(segments(e)) if getattr(e, "layer", None) in HARD else []))
               for j, e in enumerate(out)]
    order = sorted((it.index for it in items if it.movable),
                   key=lambda i: (not isinstance(out[i], AngularDim), i))
    for clean_only in (True, False):  # clean spots for every text first, then less bad ones
        for _ in range(3):
            moved = False
            for i in order:
                found = _search(i, out, items, slot, segs, extents, text_h, outline, section,
                                limit, memo)
                if found is None or (clean_only and not found[1]):
                    continue
                out[i] = found[0]
                items[slot[i]] = replace(items[slot[i]], box=text_box(found[0], text_h))
                segs[i] = list(segments(found[0], text_h))
                extents[i] = _extent(items[slot[i]].box, segs[i])
                moved = True
            if not moved:
                break
    return out, len(collisions(out, text_h))


def _search(i: int, out: list[Entity], items: list[_Item], slot: dict[int, int],
            segs: list[list[tuple[P2, P2]]], extents: list[Rect | None],
            text_h: float, outline: list[tuple[P2, P2]], section: list[tuple[P2, P2]],
            limit: Rect | None, memo: Attempts) -> tuple[Entity, bool] | None:
    """Where text ``i`` would move (``move``: the entity and whether the spot is clear), or
    None when it stands clear or finds nothing better; answered from ``memo`` when it was
    searched before with the same neighbours and room."""
    e = out[i]
    region = _reach(e, items[slot[i]].box, text_h)
    near = [j for j, r in enumerate(extents) if j != i and r is not None
            and r[0] <= region[2] and region[0] <= r[2] and r[1] <= region[3]
            and region[1] <= r[3]]
    context = tuple((out[j], items[slot[j]].callout if j in slot else None) for j in near)
    tried = memo.get(e)
    if tried is not None and tried[0] == context and (
            tried[1] == limit or (tried[2] is None and _room_within(limit, tried[1]))):
        return tried[2]  # searched before with the same neighbours and room
    bare = [items[slot[j]] for j in near if j in slot]
    lines = [s for j in near for s in segs[j]]
    if isinstance(e, AlignedDim | LinearDim):
        lines += list(extensions(e))
    elif isinstance(e, AngularDim):
        lines += list(arc_pieces(e))  # its own arc, unless it has to move
    callouts = [it.box for it in bare if it.callout]
    solid = [it.box for it in bare if not it.callout]
    now = _badness(e, items[slot[i]].box, text_h, solid + callouts, outline, lines, callouts)
    found = None
    if now != 0:  # moved only when it collides
        found = move(e, text_h, [it.box.grown(CLEAR_MM) for it in bare], outline, lines,
                      section=section, solid=solid, callouts=callouts, worse_than=now,
                      limit=limit)
    memo[e] = (context, limit, found)
    return found


def _extent(box: Box | None, segments: list[tuple[P2, P2]]
            ) -> tuple[float, float, float, float] | None:
    """The axis-aligned hull of a text box and line pieces (paper mm); None for neither."""
    xs = [c[0] for seg in segments for c in seg]
    ys = [c[1] for seg in segments for c in seg]
    if box is not None:
        h = box.hull()
        xs += [h[0], h[2]]
        ys += [h[1], h[3]]
    return (min(xs), min(ys), max(xs), max(ys)) if xs else None


def _reach(e: Entity, box: Box, text_h: float) -> tuple[float, float, float, float]:
    """Paper every trial spot of ``move`` can touch (its text boxes grown by the clearances,
    its run-on, arc and legs), with margin: what stands beyond it cannot change the search."""
    half_w = text_width_mm(e.text, text_h) / 2  # type: ignore[attr-defined]
    pad = half_w + INK_H * text_h / 2 + CLEAR_MM + INK_MM + 1.0
    h = box.hull()
    if isinstance(e, AngularDim):
        r = e.radius_mm + ANGLE_REACH_MM + 3.0 + half_w + text_h / 2 + pad
        x, y = e.vertex
        return min(x - r, h[0]), min(y - r, h[1]), max(x + r, h[2]), max(y + r, h[3])
    assert isinstance(e, AlignedDim | LinearDim)
    a, b = e.dim_line()
    rot = math.radians(e.text_rotation_deg)
    along = math.hypot(b[0] - a[0], b[1] - a[1]) / 2 + half_w + SLIDE_BEYOND_MM + STEP_MM
    mid = ((a[0] + b[0]) / 2, (a[1] + b[1]) / 2)
    ends = [(c[0] + s * math.cos(rot) * along, c[1] + s * math.sin(rot) * along)
            for c in (e.text_pos, mid) for s in (-1.0, 1.0)]
    xs = [p[0] for p in (a, b, *ends)]
    ys = [p[1] for p in (a, b, *ends)]
    return (min(min(xs) - pad, h[0]), min(min(ys) - pad, h[1]), max(max(xs) + pad, h[2]),
            max(max(ys) + pad, h[3]))


def _room_within(limit: Rect | None, tried: Rect | None) -> bool:
    """True when room ``limit`` lies inside the room ``tried`` (None: unbounded)."""
    if tried is None:
        return True
    return limit is not None and within(limit, tried)


def _badness(e: Entity, box: Box, text_h: float, bare: list[Box], outline: list[tuple[P2, P2]],
             lines: list[tuple[P2, P2]], callouts: list[Box]) -> float:
    """How badly a dimension text stands: 0 when clear; infinite on text or the outline; else
    the lines through its box plus the callouts its own arc or run-on runs through, plus
    ``misread`` (an angle text off its arc, a text stacked on another), so such a text moves
    to a clear spot when there is one."""
    if not clear(box, bare, outline, None, pad=INK_MM):
        return math.inf
    own = own_lines(e, text_h)
    if any(box_hits(o, p, q) for o in bare if o not in callouts for p, q in own):
        return math.inf
    padded = box.grown(INK_MM)
    return (sum(box_hits(padded, p, q) for p, q in segments_near(lines, padded.hull()))
            + sum(any(box_hits(o, p, q) for p, q in own) for o in callouts)
            + misread(e, box, bare, text_h))

