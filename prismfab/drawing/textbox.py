"""Text boxes and line pieces of a laid-out view, as the collision pass reads them.

A dimension or angle text is an oriented rectangle (paper mm) a little taller than its character
height (brackets, descenders); an entity's line work is a list of straight pieces (arcs as
chords). The tests here (box on box, line through box) are shared by the collision count
(``overlap``) and the search for free spots (``spots``).
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field, replace

from prismfab.drawing.geom import box_hits_segment, run_on, text_width_mm
from prismfab.drawing.sheet import (
    AlignedDim, AngularDim, Entity, Layer, Leader, Line, LinearDim, Polyline, Width,
)

__all__ = ["Box", "box_hits", "boxes_overlap", "footprint", "segments"]

P2 = tuple[float, float]
CLEAR_MM = 0.4  # free paper a moved text keeps from other text
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


def dim_box(e: AlignedDim | LinearDim, text_h: float) -> Box:
    return Box(e.text_pos, text_width_mm(e.text, text_h) / 2, INK_H * text_h / 2,
               e.text_rotation_deg)


def angle_box(e: AngularDim, text_h: float) -> Box:
    return Box(e.text_pos, text_width_mm(e.text, text_h) / 2, INK_H * text_h / 2)


def text_box(e: Entity, text_h: float) -> Box:
    if isinstance(e, AngularDim):
        return angle_box(e, text_h)
    assert isinstance(e, AlignedDim | LinearDim)
    return dim_box(e, text_h)


def segments(e: Entity, text_h: float = 0.0) -> Iterator[tuple[P2, P2]]:
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
        yield from extensions(e)
    elif isinstance(e, AngularDim):
        yield from arc_pieces(e)


def extensions(e: AlignedDim | LinearDim) -> Iterator[tuple[P2, P2]]:
    from prismfab.drawing.dims import EXT_BEYOND_MM, EXT_OFFSET_MM

    for p, d in zip((e.p1, e.p2), e.dim_line(), strict=True):
        n = math.hypot(d[0] - p[0], d[1] - p[1])
        if n > EPS:
            u = ((d[0] - p[0]) / n, (d[1] - p[1]) / n)
            yield ((p[0] + u[0] * EXT_OFFSET_MM, p[1] + u[1] * EXT_OFFSET_MM),
                   (d[0] + u[0] * EXT_BEYOND_MM, d[1] + u[1] * EXT_BEYOND_MM))


def arc_pieces(e: AngularDim) -> Iterator[tuple[P2, P2]]:
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


def outline_pieces(ents: Sequence[Entity]) -> list[tuple[P2, P2]]:
    return [s for e in ents if getattr(e, "layer", None) in HARD for s in segments(e)]


def clear(box: Box, others: list[Box], outline: list[tuple[P2, P2]],
           lines: list[tuple[P2, P2]] | None, *, pad: float = CLEAR_MM) -> bool:
    """The box clear of other text, and ``pad`` clear of the part's lines and of ``lines``."""
    padded = box.grown(pad)
    hull = padded.hull()
    if any(box_hits(padded, p, q) for p, q in segments_near(outline, hull)):
        return False
    if any(boxes_overlap(box, o) for o in others):
        return False
    return lines is None or not any(box_hits(padded, p, q) for p, q in segments_near(lines, hull))


def segments_hull(segments: list[tuple[P2, P2]]) -> tuple[float, float, float, float]:
    xs = [c[0] for seg in segments for c in seg]
    ys = [c[1] for seg in segments for c in seg]
    return min(xs), min(ys), max(xs), max(ys)


def segments_near(segments: list[tuple[P2, P2]], hull: tuple[float, float, float, float]
          ) -> list[tuple[P2, P2]]:
    """The segments whose bounding box meets ``hull`` (a cheap filter before exact tests)."""
    x0, y0, x1, y1 = hull
    return [(p, q) for p, q in segments
            if not (max(p[0], q[0]) < x0 or min(p[0], q[0]) > x1
                    or max(p[1], q[1]) < y0 or min(p[1], q[1]) > y1)]


def any_through(boxes: Sequence[Box], segments: list[tuple[P2, P2]]) -> bool:
    """True when a segment runs through one of the boxes (``box_hits``, bounding boxes first)."""
    if not segments or not boxes:
        return False
    x0, y0, x1, y1 = segments_hull(segments)
    for o in boxes:
        h = o.hull()
        if h[0] <= x1 and x0 <= h[2] and h[1] <= y1 and y0 <= h[3] and any(
                box_hits(o, p, q) for p, q in segments_near(segments, h)):
            return True
    return False


def own_lines(e: Entity, text_h: float) -> list[tuple[P2, P2]]:
    """The lines a move draws anew: an angle's arc and legs, a dimension line's run-on."""
    if isinstance(e, AngularDim):
        return list(segments(e))
    if isinstance(e, AlignedDim | LinearDim):
        a, b = e.dim_line()
        more = run_on(a, b, e.text_pos, text_width_mm(e.text, text_h) / 2)
        return [] if more is None else [more]
    return []


def footprint(e: Entity, text_h: float
              ) -> tuple[tuple[float, float, float, float] | None, list[tuple[P2, P2]]]:
    """The text box (axis-aligned hull, paper mm) and the line pieces of a dimension or angle,
    e.g. to tell a placer where a moved one now stands; (None, []) for other entities."""
    if isinstance(e, AngularDim):
        return angle_box(e, text_h).hull(), list(segments(e))
    if isinstance(e, AlignedDim | LinearDim):
        return dim_box(e, text_h).hull(), list(segments(e, text_h))
    return None, []


ARC_GAP_MM = 4.0
"""How far beyond its arc an angle's text may stand before it reads as standing apart from it
(paper mm, from the arc to the nearest point of the text box)."""
STACK_GAP = 0.6
"""Two parallel text lines of different dimensions closer than this many text heights, one over
the other, read as one two-line value."""


def misread(e: Entity, box: Box, others: Sequence[Box], text_h: float) -> float:
    """Half a line's badness for each way a clear dimension text may still be misread: an angle
    on extended legs whose text stands more than ``ARC_GAP_MM`` beyond its arc, a text stacked
    on another text line (``stacked``)."""
    return 0.5 * off_arc(e, box) + 0.5 * any(stacked(box, o, text_h) for o in others)


def off_arc(e: Entity, box: Box) -> bool:
    """True for an angle on extended legs (its arc outside the section) whose text box stands
    more than ``ARC_GAP_MM`` beyond the arc."""
    if not isinstance(e, AngularDim):
        return False
    vx, vy = e.vertex
    if math.hypot(e.p1[0] - vx, e.p1[1] - vy) > e.radius_mm:
        return False  # inside the section, between the faces themselves
    x0, y0, x1, y1 = box.hull()
    near = math.hypot(min(max(vx, x0), x1) - vx, min(max(vy, y0), y1) - vy)
    return near - e.radius_mm > ARC_GAP_MM


def stacked(a: Box, b: Box, text_h: float) -> bool:
    """True when two text lines (boxes wider than tall) run parallel, overlap along their
    length and stand less than ``STACK_GAP`` text heights apart across it."""
    if a.half_w < 1.5 * a.half_h or b.half_w < 1.5 * b.half_h:
        return False  # a letter in a circle, a datum box: not a text line
    turn = (a.rot_deg - b.rot_deg) % 180.0
    if min(turn, 180.0 - turn) > 1.0:
        return False
    along, across = a.local(b.centre)
    return (abs(along) < a.half_w + b.half_w - text_h
            and abs(across) < a.half_h + b.half_h + STACK_GAP * text_h)
