"""Keeps track of what is already on the sheet so new text lands on free paper."""

from __future__ import annotations

from collections.abc import Iterable

from prismfab.drawing.geom import Rect, box_hits_segment, boxes_overlap

__all__ = ["Placer"]

P2 = tuple[float, float]


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

    def add_region(self, polygon: Iterable[P2]) -> None:
        """A view outline: text may not stand inside it unless asked to."""
        self.regions.append(tuple(polygon))

    def add_box(self, box: Rect) -> None:
        self.boxes.append(box)

    def add_segment(self, p: P2, q: P2) -> None:
        self.segments.append((p, q))

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

    def crosses_segments(self, p: P2, q: P2) -> bool:
        """True when segment p-q properly crosses a line already placed."""
        return any(_segments_cross(p, q, a, b) for a, b in self.segments)

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
            span = _clip(grown, p, q)
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
        if any(boxes_overlap(box, b) for b in self.boxes):
            return False
        return ignore_segments or not any(box_hits_segment(box, p, q) for p, q in self.segments)


def _clip(box: Rect, p: P2, q: P2) -> tuple[float, float] | None:
    """Parameter span of segment p-q inside the box (Liang-Barsky), or None."""
    x0, y0, x1, y1 = box
    dx, dy = q[0] - p[0], q[1] - p[1]
    t0, t1 = 0.0, 1.0
    for pk, qk in ((-dx, p[0] - x0), (dx, x1 - p[0]), (-dy, p[1] - y0), (dy, y1 - p[1])):
        if abs(pk) < 1e-12:
            if qk < 0:
                return None
            continue
        t = qk / pk
        if pk < 0:
            t0 = max(t0, t)
        else:
            t1 = min(t1, t)
        if t0 > t1:
            return None
    return t0, t1


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
