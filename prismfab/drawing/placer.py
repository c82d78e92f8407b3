"""Keeps track of what is already on the sheet so new text lands on free paper."""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any, NamedTuple

from prismfab.drawing.geom import Rect, box_hits_segment, clip_segment

__all__ = ["Placer", "segments_cross"]

P2 = tuple[float, float]
NEAR_MM = 1e-6  # margin of the bounding-box pre-check, far above rounding of paper mm
KEEP_OFF_FROM_MM = 2.5  # how far along a leg its clearance from kept-off lines is measured


class _Arrays(NamedTuple):
    """The placer's obstacles as numpy arrays (for the ``*_many`` screens)."""

    key: tuple[int, int, int]  # counts of boxes, segments, regions when built
    boxes: Any  # (B, 4) x0, y0, x1, y1
    segments: Any  # (S, 4) px, py, qx, qy
    reach: Any  # (S, 4) segment bounding boxes grown by NEAR_MM
    edges: tuple[Any, ...]  # per region: (N, 4) edges


class Placer:
    """Obstacles (text boxes and line segments, paper mm) and a bounding area.

    A layout helper, private to one ``layout_part`` call: it is filled while the sheet is laid
    out and then thrown away; the Sheet itself stays frozen.
    """

    def __init__(self, area: Rect) -> None:
        self.area = area
        self.boxes: list[Rect] = []
        self.segments: list[tuple[P2, P2]] = []
        self.regions: list[tuple[P2, ...]] = []
        # Bounding boxes of the segments (same order), grown by NEAR_MM: a box or segment clear
        # of one by more than that cannot touch its segment, so the exact test is skipped.
        self._reach: list[Rect] = []
        self._cache: _Arrays | None = None

    def copy(self) -> Placer:
        """An independent copy (e.g. to try a placement and throw it away)."""
        other = Placer(self.area)
        other.boxes = list(self.boxes)
        other.segments = list(self.segments)
        other.regions = list(self.regions)
        other._reach = list(self._reach)
        return other

    def adopt(self, other: Placer) -> None:
        """Take over the obstacles of ``other`` (a copy on which a placement was tried)."""
        self.boxes, self.segments, self.regions = other.boxes, other.segments, other.regions
        self._reach, self._cache = other._reach, None

    def add_region(self, polygon: Iterable[P2]) -> None:
        """A view outline: text may not stand inside it unless asked to."""
        self.regions.append(tuple(polygon))

    def add_box(self, box: Rect) -> None:
        self.boxes.append(box)

    def add_segment(self, p: P2, q: P2) -> None:
        self.segments.append((p, q))
        self._reach.append((min(p[0], q[0]) - NEAR_MM, min(p[1], q[1]) - NEAR_MM,
                            max(p[0], q[0]) + NEAR_MM, max(p[1], q[1]) + NEAR_MM))

    def near_segments(self, box: Rect) -> list[tuple[P2, P2]]:
        """The segments whose bounding box comes within ``NEAR_MM`` of the box (paper mm).

        Every segment that touches or crosses the box is among them.
        """
        x0, y0, x1, y1 = box
        return [s for s, r in zip(self.segments, self._reach, strict=True)
                if r[0] <= x1 and x0 <= r[2] and r[1] <= y1 and y0 <= r[3]]

    def add_path(self, points: Iterable[P2], *, closed: bool = False) -> None:
        pts = list(points)
        for a, b in zip(pts, pts[1:] + (pts[:1] if closed else []), strict=False):
            self.add_segment(a, b)

    def crosses_region(self, p: P2, q: P2) -> bool:
        """True when segment p-q crosses a view outline or starts inside a view."""
        for r in self.regions:
            if _contains(r, p) or _contains(r, q):
                return True
            n = len(r)
            if any(_segments_cross(p, q, r[i], r[(i + 1) % n]) for i in range(n)):
                return True
        return False

    def extent(self) -> Rect | None:
        """Bounding box of everything placed so far (paper mm), None when empty."""
        xs = [x for b in self.boxes for x in (b[0], b[2])] + [p[0] for s in self.segments for p in s]
        ys = [y for b in self.boxes for y in (b[1], b[3])] + [p[1] for s in self.segments for p in s]
        if not xs:
            return None
        return min(xs), min(ys), max(xs), max(ys)

    def hits_box(self, p: P2, q: P2) -> bool:
        """True when segment p-q touches or crosses a text box already placed."""
        x0, y0 = min(p[0], q[0]) - NEAR_MM, min(p[1], q[1]) - NEAR_MM
        x1, y1 = max(p[0], q[0]) + NEAR_MM, max(p[1], q[1]) + NEAR_MM
        return any(box_hits_segment(b, p, q) for b in self.boxes
                   if b[0] <= x1 and x0 <= b[2] and b[1] <= y1 and y0 <= b[3])

    def crosses_segments(self, p: P2, q: P2) -> bool:
        """True when segment p-q properly crosses a line already placed."""
        span = (min(p[0], q[0]), min(p[1], q[1]), max(p[0], q[0]), max(p[1], q[1]))
        return any(_segments_cross(p, q, a, b) for a, b in self.near_segments(span))

    def in_region(self, p: P2) -> bool:
        """True when the point lies inside a view outline."""
        return any(_contains(r, p) for r in self.regions)

    def clear_length(self, p: P2, q: P2, *, minimum: float) -> P2:
        """The end of segment p-q shortened so it touches no text box (not below ``minimum``)."""
        import math

        length = math.hypot(q[0] - p[0], q[1] - p[1])
        t = length
        while t > minimum:
            end = (p[0] + (q[0] - p[0]) * t / length, p[1] + (q[1] - p[1]) * t / length)
            if not any(box_hits_segment(b, p, end) for b in self.boxes):
                return end
            t -= 0.5
        return (p[0] + (q[0] - p[0]) * minimum / length, p[1] + (q[1] - p[1]) * minimum / length)

    def visible_pieces(self, p: P2, q: P2, *, gap_mm: float = 0.8) -> list[tuple[P2, P2]]:
        """Segment p-q broken where it would run through text (a chain line gives way to text)."""
        import math

        length = math.hypot(q[0] - p[0], q[1] - p[1])
        if length < 1e-9:
            return []
        blocked = []
        for b in self.boxes:
            grown = (b[0] - gap_mm, b[1] - gap_mm, b[2] + gap_mm, b[3] + gap_mm)
            span = clip_segment(grown, p, q)
            if span is not None:
                blocked.append(span)
        pieces: list[tuple[float, float]] = []
        t = 0.0
        for a, b in sorted(blocked):
            if a > t:
                pieces.append((t, a))
            t = max(t, b)
        if t < 1.0:
            pieces.append((t, 1.0))

        def at(u: float) -> P2:
            return p[0] + (q[0] - p[0]) * u, p[1] + (q[1] - p[1]) * u

        return [(at(a), at(b)) for a, b in pieces if (b - a) * length >= 1.0]

    def _arrays(self) -> _Arrays:
        """Boxes, segments (and their reach) and region edges as arrays, rebuilt on change."""
        import numpy as np

        from prismfab.drawing.screen import polygon_edges

        key = (len(self.boxes), len(self.segments), len(self.regions))
        if self._cache is None or self._cache.key != key:
            self._cache = _Arrays(
                key, np.array(self.boxes, dtype=float).reshape(-1, 4),
                np.array([(*p, *q) for p, q in self.segments], dtype=float).reshape(-1, 4),
                np.array(self._reach, dtype=float).reshape(-1, 4),
                tuple(polygon_edges(r) for r in self.regions))
        return self._cache

    def free_many(self, boxes: Sequence[Rect] | Any) -> list[bool]:
        """``free(box)`` for many boxes (a sequence or an (N, 4) array) at once: same answers."""
        import numpy as np

        from prismfab.drawing.screen import boxes_hit_segments, points_in_polygon

        if len(boxes) == 0:
            return []
        arrays = self._arrays()
        placed, segs = arrays.boxes, arrays.segments
        b = np.array(boxes, dtype=float)
        x0, y0, x1, y1 = b[:, 0], b[:, 1], b[:, 2], b[:, 3]
        ax0, ay0, ax1, ay1 = self.area
        ok = (x0 >= ax0) & (y0 >= ay0) & (x1 <= ax1) & (y1 <= ay1)
        cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
        for r in self.regions:
            ok &= ~points_in_polygon(r, cx, cy)
        if len(placed):
            ok &= ~((x0[:, None] < placed[:, 2]) & (placed[:, 0] < x1[:, None])
                    & (y0[:, None] < placed[:, 3]) & (placed[:, 1] < y1[:, None])).any(axis=1)
        if len(segs):
            ok &= ~boxes_hit_segments(b, segs, arrays.reach).any(axis=1)
        return [bool(v) for v in ok]

    def legs_clear(self, legs: Sequence[tuple[P2, P2]], *, cross_views: bool) -> list[bool]:
        """For each segment: it touches no text box, crosses no line, and (unless
        ``cross_views``) neither starts or ends in a view nor crosses one (see ``hits_box``,
        ``crosses_segments``, ``crosses_region``)."""
        return [c == 0 for c in self.leg_crossings(legs, cross_views=cross_views)]

    def leg_crossings(self, legs: Sequence[tuple[P2, P2]], *, cross_views: bool,
                      keep_off: Sequence[tuple[P2, P2]] = (), clear_mm: float = 0.0
                      ) -> list[int | None]:
        """For each segment: None when it touches a text box, comes nearer than ``clear_mm``
        to one of ``keep_off`` (or crosses it) or (unless ``cross_views``) starts or ends in a
        view or crosses one; else how many lines already placed it crosses (``legs_clear``
        asks for none). The clearance is measured from ``KEEP_OFF_FROM_MM`` along each
        segment on, so a leg may start on a line of ``keep_off`` (a leader on the ray path).
        """
        import numpy as np

        from prismfab.drawing.screen import boxes_hit_segments, points_in_polygon, segments_cross

        if not legs:
            return []
        arrays = self._arrays()
        placed, segs, edges = arrays.boxes, arrays.segments, arrays.edges
        a = np.array([(*p, *q) for p, q in legs], dtype=float)
        bad = np.zeros(len(legs), dtype=bool)
        if len(placed):
            bad |= boxes_hit_segments(placed, a).any(axis=0)
        count = segments_cross(a, segs).sum(axis=1) if len(segs) else np.zeros(len(legs), int)
        if len(keep_off):
            off = np.array([(*p, *q) for p, q in keep_off], dtype=float)
            bad |= segments_cross(a, off).any(axis=1)
            if clear_mm > 0:
                bad |= (_gaps(_from(a, KEEP_OFF_FROM_MM), off) < clear_mm).any(axis=1)
        if not cross_views:
            for r, e in zip(self.regions, edges, strict=True):
                bad |= points_in_polygon(r, a[:, 0], a[:, 1])
                bad |= points_in_polygon(r, a[:, 2], a[:, 3])
                bad |= segments_cross(a, e).any(axis=1)
        return [None if b else int(c) for b, c in zip(bad, count, strict=True)]

    def crosses_many(self, segments: Sequence[tuple[P2, P2]]) -> list[bool]:
        """``crosses_segments(p, q)`` for many segments at once."""
        import numpy as np

        from prismfab.drawing.screen import segments_cross

        segs = self._arrays().segments
        if not segments or not len(segs):
            return [False] * len(segments)
        a = np.array([(*p, *q) for p, q in segments], dtype=float)
        return [bool(v) for v in segments_cross(a, segs).any(axis=1)]

    def inside(self, box: Rect) -> bool:
        x0, y0, x1, y1 = self.area
        return box[0] >= x0 and box[1] >= y0 and box[2] <= x1 and box[3] <= y1

    def free(self, box: Rect, *, ignore_segments: bool = False, in_views: bool = False) -> bool:
        """True when the box is inside the area and touches no obstacle (nor a view region)."""
        if not self.inside(box):
            return False
        if not in_views:
            centre = ((box[0] + box[2]) / 2, (box[1] + box[3]) / 2)
            if any(_contains(r, centre) for r in self.regions):
                return False
        x0, y0, x1, y1 = box  # boxes_overlap, inline: this runs for every trial spot
        if any(x0 < b[2] and b[0] < x1 and y0 < b[3] and b[1] < y1 for b in self.boxes):
            return False
        return ignore_segments or not any(box_hits_segment(box, p, q)
                                          for p, q in self.near_segments(box))


def _from(segs: Any, start_mm: float) -> Any:
    """(N, 4) segments with their first ``start_mm`` cut off (at least half of each kept)."""
    import numpy as np

    d = segs[:, 2:] - segs[:, :2]
    n = np.hypot(d[:, 0], d[:, 1])
    t = np.minimum(start_mm / np.maximum(n, 1e-12), 0.5)[:, None]
    return np.hstack([segs[:, :2] + d * t, segs[:, 2:]])


def _gaps(first: Any, second: Any) -> Any:
    """(F, S) least distances between segments (paper mm); 0 where they cross."""
    import numpy as np

    from prismfab.drawing.screen import segments_cross

    def to_segments(px: Any, py: Any, segs: Any) -> Any:  # points (F, 1) to segments (1, S)
        ax, ay, bx, by = (segs[:, k][None, :] for k in range(4))
        dx, dy = bx - ax, by - ay
        n2 = np.maximum(dx * dx + dy * dy, 1e-24)
        t = np.clip(((px - ax) * dx + (py - ay) * dy) / n2, 0.0, 1.0)
        return np.hypot(ax + t * dx - px, ay + t * dy - py)

    gaps = np.minimum(to_segments(first[:, 0:1], first[:, 1:2], second),
                      to_segments(first[:, 2:3], first[:, 3:4], second))
    gaps = np.minimum(gaps, to_segments(second[:, 0:1], second[:, 1:2], first).T)
    gaps = np.minimum(gaps, to_segments(second[:, 2:3], second[:, 3:4], first).T)
    return np.where(segments_cross(first, second), 0.0, gaps)


def _contains(polygon: tuple[P2, ...], p: P2) -> bool:
    """Point in polygon (even-odd rule)."""
    inside = False
    n = len(polygon)
    for i in range(n):
        (x0, y0), (x1, y1) = polygon[i], polygon[(i + 1) % n]
        if (y0 > p[1]) != (y1 > p[1]):
            x = x0 + (p[1] - y0) * (x1 - x0) / (y1 - y0)
            if p[0] < x:
                inside = not inside
    return inside


def _segments_cross(a: P2, b: P2, c: P2, d: P2) -> bool:
    def orient(p: P2, q: P2, r: P2) -> float:
        return (q[0] - p[0]) * (r[1] - p[1]) - (q[1] - p[1]) * (r[0] - p[0])

    return (orient(a, b, c) * orient(a, b, d) < 0) and (orient(c, d, a) * orient(c, d, b) < 0)


def segments_cross(a: P2, b: P2, c: P2, d: P2) -> bool:
    """True when segments a-b and c-d properly cross (touching ends do not count)."""
    return _segments_cross(a, b, c, d)
