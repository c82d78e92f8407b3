"""Angle texts that stand off their arc, or whose arc grew far to reach free paper, brought back.

The collision pass (``overlap.resolve``) frees an angle's text by growing its arc under it or by
moving it outward; in a crowded corner that can leave the value far out on a long arc, or well
beyond a small arc, or stacked on a neighbouring value. This last step looks for a spot nearer
the arc the angle was first given: the text just beyond the arc, or a little farther on a short
reference line from the arc to the text (ISO 129-1 lets a value that cannot stand by its
dimension line stand on a leader to it), and takes it when it reads better: less arc growth
and leader length, fewer lines crossed. Only angles on extended legs (outside the section) are
revisited; everything else keeps its place.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace

from prismfab.drawing.extent import bbox
from prismfab.drawing.geom import Rect, dist_to_segment, run_on, text_width_mm
from prismfab.drawing.overlap import text_items, thin_lines
from prismfab.drawing.placer import segments_cross
from prismfab.drawing.sheet import AlignedDim, AngularDim, Entity, Layer, Leader, LinearDim
from prismfab.drawing.spots import within
from prismfab.drawing.textbox import (
    ARC_GAP_MM, CLEAR_MM, INK_H, INK_MM, Box, any_through, arc_pieces, clear, misread, off_arc,
    outline_pieces, segments_near, stacked,
)

__all__ = ["GROWN_MM", "LEADER_MAX_MM", "hang_angle_texts"]

P2 = tuple[float, float]
GROWN_MM = 6.0  # an arc grown more than this beyond its first radius is looked at again
LEADER_MAX_MM = 15.0  # longest gap from the arc to a text on a leader (paper mm)
LEADER_COST_MM = 3.0  # a leader is one more line to read: worth this much arc growth
CROSS_COST_MM = 4.0  # each thin line the arc or the leader crosses
OFF_COST = 3.0  # each mm a text stands beyond ``ARC_GAP_MM`` off its arc with no leader
BETTER_MM = 1.0  # a new spot must be at least this much better than where the text stands
STEP_MM = 0.5  # trial step outward from the arc
RADIUS_STEP_MM = 1.0
ALONG_MM = 2.5  # a leader nearer than this to a line nearly parallel to it reads as one with it
ALONG_DEG = 15.0
STACK_MORE = 0.25  # a moved text keeps this many text heights more than ``stacked`` asks
FRACTIONS = (0.5, 0.4, 0.6, 0.3, 0.7, 0.2, 0.8, 0.1, 0.9)  # directions across the sector


def hang_angle_texts(ents: Sequence[Entity], first: Sequence[Entity], text_h: float, *,
                     limit: Rect | None = None) -> list[Entity]:
    """The view with outside angle texts moved nearer their first arc, on a leader if need be.

    Args:
        ents: the entities of one resolved view (paper mm); its first ``len(first)`` entities
            are ``first`` as laid out, possibly moved by the collision pass.
        first: the entities as first laid out: each angle's first arc radius.
        text_h: the dimension text height (paper mm).
        limit: where a moved text must stay (the room left on the sheet); None for anywhere.

    Returns:
        The entities, in the same order, followed by the leaders added (thin lines without a
        terminator, dimension layer).
    """
    out = list(ents)
    for i, o in enumerate(first):
        e = out[i]
        if (isinstance(e, AngularDim) and isinstance(o, AngularDim) and _outside(e)
                and e.vertex == o.vertex):
            found = _better(i, out, o.radius_mm, text_h, limit)
            if found is not None:
                out[i] = found[0]
                if found[1] is not None:
                    out.append(found[1])
    return out


def _outside(e: AngularDim) -> bool:
    """An angle on extended legs: its legs shorter than its arc radius."""
    return math.hypot(e.p1[0] - e.vertex[0], e.p1[1] - e.vertex[1]) <= e.radius_mm


def _better(i: int, ents: list[Entity], base_mm: float, text_h: float, limit: Rect | None
            ) -> tuple[AngularDim, Leader | None] | None:
    """A better spot for angle ``i`` (the angle and its leader, or None for none needed); None
    when it stands well where it is or nothing better is found."""
    e = ents[i]
    assert isinstance(e, AngularDim)
    items = [(j, b) for j, b in text_items(ents, text_h) if j != i]
    others = [b for _, b in items]
    values = [b for j, b in items if isinstance(ents[j], AlignedDim | LinearDim | AngularDim)]
    outline = outline_pieces(ents)
    lines = [(p, q) for j, p, q in thin_lines(ents, text_h) if j != i]
    barriers = _barriers(ents, text_h)
    box = Box(e.text_pos, text_width_mm(e.text, text_h) / 2, INK_H * text_h / 2)
    well = clear(box, others, outline, lines, pad=INK_MM)
    if well and misread(e, box, values, text_h) == 0 and e.radius_mm - base_mm <= GROWN_MM:
        return None  # by its arc, which grew little, and not stacked on another value
    now = math.inf
    if well and not any(stacked(box, o, text_h) for o in values):
        now = e.radius_mm - base_mm + CROSS_COST_MM * _crossings(list(arc_pieces(e)), lines)
        if off_arc(e, box):  # standing off without a leader reads worse than with one
            now += LEADER_COST_MM + OFF_COST * (_gap(e, box) - ARC_GAP_MM)
    grown = [o.grown(CLEAR_MM) for o in others]
    best: tuple[float, AngularDim, Leader | None] | None = None
    top = max(e.radius_mm, base_mm + GROWN_MM)
    for k in range(int((top - base_mm) / RADIUS_STEP_MM) + 1):
        radius = base_mm + k * RADIUS_STEP_MM
        bound = min(now - BETTER_MM, math.inf if best is None else best[0])
        if radius - base_mm >= bound:
            break
        found = _at_radius(replace(e, radius_mm=radius), base_mm, text_h, others, grown,
                           outline, lines, barriers, limit, bound)
        if found is not None:
            best = found
    return None if best is None else (best[1], best[2])


def _at_radius(e: AngularDim, base_mm: float, text_h: float, others: list[Box], grown: list[Box],
               outline: list[tuple[P2, P2]], lines: list[tuple[P2, P2]],
               barriers: list[tuple[P2, P2]], limit: Rect | None, bound: float
               ) -> tuple[float, AngularDim, Leader | None] | None:
    """The cheapest text spot for the angle with its arc at ``e.radius_mm`` costing less than
    ``bound``: (cost, angle, leader or None)."""
    arc = list(arc_pieces(e))
    if any_through(grown, arc):
        return None
    arc_cost = e.radius_mm - base_mm + CROSS_COST_MM * _crossings(arc, lines)
    if arc_cost >= bound:
        return None
    half_w, half_h = text_width_mm(e.text, text_h) / 2, INK_H * text_h / 2
    best: tuple[float, AngularDim, Leader | None] | None = None
    for u in _directions(e):
        reach = abs(u[0]) * half_w + abs(u[1]) * half_h  # centre to box edge along u
        for k in range(1, int(LEADER_MAX_MM / STEP_MM) + 1):
            gap = k * STEP_MM
            limit_cost = bound if best is None else min(bound, best[0])
            t = e.radius_mm + gap + reach
            cand = replace(e, text_pos=(e.vertex[0] + u[0] * t, e.vertex[1] + u[1] * t))
            box = Box(cand.text_pos, half_w, half_h)
            if not clear(box, grown, outline, lines + arc, pad=INK_MM) or any(
                    stacked(replace(box, half_h=half_h + STACK_MORE * text_h), o, text_h)
                    for o in others):
                continue
            if limit is not None and not within(bbox([cand], text_h), limit):
                continue
            if not off_arc(cand, box):
                cost, lead = arc_cost, None
            else:
                lead = _leader(cand, box, text_h)
                piece = [lead.points]
                if (any_through(grown, piece) or _runs_along(lead.points, lines + arc)
                        or any(segments_cross(*lead.points, p, q) for p, q in outline + barriers)):
                    continue
                cost = arc_cost + _length(lead) + LEADER_COST_MM + CROSS_COST_MM * _crossings(
                    piece, lines + arc)
            if cost < limit_cost:
                best = (cost, cand, lead)
            break  # farther out along this direction only costs more
    return best


def _barriers(ents: Sequence[Entity], text_h: float) -> list[tuple[P2, P2]]:
    """Lines a leader to a value may not cross: dimension lines (with their run-on under text
    beyond an end) and other leaders; extension and construction lines it may, at a cost."""
    out: list[tuple[P2, P2]] = []
    for e in ents:
        if isinstance(e, AlignedDim | LinearDim):
            a, b = e.dim_line()
            out.append((a, b))
            more = run_on(a, b, e.text_pos, text_width_mm(e.text, text_h) / 2)
            if more is not None:
                out.append(more)
        elif isinstance(e, Leader):
            out += zip(e.points, e.points[1:], strict=False)
    return out


def _gap(e: AngularDim, box: Box) -> float:
    """How far the text box stands beyond the arc (paper mm, nearest point to the vertex)."""
    x0, y0, x1, y1 = box.hull()
    vx, vy = e.vertex
    return math.hypot(min(max(vx, x0), x1) - vx, min(max(vy, y0), y1) - vy) - e.radius_mm


def _directions(e: AngularDim) -> list[P2]:
    """Text directions from the vertex across the angle's sector, the middle first."""
    a1, a2 = (math.radians(a) for a in e.arc_deg())
    sweep = (a2 - a1) % (2 * math.pi)
    return [(math.cos(a1 + f * sweep), math.sin(a1 + f * sweep)) for f in FRACTIONS]


def _leader(e: AngularDim, box: Box, text_h: float) -> Leader:
    """A thin line from the angle's arc (the point towards the text, or the arc's nearer end)
    to the middle of the text's near side, or to its near edge above or below it."""
    a1, a2 = (math.radians(a) for a in e.arc_deg())
    sweep = (a2 - a1) % (2 * math.pi)
    rel = (math.atan2(box.centre[1] - e.vertex[1], box.centre[0] - e.vertex[0]) - a1) % (
        2 * math.pi)
    if rel > sweep:
        rel = sweep if rel - sweep < 2 * math.pi - rel else 0.0
    start = (e.vertex[0] + e.radius_mm * math.cos(a1 + rel),
             e.vertex[1] + e.radius_mm * math.sin(a1 + rel))
    x0, y0, x1, y1 = box.hull()
    if start[0] < x0 or start[0] > x1:
        end = (x0 if start[0] < x0 else x1, box.centre[1])
    else:
        end = (start[0], y0 if start[1] < y0 else y1)
    return Leader((start, end), (), end, text_h, arrow=False, layer=Layer.DIMENSION)


def _runs_along(seg: tuple[P2, ...], lines: list[tuple[P2, P2]]) -> bool:
    """True when the segment runs close beside a line nearly parallel to it, where the two
    would read as one line (within ``ALONG_MM`` at a quarter, half or three quarters of it)."""
    (ax, ay), (bx, by) = seg
    samples = [(ax + f * (bx - ax), ay + f * (by - ay)) for f in (0.25, 0.5, 0.75)]
    heading = math.atan2(by - ay, bx - ax)
    pad = ALONG_MM
    hull = (min(ax, bx) - pad, min(ay, by) - pad, max(ax, bx) + pad, max(ay, by) + pad)
    for p, q in segments_near(lines, hull):
        turn = (math.atan2(q[1] - p[1], q[0] - p[0]) - heading) % math.pi
        if min(turn, math.pi - turn) < math.radians(ALONG_DEG) and any(
                dist_to_segment(c, p, q) < ALONG_MM for c in samples):
            return True
    return False


def _length(lead: Leader) -> float:
    (a, b) = lead.points
    return math.hypot(b[0] - a[0], b[1] - a[1])


def _crossings(pieces: list[tuple[P2, P2]], lines: list[tuple[P2, P2]]) -> int:
    """How many of ``lines`` one of ``pieces`` crosses."""
    if not pieces:
        return 0
    xs = [c[0] for s in pieces for c in s]
    ys = [c[1] for s in pieces for c in s]
    near = segments_near(lines, (min(xs), min(ys), max(xs), max(ys)))
    return sum(any(segments_cross(a, b, p, q) for a, b in pieces) for p, q in near)

