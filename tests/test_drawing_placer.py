"""The placer's array screening gives exactly the scalar tests' answers (layout determinism).

The drawing layout screens all trial spots of a leader in one array pass; the sheet must not
depend on which version ran. Random scenes include the degenerate cases the scalar code
branches on: segments parallel to a box side, collinear and touching segments, points on
polygon edges, spots on exact grid values.
"""

from __future__ import annotations

import random

from prismfab.drawing.geom import box_hits_segment
from prismfab.drawing.placer import Placer, _contains, _segments_cross

P2 = tuple[float, float]
GRID = (0.0, 1.0, 2.0, 2.5, 4.0, 5.0)  # exact values: shared coordinates, parallel edges


def _coord(rng: random.Random) -> float:
    return rng.choice(GRID) if rng.random() < 0.4 else rng.uniform(-1.0, 6.0)


def _point(rng: random.Random) -> P2:
    return _coord(rng), _coord(rng)


def _box(rng: random.Random) -> tuple[float, float, float, float]:
    x, y = _point(rng)
    return x, y, x + rng.choice((0.0, 0.5, 1.0, rng.uniform(0.1, 3.0))), \
        y + rng.choice((0.0, 0.5, 1.0, rng.uniform(0.1, 3.0)))


def _scene(seed: int) -> tuple[Placer, random.Random]:
    rng = random.Random(seed)
    placer = Placer((rng.uniform(-2.0, 0.5), rng.uniform(-2.0, 0.5), rng.uniform(4.5, 7.0),
                     rng.uniform(4.5, 7.0)))
    for _ in range(rng.randint(0, 6)):
        placer.add_box(_box(rng))
    for _ in range(rng.randint(0, 12)):
        p = _point(rng)
        q = p if rng.random() < 0.05 else _point(rng)  # a zero-length segment now and then
        placer.add_segment(p, q)
    for _ in range(rng.randint(0, 2)):
        placer.add_region([_point(rng) for _ in range(rng.randint(3, 5))])
    return placer, rng


def test_free_many_is_free() -> None:
    """free_many(boxes) == [free(b) for b in boxes] over many random scenes."""
    for seed in range(300):
        placer, rng = _scene(seed)
        boxes = [_box(rng) for _ in range(25)]
        assert placer.free_many(boxes) == [placer.free(b) for b in boxes], seed


def test_legs_clear_is_the_scalar_leg_test() -> None:
    """legs_clear == no text box hit, no line crossed, no view crossed (cross_views: ignored)."""
    for seed in range(300):
        placer, rng = _scene(seed)
        legs = [(_point(rng), _point(rng)) for _ in range(25)]
        for cross_views in (False, True):
            expected = [not (any(box_hits_segment(b, p, q) for b in placer.boxes)
                             or any(_segments_cross(p, q, a, b) for a, b in placer.segments)
                             or (not cross_views and placer.crosses_region(p, q)))
                        for p, q in legs]
            assert placer.legs_clear(legs, cross_views=cross_views) == expected, seed


def test_crosses_many_and_prefilters_are_exact() -> None:
    """crosses_many, hits_box and crosses_segments agree with the unfiltered scalar tests."""
    for seed in range(300):
        placer, rng = _scene(seed)
        legs = [(_point(rng), _point(rng)) for _ in range(25)]
        plain = [any(_segments_cross(p, q, a, b) for a, b in placer.segments) for p, q in legs]
        assert placer.crosses_many(legs) == plain, seed
        assert [placer.crosses_segments(p, q) for p, q in legs] == plain, seed
        assert [placer.hits_box(p, q) for p, q in legs] == \
            [any(box_hits_segment(b, p, q) for b in placer.boxes) for p, q in legs], seed


def test_points_in_polygon_matches_even_odd_rule() -> None:
    """The array point-in-polygon test is the scalar even-odd rule, vertices and edges included."""
    import numpy as np

    from prismfab.drawing.screen import points_in_polygon

    rng = random.Random(7)
    for _ in range(200):
        poly = [_point(rng) for _ in range(rng.randint(3, 6))]
        pts = [_point(rng) for _ in range(20)] + list(poly)
        xs, ys = np.array([p[0] for p in pts]), np.array([p[1] for p in pts])
        assert points_in_polygon(poly, xs, ys).tolist() == [_contains(tuple(poly), p) for p in pts]


def test_leg_crossings_counts_thin_lines_and_keeps_off_others() -> None:
    """A leg may cross placed lines (counted) but not text, not a kept-off line, and not come
    within the clearance of one (measured from a little way along the leg)."""
    placer = Placer((-100.0, -100.0, 100.0, 100.0))
    placer.add_segment((5.0, -5.0), (5.0, 5.0))
    placer.add_segment((8.0, -5.0), (8.0, 5.0))
    placer.add_box((12.0, 20.0, 14.0, 22.0))
    leg = ((0.0, 0.0), (10.0, 0.0))
    assert placer.leg_crossings([leg], cross_views=False) == [2]
    assert placer.legs_clear([leg], cross_views=False) == [False]
    assert placer.leg_crossings([((0.0, 21.0), (20.0, 21.0))], cross_views=False) == [None]
    keep = [((9.0, -5.0), (9.0, 5.0))]
    assert placer.leg_crossings([leg], cross_views=False, keep_off=keep) == [None]
    near = [((12.0, 0.5), (20.0, 0.5))]  # in line beyond the leg, 2 mm off its end
    assert placer.leg_crossings([leg], cross_views=False, keep_off=near) == [2]
    assert placer.leg_crossings([leg], cross_views=False, keep_off=near, clear_mm=1.2) == [2]
    beside = [((4.0, 0.5), (10.0, 0.5))]  # runs along the leg 0.5 mm off
    assert placer.leg_crossings([leg], cross_views=False, keep_off=beside, clear_mm=1.2) == [None]
