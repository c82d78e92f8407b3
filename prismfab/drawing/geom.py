"""Small plane-geometry helpers for the layout (paper or part frame, mm); no physics."""

from __future__ import annotations

import math
from collections.abc import Sequence

from prismfab.drawing import fonts

__all__ = [
    "add", "box_hits_segment", "boxes_overlap", "clip_segment", "dist", "dist_to_segment", "mul",
    "norm", "perp_cw", "rect_of_text", "sub", "text_width_mm", "unit",
]

P2 = tuple[float, float]
Rect = tuple[float, float, float, float]  # x0, y0, x1, y1


def add(a: P2, b: P2) -> P2:
    return a[0] + b[0], a[1] + b[1]


def sub(a: P2, b: P2) -> P2:
    return a[0] - b[0], a[1] - b[1]


def mul(a: P2, k: float) -> P2:
    return a[0] * k, a[1] * k


def norm(a: P2) -> float:
    return math.hypot(a[0], a[1])


def dist(a: P2, b: P2) -> float:
    return math.hypot(a[0] - b[0], a[1] - b[1])


def unit(a: P2) -> P2:
    n = norm(a)
    return a[0] / n, a[1] / n


def perp_cw(a: P2) -> P2:
    """``a`` turned clockwise by 90° (outward normal of a counter-clockwise polygon edge)."""
    return a[1], -a[0]


def text_width_mm(text: str, height_mm: float, bold: bool = False) -> float:
    """Advance width of one line of text on the sheet, mm (the font's real metrics)."""
    return fonts.text_width_mm(text, height_mm, bold)


def rect_of_text(centre: P2, text: str, height_mm: float, *, pad_mm: float = 0.6) -> Rect:
    """Axis-aligned box around horizontal text centred at ``centre``."""
    hw = text_width_mm(text, height_mm) / 2 + pad_mm
    hh = height_mm / 2 + pad_mm
    return centre[0] - hw, centre[1] - hh, centre[0] + hw, centre[1] + hh


def boxes_overlap(a: Rect, b: Rect) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def clip_segment(box: Rect, p: P2, q: P2) -> tuple[float, float] | None:
    """Parameter span (t0, t1) of segment p-q inside the axis-aligned box (Liang-Barsky), or
    None when the segment misses it."""
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


def box_hits_segment(box: Rect, p: P2, q: P2) -> bool:
    """True when segment p-q crosses or lies in the axis-aligned box."""
    return clip_segment(box, p, q) is not None


def run_on(d1: P2, d2: P2, text_pos: P2, half_w: float) -> tuple[P2, P2] | None:
    """The piece by which a dimension line d1-d2 runs on under text standing beyond its end.

    Returns None when the text (centre ``text_pos``, half width ``half_w`` along the line,
    paper mm) stands between the ends.
    """
    length = dist(d1, d2)
    if length < 1e-9:
        return None
    u = ((d2[0] - d1[0]) / length, (d2[1] - d1[1]) / length)
    along = (text_pos[0] - d1[0]) * u[0] + (text_pos[1] - d1[1]) * u[1]
    if along - half_w < 0.0:
        return d1, add(d1, mul(u, along - half_w))
    if along + half_w > length:
        return d2, add(d1, mul(u, along + half_w))
    return None


def dist_to_segment(c: P2, p: P2, q: P2) -> float:
    """Distance from point ``c`` to segment p-q (paper mm)."""
    dx, dy = q[0] - p[0], q[1] - p[1]
    n2 = dx * dx + dy * dy
    t = 0.0 if n2 < 1e-12 else max(0.0, min(1.0, ((c[0] - p[0]) * dx + (c[1] - p[1]) * dy) / n2))
    return math.hypot(p[0] + t * dx - c[0], p[1] + t * dy - c[1])


def polygon_centroid(points: Sequence[P2]) -> P2:
    """Area centroid of a simple polygon."""
    a = cx = cy = 0.0
    n = len(points)
    for i in range(n):
        x0, y0 = points[i]
        x1, y1 = points[(i + 1) % n]
        c = x0 * y1 - x1 * y0
        a += c
        cx += (x0 + x1) * c
        cy += (y0 + y1) * c
    return cx / (3 * a), cy / (3 * a)
