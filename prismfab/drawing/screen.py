"""Array versions of the placer's tests, for screening many trial spots at once (paper mm).

Each function gives, for many boxes or segments together, exactly what the scalar test in
``geom`` / ``placer`` gives for each one: the same IEEE operations in the same order, element by
element, so a layout does not depend on which version ran. Degenerate cases (a segment parallel
to a box side, a polygon edge parallel to x) are masked exactly as the scalar code branches.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

__all__ = ["boxes_hit_segments", "points_in_polygon", "segments_cross"]

P2 = tuple[float, float]
Array = Any  # numpy.ndarray
PARALLEL = 1e-12  # |direction component| below which a segment counts as parallel to an axis
NEAR_MM = 1e-6  # bounding boxes farther apart than this cannot hold crossing segments (as placer)


def boxes_hit_segments(boxes: Array, segments: Array, reach: Array | None = None) -> Array:
    """``geom.box_hits_segment`` for every box (rows) against every segment (columns).

    Args:
        boxes: (B, 4) array of x0, y0, x1, y1.
        segments: (S, 4) array of px, py, qx, qy.
        reach: optional (S, 4) bounding boxes of the segments grown by a small margin; pairs
            whose boxes do not meet are answered False without the exact test (which would
            answer False too).

    Returns:
        (B, S) bool array: True where the segment crosses or lies in the box.
    """
    out = np.zeros((boxes.shape[0], segments.shape[0]), dtype=bool)
    if reach is None:
        rows, cols = np.indices(out.shape).reshape(2, -1)
    else:
        near = ((reach[:, 0] <= boxes[:, 2:3]) & (boxes[:, 0:1] <= reach[:, 2])
                & (reach[:, 1] <= boxes[:, 3:4]) & (boxes[:, 1:2] <= reach[:, 3]))
        rows, cols = np.nonzero(near)
    if rows.size:
        out[rows, cols] = _liang_barsky(boxes[rows], segments[cols])
    return out


def _liang_barsky(boxes: Array, segments: Array) -> Array:
    """Pairwise (row i with row i) version of ``geom.box_hits_segment``."""
    x0, y0, x1, y1 = boxes.T
    px, py, qx, qy = segments.T
    dx, dy = qx - px, qy - py
    t0, t1 = np.zeros(len(px)), np.ones(len(px))
    fail = np.zeros(len(px), dtype=bool)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for pk, qk in ((-dx, px - x0), (dx, x1 - px), (-dy, py - y0), (dy, y1 - py)):
            flat = np.abs(pk) < PARALLEL
            fail |= flat & (qk < 0)
            t = qk / pk
            t0 = np.where(~flat & (pk < 0), np.maximum(t0, t), t0)
            t1 = np.where(~flat & (pk >= 0), np.minimum(t1, t), t1)
    # t0 only grows and t1 only shrinks, so "t0 > t1 at some step" is "t0 > t1 at the end"
    return ~fail & ~(t0 > t1)


def _orient(ax: Array, ay: Array, bx: Array, by: Array, cx: Array, cy: Array) -> Array:
    return (bx - ax) * (cy - ay) - (by - ay) * (cx - ax)


def segments_cross(first: Array, second: Array) -> Array:
    """``placer._segments_cross`` for every segment of ``first`` against every one of ``second``.

    Pairs whose bounding boxes are apart by more than ``NEAR_MM`` cannot cross and are answered
    without the orientation test.

    Args:
        first: (F, 4) array of ax, ay, bx, by.
        second: (S, 4) array of cx, cy, dx, dy.

    Returns:
        (F, S) bool array: True where the two segments properly cross.
    """
    out = np.zeros((first.shape[0], second.shape[0]), dtype=bool)
    f_lo, f_hi = np.minimum(first[:, :2], first[:, 2:]), np.maximum(first[:, :2], first[:, 2:])
    s_lo, s_hi = np.minimum(second[:, :2], second[:, 2:]), np.maximum(second[:, :2], second[:, 2:])
    near = ((s_lo[:, 0] <= f_hi[:, 0:1] + NEAR_MM) & (f_lo[:, 0:1] - NEAR_MM <= s_hi[:, 0])
            & (s_lo[:, 1] <= f_hi[:, 1:2] + NEAR_MM) & (f_lo[:, 1:2] - NEAR_MM <= s_hi[:, 1]))
    rows, cols = np.nonzero(near)
    if not rows.size:
        return out
    ax, ay, bx, by = first[rows].T
    cx, cy, dx, dy = second[cols].T
    one = _orient(ax, ay, bx, by, cx, cy) * _orient(ax, ay, bx, by, dx, dy) < 0
    two = _orient(cx, cy, dx, dy, ax, ay) * _orient(cx, cy, dx, dy, bx, by) < 0
    out[rows, cols] = one & two
    return out


def points_in_polygon(polygon: Sequence[P2], xs: Array, ys: Array) -> Array:
    """``placer._contains`` (even-odd rule) for many points; bool array like ``xs``."""
    inside = np.zeros(xs.shape, dtype=bool)
    n = len(polygon)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for i in range(n):
            (x0, y0), (x1, y1) = polygon[i], polygon[(i + 1) % n]
            spans = (y0 > ys) != (y1 > ys)
            if not spans.any():
                continue
            x = x0 + (ys - y0) * (x1 - x0) / (y1 - y0)
            inside ^= spans & (xs < x)
    return inside


def polygon_edges(polygon: Sequence[P2]) -> Array:
    """(N, 4) array of a closed polygon's edges."""
    n = len(polygon)
    return np.array([(*polygon[i], *polygon[(i + 1) % n]) for i in range(n)], dtype=float)
