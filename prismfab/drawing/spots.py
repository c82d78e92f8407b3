"""Trial spots for a colliding dimension or angle text, and the search among them.

A length's text slides along its dimension line (and on to beyond either end); an angle's text
moves outward from its vertex, the arc grown under it or kept, or farther into the section. The
search takes the nearest spot clear of text, the part's lines and other thin lines, else the
least bad one (``overlap`` decides what counts as bad).
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from dataclasses import replace

from prismfab.drawing.extent import bbox
from prismfab.drawing.geom import Rect, text_width_mm
from prismfab.drawing.placer import segments_cross
from prismfab.drawing.sheet import AlignedDim, AngularDim, Entity, LinearDim
from prismfab.drawing.textbox import (
    CLEAR_MM, EPS, INK_H, INK_MM, Box, any_through, arc_pieces, box_hits, clear, misread, own_lines,
    segments_hull, segments_near, text_box,
)

__all__ = ["ANGLE_REACH_MM", "SLIDE_BEYOND_MM", "STEP_MM", "move", "within"]

P2 = tuple[float, float]
STEP_MM = 0.5  # trial step along a dimension line or outward from an angle's vertex
SLIDE_BEYOND_MM = 4.0  # how far past a dimension line's end its text's near edge may go
ANGLE_REACH_MM = 24.0  # how far outward an angle's text may move


def move(e: Entity, text_h: float, others: list[Box], outline: list[tuple[P2, P2]],
          lines: list[tuple[P2, P2]], *, section: list[tuple[P2, P2]], solid: list[Box],
          callouts: list[Box], worse_than: float, limit: Rect | None
          ) -> tuple[Entity, bool] | None:
    """The entity with its text at the nearest clear trial spot and True, else at the least bad
    one and False; None when there is none.

    First the nearest spot clear of text, outline and lines, a moved arc or run-on crossing no
    line nor text; else the spot clear of text and outline that is least bad (``_badness``:
    fewest lines through it and callouts under its arc, nearest first), when it is better than
    ``worse_than``; ``solid`` holds the other text boxes but callouts, ``others`` the same
    boxes grown by the clearance. The exact tests of each spot run only over the boxes and
    lines whose bounding boxes come near it (all spots screened at once).
    """
    spots = list(_angle_spots(e, text_h, section) if isinstance(e, AngularDim)
                 else _slide_spots(e, text_h))
    if not spots:
        return None
    bare = solid + callouts
    near = _Nearby(spots, text_box(e, text_h), bare, outline, lines)
    best: tuple[float, Entity] | None = None
    for t, (base, pos, radius) in enumerate(spots):
        kb, ko, kl = near.at(t)
        box_bare = [bare[k] for k in kb]
        box_outline = [outline[k] for k in ko]
        if not clear(_spot_box(base, pos, text_h), box_bare, box_outline, None, pad=INK_MM):
            continue  # on text or the outline: neither clear nor merely less bad
        cand = (replace(base, text_pos=pos) if radius is None
                else replace(base, text_pos=pos, radius_mm=radius))
        box = text_box(cand, text_h)
        own = own_lines(cand, text_h)
        arc = list(arc_pieces(cand)) if isinstance(cand, AngularDim) else []
        box_lines = [lines[k] for k in kl]
        soft = misread(cand, box, box_bare, text_h)
        if (soft == 0 and clear(box, [others[k] for k in kb], box_outline, box_lines)
                and not any_through(others, own)
                and not any_through([box.grown(CLEAR_MM)], arc)
                and not (own and _any_cross(own, segments_near(lines, segments_hull(own))))
                and (limit is None or within(bbox([cand], text_h), limit))):
            return cand, True  # clear of text, outline and lines; its own lines cross nothing
        if best is not None and best[0] <= 0:
            continue  # a spot with no line through it is found: only a clear one beats it
        if any_through(solid, own):
            continue  # its own arc or run-on through text
        padded = box.grown(INK_MM)
        bad = (sum(box_hits(padded, p, q) for p, q in segments_near(box_lines, padded.hull()))
               + sum(any_through([o], own) for o in callouts) + soft)
        if (bad < worse_than and (best is None or bad < best[0])
                and not any_through([padded], arc)
                and (limit is None or within(bbox([cand], text_h), limit))):
            best = (bad, cand)
    return None if best is None else (best[1], False)


def _any_cross(own: list[tuple[P2, P2]], lines: list[tuple[P2, P2]]) -> bool:
    """True when one of a text's own new lines crosses one of ``lines``."""
    return any(segments_cross(a, b, p, q) for p, q in lines for a, b in own)


class _Nearby:
    """Which boxes, outline and line pieces come near each trial spot of one text (bounding
    boxes grown by the clearances and a margin, all spots at once): the exact tests of a spot
    need look at no others."""

    MARGIN_MM = CLEAR_MM + INK_MM + 0.01

    def __init__(self, spots: Sequence[tuple[Entity, P2, float | None]], box: Box,
                 boxes: Sequence[Box], outline: Sequence[tuple[P2, P2]],
                 lines: Sequence[tuple[P2, P2]]) -> None:
        import numpy as np

        h = box.hull()
        hx = (h[2] - h[0]) / 2 + self.MARGIN_MM
        hy = (h[3] - h[1]) / 2 + self.MARGIN_MM
        c = np.array([pos for _, pos, _ in spots], dtype=float)
        self._x0, self._x1 = c[:, 0] - hx, c[:, 0] + hx
        self._y0, self._y1 = c[:, 1] - hy, c[:, 1] + hy
        self._rows = [self._meets(np.array([b.hull() for b in boxes], dtype=float), len(spots)),
                      self._meets(_bounds(outline), len(spots)),
                      self._meets(_bounds(lines), len(spots))]

    def _meets(self, r: object, count: int) -> tuple[list[int], list[int]]:
        """Where each spot's run starts in the flat list of the indices near the spots."""
        import numpy as np

        r = np.asarray(r, dtype=float).reshape(-1, 4)
        meets = ((self._x0[:, None] <= r[:, 2]) & (r[:, 0] <= self._x1[:, None])
                 & (self._y0[:, None] <= r[:, 3]) & (r[:, 1] <= self._y1[:, None]))
        rows, cols = np.nonzero(meets)  # row-major: each spot's indices together, ascending
        starts = np.searchsorted(rows, np.arange(count + 1))
        return starts.tolist(), cols.tolist()

    def at(self, t: int) -> tuple[list[int], list[int], list[int]]:
        """Indices of the boxes, outline pieces and line pieces near spot ``t``."""
        return tuple(  # type: ignore[return-value]
            cols[starts[t]:starts[t + 1]] for starts, cols in self._rows)


def _bounds(segments: Sequence[tuple[P2, P2]]) -> list[tuple[float, float, float, float]]:
    return [(min(p[0], q[0]), min(p[1], q[1]), max(p[0], q[0]), max(p[1], q[1]))
            for p, q in segments]


def _spot_box(base: Entity, pos: P2, text_h: float) -> Box:
    """The text box of ``base`` with its text at ``pos`` (its size and turn do not change)."""
    if isinstance(base, AngularDim):
        return Box(pos, text_width_mm(base.text, text_h) / 2, INK_H * text_h / 2)
    assert isinstance(base, AlignedDim | LinearDim)
    return Box(pos, text_width_mm(base.text, text_h) / 2, INK_H * text_h / 2,
               base.text_rotation_deg)


def within(box: Rect | None, limit: Rect) -> bool:
    return box is not None and (box[0] >= limit[0] and box[1] >= limit[1] and box[2] <= limit[2]
                                and box[3] <= limit[3])


def _slide_spots(e: Entity, text_h: float) -> Iterator[tuple[Entity, P2, float | None]]:
    """The dimension's text slid along its line, nearest first (both ways), as far as the line
    is long and the text wide plus ``SLIDE_BEYOND_MM`` from where it stands, and from beyond one
    end of the dimension line to beyond the other: (the dimension, text centre, None)."""
    assert isinstance(e, AlignedDim | LinearDim)
    a, b = e.dim_line()
    length = math.hypot(b[0] - a[0], b[1] - a[1])
    reach = (length + text_width_mm(e.text, text_h)) / 2 + SLIDE_BEYOND_MM
    rot = math.radians(e.text_rotation_deg)
    u = (math.cos(rot), math.sin(rot))
    now = ((e.text_pos[0] - (a[0] + b[0]) / 2) * u[0]
           + (e.text_pos[1] - (a[1] + b[1]) / 2) * u[1])  # from the line's middle, along u
    for k in range(1, int((reach + abs(now)) / STEP_MM) + 1):
        for sign in (1.0, -1.0):
            s = sign * k * STEP_MM
            if abs(s) <= reach or abs(now + s) <= reach:
                yield e, (e.text_pos[0] + u[0] * s, e.text_pos[1] + u[1] * s), None


def _angle_spots(e: AngularDim, text_h: float, outline: Sequence[tuple[P2, P2]] = ()
                 ) -> Iterator[tuple[Entity, P2, float | None]]:
    """The angle's text moved outward, nearest first: (the angle, or its vertically opposite
    twin, text centre, arc radius or None to keep it).

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
        yield from _outside_spots(e, own, text_h)
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
            yield e, pos, None
    e1, e2 = (_unit(e.vertex, e.p1), _unit(e.vertex, e.p2))
    flipped = replace(e, p1=(e.vertex[0] - 0.3 * e1[0], e.vertex[1] - 0.3 * e1[1]),
                      p2=(e.vertex[0] - 0.3 * e2[0], e.vertex[1] - 0.3 * e2[1]))
    yield from _outside_spots(flipped, (-own[0], -own[1]), text_h)


def _unit(a: P2, b: P2) -> P2:
    n = math.hypot(b[0] - a[0], b[1] - a[1])
    return (b[0] - a[0]) / n, (b[1] - a[1]) / n


def _sector_dirs(e: AngularDim, own: P2) -> list[P2]:
    """Text directions from the vertex: the text's own, then the bisector and fanned out."""
    a1, a2 = (math.radians(a) for a in e.arc_deg())
    sweep = (a2 - a1) % (2 * math.pi)
    return [own] + [(math.cos(a1 + f * sweep), math.sin(a1 + f * sweep))
                    for f in (0.5, 0.4, 0.6, 0.3, 0.7, 0.2, 0.8)]


def _outside_spots(e: AngularDim, own: P2, text_h: float
                   ) -> Iterator[tuple[Entity, P2, float | None]]:
    """An angle on extended legs with its arc grown and its text just beyond the arc."""
    half_w = text_width_mm(e.text, text_h) / 2
    dirs = _sector_dirs(e, own)
    for grow in (True, False):  # the arc grown under the text, else the text farther out
        for k in range(int(ANGLE_REACH_MM / STEP_MM) + 1):
            radius = e.radius_mm + k * STEP_MM
            for u in dirs:
                reach = abs(u[0]) * half_w + abs(u[1]) * text_h / 2  # centre to box edge along u
                t = radius + 1.0 + reach
                yield e, (e.vertex[0] + u[0] * t, e.vertex[1] + u[1] * t), (
                    radius if grow else e.radius_mm)
