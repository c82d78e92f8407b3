"""Text collisions in the views: the starter parts read cleanly, and the collision pass works."""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from prismfab.drawing import layout, layout_part, overlap
from prismfab.drawing.sheet import AlignedDim, AngularDim, Circle, Layer, Polyline, Sheet
from prismfab.model import Part
from prismfab.pipeline import run
from prismfab.spec.load import load_spec
from tests.fixtures import sample_info

SPECS = sorted((Path(__file__).parent.parent / "templates" / "specs").glob("*.yaml"))
TEXT_H = 3.5


def _starter_parts() -> list[tuple[str, Part, str, str]]:
    out = []
    for path in SPECS:
        spec = load_spec(path)
        for part in run(spec).parts:
            out.append((f"{path.stem}:{part.number}", part, spec.sheet.template,
                        spec.sheet.projection))
    return out


@pytest.fixture(scope="module")
def starter_sheets() -> dict[str, Sheet]:
    return {name: layout_part(part, sample_info(), template=template, projection=projection)
            for name, part, template, projection in _starter_parts()}


def _views(sheet: Sheet) -> tuple:  # type: ignore[type-arg]
    assert sheet.view_entities > 0
    return sheet.entities[-sheet.view_entities:]


def test_every_starter_spec_is_laid_out(starter_sheets: dict[str, Sheet]) -> None:
    """Each starter spec gives at least one part drawing (the check below is not vacuous)."""
    assert len(SPECS) >= 7
    assert {name.split(":")[0] for name in starter_sheets} == {p.stem for p in SPECS}


def test_starter_views_have_no_text_collisions(starter_sheets: dict[str, Sheet]) -> None:
    """No two text boxes of the views overlap and none crosses the outline or a clear aperture
    line (ISO 129-1: dimension text is not crossed or separated by any line; common practice
    for letters and callouts)."""
    bad = {name: overlap.collisions(_views(s), s.dimension_text_mm)
           for name, s in starter_sheets.items()}
    assert {k: v for k, v in bad.items() if v} == {}


def test_collisions_finds_an_overlap_and_an_outline_crossing() -> None:
    """The checker sees text on text and text on the outline (it can fail)."""
    outline = Polyline(((0.0, 0.0), (40.0, 0.0), (40.0, 30.0), (0.0, 30.0)), closed=True,
                       layer=Layer.OUTLINE)
    a = AlignedDim((0.0, 40.0), (30.0, 40.0), -9.0, 6.0, 5.0, "6.00 ±0.10", (15.0, 41.0))
    b = AngularDim((0.0, 0.0), (1.0, 0.0), (0.0, 1.0), 6.0, 90.0, "90° ±5′", (17.0, 41.5))
    on_line = AngularDim((40.0, 0.0), (41.0, 0.0), (40.0, 1.0), 6.0, 90.0, "(90°)", (40.0, 15.0))
    found = overlap.collisions([outline, a, b, on_line], TEXT_H)
    assert len(found) == 2
    assert any("overlaps" in f for f in found) and any("outline" in f for f in found)


def test_resolve_slides_a_length_text_along_its_line() -> None:
    """A length text on top of another moves along its own dimension line, nothing else."""
    outline = Polyline(((0.0, 0.0), (60.0, 0.0), (60.0, 30.0), (0.0, 30.0)), closed=True,
                       layer=Layer.OUTLINE)
    length = AlignedDim((60.0, 30.0), (0.0, 30.0), -9.0, 12.0, 5.0, "12.00 ±0.10", (30.0, 41.0))
    letter = Circle((30.0, 42.5), 0.8 * TEXT_H, layer=Layer.ANNOTATION)  # a fixed box in the way
    ents, left = overlap.resolve([outline, letter, length], TEXT_H)
    assert left == 0 and overlap.collisions(ents, TEXT_H) == []
    moved = ents[2]
    assert isinstance(moved, AlignedDim)
    dx, dy = moved.text_pos[0] - 30.0, moved.text_pos[1] - 41.0
    assert abs(dy) < 1e-9 and abs(dx) > 1.0  # along the horizontal line only
    assert ents[:2] == [outline, letter]


def test_resolve_moves_an_angle_outward_with_its_arc() -> None:
    """An angle on extended legs whose text is covered moves outward, its arc kept or grown
    under it, and the arc runs through no text."""
    outline = Polyline(((0.0, 0.0), (30.0, 0.0), (0.0, 30.0)), closed=True, layer=Layer.OUTLINE)
    vx = (0.0, 0.0)  # the corner; the angle stands on the legs extended to -x and -y
    angle = AngularDim(vx, (-0.3, 0.0), (0.0, -0.3), 8.0, 90.0, "90° ±5′", (-12.0, -12.0))
    blocker = Polyline(((-22.0, -14.5), (-2.0, -14.5), (-2.0, -9.5), (-22.0, -9.5)), closed=True,
                       layer=Layer.ANNOTATION)
    ents, left = overlap.resolve([outline, blocker, angle], TEXT_H)
    assert left == 0
    moved = ents[2]
    assert isinstance(moved, AngularDim)
    assert moved.radius_mm >= angle.radius_mm
    assert math.dist(moved.text_pos, vx) > math.dist(angle.text_pos, vx)
    assert math.dist(moved.text_pos, vx) > moved.radius_mm  # the text stands beyond its arc
    a1, a2 = (math.radians(a) for a in moved.arc_deg())
    sweep = (a2 - a1) % (2 * math.pi)
    r = moved.radius_mm
    arc = [(r * math.cos(a1 + sweep * k / 32), r * math.sin(a1 + sweep * k / 32))
           for k in range(33)]
    assert not any(-22.0 < x < -2.0 and -14.5 < y < -9.5 for x, y in arc)


def test_fixed_boxes_that_collide_are_counted() -> None:
    """Two face letters on each other cannot be moved: the pass reports the collision."""
    ents = [Circle((0.0, 0.0), 2.8, layer=Layer.ANNOTATION),
            Circle((1.0, 0.0), 2.8, layer=Layer.ANNOTATION)]
    out, left = overlap.resolve(ents, TEXT_H)
    assert out == ents and left == 1


def test_unresolved_collisions_move_the_drawing_to_the_larger_sheet(monkeypatch: pytest.MonkeyPatch
                                                                    ) -> None:
    """A view left with a collision at every scale does not fit: A4 gives way to A3, and the
    largest scale that fits the area is kept."""
    from tests.fixtures import sample_part

    part = sample_part()
    clean = layout_part(part, sample_info(), template="a4-landscape")
    real = overlap.resolve
    monkeypatch.setattr(overlap, "resolve",
                        lambda e, th, limit=None, memo=None: (real(e, th, limit=limit)[0], 1))
    crowded = layout_part(part, sample_info(), template="a4-landscape")
    assert crowded.template == "a3-landscape"
    assert crowded.scale >= clean.scale
    scales = [n / d for n, d in layout.ISO_5455_SCALES]
    assert crowded.scale in scales


def test_a_thin_line_through_a_text_is_counted() -> None:
    """A dimension's extension line or a leader leg running through another dimension's text
    is a collision; a dimension's own line under its own text is not (ISO 129-1: dimension
    text is not crossed by any line)."""
    from prismfab.drawing.sheet import Leader, Line

    own = AlignedDim((0.0, 0.0), (40.0, 0.0), -9.0, 8.0, 5.0, "8.00 ±0.10", (20.0, 11.75))
    assert overlap.collisions([own], TEXT_H) == []
    through = Line((20.0, 5.0), (20.0, 20.0), layer=Layer.DIMENSION)  # vertical, across the text
    found = overlap.collisions([own, through], TEXT_H)
    assert found == ["Line 'Line' runs through AlignedDim '8.00 ±0.10'"]
    beside = Line((38.0, 5.0), (38.0, 20.0), layer=Layer.DIMENSION)  # clear of the text box
    assert overlap.collisions([own, beside], TEXT_H) == []
    leg = Leader(((0.0, 12.0), (40.0, 12.0)), ("note",), (60.0, 14.0), 2.5, arrow=False)
    assert any("runs through" in f for f in overlap.collisions([own, leg], TEXT_H))


def test_resolve_slides_a_text_off_a_crossing_line() -> None:
    """A length text crossed by a thin line moves along its dimension line until clear."""
    own = AlignedDim((0.0, 0.0), (40.0, 0.0), -9.0, 8.0, 5.0, "8.00 ±0.10", (20.0, 11.75))
    from prismfab.drawing.sheet import Line

    through = Line((20.0, 5.0), (20.0, 20.0), layer=Layer.DIMENSION)
    ents, left = overlap.resolve([through, own], TEXT_H)
    assert left == 0 and overlap.collisions(ents, TEXT_H) == []
    moved = ents[1]
    assert isinstance(moved, AlignedDim) and abs(moved.text_pos[1] - 11.75) < 1e-9
    assert abs(moved.text_pos[0] - 20.0) > 1.0


def test_a_dimension_crossed_by_its_own_extension_line_is_counted() -> None:
    """A length text standing across one of its own extension lines is a collision; on its own
    dimension line between them, or beyond one on the line run on, it is not (ISO 129-1: the
    value is not crossed by any line)."""
    between = AlignedDim((0.0, 0.0), (40.0, 0.0), 9.0, 8.0, 5.0, "8.00 ±0.10", (20.0, 11.75))
    across = AlignedDim((0.0, 0.0), (40.0, 0.0), 9.0, 8.0, 5.0, "8.00 ±0.10", (40.0, 11.75))
    beyond = AlignedDim((0.0, 0.0), (40.0, 0.0), 9.0, 8.0, 5.0, "8.00 ±0.10", (55.0, 11.75))
    assert overlap.collisions([between], TEXT_H) == []
    assert overlap.collisions([beyond], TEXT_H) == []
    assert overlap.collisions([across], TEXT_H) == [
        "AlignedDim '8.00 ±0.10' is crossed by its own extension line"]


def test_resolve_moves_a_text_wider_than_its_line_beyond_the_far_end() -> None:
    """A text too wide for its dimension line, blocked beyond one end, goes beyond the other
    end rather than across an extension line (common practice)."""
    short = AlignedDim((0.0, 0.0), (10.0, 0.0), 9.0, 2.0, 5.0, "2.00 ±0.10", (-17.0, 11.75))
    assert overlap.collisions([short], TEXT_H) == []  # beyond its start, on the line run on
    from prismfab.drawing.sheet import Text

    block = Text((-30.0, 12.0), "NOTE " * 3, TEXT_H, 0.0, "center", "middle")  # a note there
    ents, left = overlap.resolve([block, short], TEXT_H)
    assert left == 0 and overlap.collisions(ents, TEXT_H) == []
    moved = ents[1]
    assert isinstance(moved, AlignedDim) and moved.text_pos[0] > 10.0


RAY_LABEL = "ray path for reference"


def test_starter_ray_paths_carry_their_label(starter_sheets: dict[str, Sheet]) -> None:
    """The reference ray path is labelled on the section where there is room (common practice:
    a reference line is named where it is drawn); the leader starts on the ray's chain line.
    The periscope drawing (custom) and the first wedge have their drawn ray leads boxed in by
    dimension texts (and a full sheet), so their rays are named by the notes only."""
    from prismfab.drawing.sheet import Leader

    for name, sheet in starter_sheets.items():
        views = _views(sheet)
        labels = [e for e in views if isinstance(e, Leader) and e.lines == (RAY_LABEL,)]
        if name.startswith(("custom:", "wedge:FS-1550-01")):
            continue
        assert len(labels) == 1, name
        tip = labels[0].points[0]
        ray = [s for e in views if isinstance(e, Polyline) and e.layer is Layer.RAY
               for s in zip(e.points, e.points[1:], strict=False)]
        assert min(_point_to_segment(tip, p, q) for p, q in ray) < 1e-6, name


def _point_to_segment(c: tuple[float, float], p: tuple[float, float], q: tuple[float, float]
                      ) -> float:
    dx, dy = q[0] - p[0], q[1] - p[1]
    t = max(0.0, min(1.0, ((c[0] - p[0]) * dx + (c[1] - p[1]) * dy) / (dx * dx + dy * dy)))
    return math.dist(c, (p[0] + t * dx, p[1] + t * dy))


def test_wedge_dimension_texts_are_not_stacked(starter_sheets: dict[str, Sheet]) -> None:
    """No two dimension or angle values stand one over the other like one two-line value
    (ISO 129-1: each value is read with its own dimension line; common practice). The wedge's
    apex-flat width and the obtuse angle beside it were once stacked so."""
    from prismfab.drawing.textbox import angle_box, dim_box, stacked

    for name, sheet in starter_sheets.items():
        if not name.startswith("wedge:"):
            continue
        th = sheet.dimension_text_mm
        boxes = [(e.text, dim_box(e, th) if not isinstance(e, AngularDim) else angle_box(e, th))
                 for e in _views(sheet) if isinstance(e, AlignedDim | AngularDim)]
        pairs = [(a, b) for k, (a, ba) in enumerate(boxes) for b, bb in boxes[k + 1:]
                 if stacked(ba, bb, th)]
        assert pairs == [], name


def test_stacked_sees_two_lines_one_over_the_other() -> None:
    """The stacking test can fail: parallel lines close across and overlapping along are
    stacked; side by side, far apart across, turned, or a letter circle are not."""
    from prismfab.drawing.textbox import Box, stacked

    line = Box((0.0, 0.0), 10.0, 2.3)
    assert stacked(line, Box((2.0, 5.0), 9.0, 2.3), TEXT_H)
    assert not stacked(line, Box((25.0, 5.0), 9.0, 2.3), TEXT_H)  # side by side
    assert not stacked(line, Box((2.0, 9.0), 9.0, 2.3), TEXT_H)  # a clear gap between
    assert not stacked(line, Box((2.0, 5.0), 9.0, 2.3, 90.0), TEXT_H)  # crosswise
    assert not stacked(line, Box((2.0, 5.0), 2.3, 2.3), TEXT_H)  # a letter circle


def test_wedge_outside_angle_texts_stand_by_their_arc(starter_sheets: dict[str, Sheet]) -> None:
    """An angle on extended legs has its value next to its arc (common practice: the value
    reads with the arc it belongs to), not several millimetres off it, where there is room
    (on the wedge there is)."""
    from prismfab.drawing.textbox import angle_box, off_arc

    for name, sheet in starter_sheets.items():
        if not name.startswith("wedge:"):
            continue
        far = [e.text for e in _views(sheet) if isinstance(e, AngularDim)
               and off_arc(e, angle_box(e, sheet.dimension_text_mm))]
        assert far == [], name


def _square_below_left() -> Polyline:
    """A section whose corner at (0, 0) has its outside angle in the first quadrant."""
    return Polyline(((0.0, 0.0), (-30.0, 0.0), (-30.0, -30.0), (0.0, -30.0)), closed=True,
                    layer=Layer.OUTLINE)


def test_hang_brings_a_far_angle_text_back_to_its_arc() -> None:
    """An angle on extended legs whose text stands far beyond its arc on free paper comes back
    next to the arc (common practice: the value reads with the arc it belongs to)."""
    from prismfab.drawing.hang import hang_angle_texts
    from prismfab.drawing.textbox import angle_box, off_arc

    angle = AngularDim((0.0, 0.0), (0.3, 0.0), (0.0, 0.3), 6.0, 90.0, "90° ±5′", (18.0, 18.0))
    ents = [_square_below_left(), angle]
    assert off_arc(angle, angle_box(angle, TEXT_H))  # the check below is not vacuous
    out = hang_angle_texts(ents, ents, TEXT_H)
    moved = out[1]
    assert isinstance(moved, AngularDim) and len(out) == 2  # no leader needed
    assert not off_arc(moved, angle_box(moved, TEXT_H))
    assert moved.radius_mm - angle.radius_mm <= 6.0
    assert overlap.collisions(out, TEXT_H) == []


def test_hang_keeps_a_text_that_stands_by_its_arc() -> None:
    """A text next to its first arc is left where it is (nothing to gain)."""
    from prismfab.drawing.hang import hang_angle_texts

    angle = AngularDim((0.0, 0.0), (0.3, 0.0), (0.0, 0.3), 6.0, 90.0, "90° ±5′", (11.0, 8.0))
    ents = [_square_below_left(), angle]
    assert hang_angle_texts(ents, ents, TEXT_H) == ents


def test_hang_puts_a_boxed_in_angle_text_on_a_leader_from_its_arc() -> None:
    """Where text boxes fill the paper next to the arc and the arc may not grow through them,
    the value stands a little farther out on a thin leader that starts on the arc, ends at
    the text's edge, crosses no text and does not run along another line."""
    from prismfab.drawing.geom import text_width_mm
    from prismfab.drawing.hang import hang_angle_texts
    from prismfab.drawing.sheet import Leader, Text
    from prismfab.drawing.textbox import INK_H, Box, box_hits

    angle = AngularDim((0.0, 0.0), (0.3, 0.0), (0.0, 0.3), 6.0, 90.0, "90° ±5′", (30.0, 30.0))
    # Fixed words the arc cannot grow through on one side, a thin line close round the arc
    # on the other: no text fits next to the arc.
    words = [Text((10.5 * math.cos(0.3), 10.5 * math.sin(0.3)), "XX", TEXT_H, h_align="center",
                  v_align="middle")]
    ring = Polyline(tuple((11.0 * math.cos(a), 11.0 * math.sin(a))
                          for a in (0.7 + 0.1 * k for k in range(10))), layer=Layer.DIMENSION)
    ents = [_square_below_left(), angle, *words, ring]
    out = hang_angle_texts(ents, ents, TEXT_H)
    moved = out[1]
    assert isinstance(moved, AngularDim)
    leads = [e for e in out[len(ents):] if isinstance(e, Leader)]
    assert len(leads) == 1 and not leads[0].arrow and leads[0].lines == ()
    start, end = leads[0].points
    assert abs(math.dist(start, moved.vertex) - moved.radius_mm) < 1e-6  # on the arc
    box = Box(moved.text_pos, text_width_mm(moved.text, TEXT_H) / 2, INK_H * TEXT_H / 2)
    x0, y0, x1, y1 = box.hull()
    assert min(abs(end[0] - x0), abs(end[0] - x1), abs(end[1] - y0), abs(end[1] - y1)) < 1e-6
    assert math.dist(start, end) <= 15.0  # a short leader
    assert math.dist(moved.text_pos, moved.vertex) < math.dist(angle.text_pos, angle.vertex)
    assert not any(box_hits(b, start, end) for _, b in overlap.text_items(out, TEXT_H)
                   if b.centre != moved.text_pos)
    assert overlap.collisions(out, TEXT_H) == []


def test_runs_along_sees_a_line_close_beside_and_parallel() -> None:
    """A leader close beside a nearly parallel line reads as one with it; crossing or far
    apart does not."""
    from prismfab.drawing.hang import _runs_along

    lead = ((0.0, 0.0), (10.0, 0.0))
    assert _runs_along(lead, [((-2.0, 1.0), (12.0, 1.5))])
    assert not _runs_along(lead, [((-2.0, 4.0), (12.0, 4.0))])  # far apart
    assert not _runs_along(lead, [((5.0, -5.0), (5.0, 5.0))])  # crossing


def test_fold_auxiliary_angle_hangs_on_a_leader_from_its_arc(
        starter_sheets: dict[str, Sheet]) -> None:
    """The fold starter's auxiliary apex angle, boxed in by its faces' dimensions, reads with
    its arc through a leader that starts on the arc (it once stood 12 mm off it alone)."""
    from prismfab.drawing.sheet import Leader
    from prismfab.drawing.textbox import angle_box, off_arc

    views = _views(next(s for n, s in starter_sheets.items() if n.startswith("fold:")))
    angles = [e for e in views if isinstance(e, AngularDim) and e.text.startswith("(")]
    assert angles
    for e in angles:
        if off_arc(e, angle_box(e, TEXT_H)):
            assert any(isinstance(lead, Leader) and not lead.lines
                       and abs(math.dist(lead.points[0], e.vertex) - e.radius_mm) < 1e-6
                       for lead in views), e.text
