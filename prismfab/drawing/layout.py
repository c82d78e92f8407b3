"""Lay out one part's fabrication drawing as a neutral ``Sheet``.

The whole sheet is in paper millimetres: frame, title block and tables at 1:1, the two views of
the part scaled by a factor from the ISO 5455 series: the largest at which both views, with all
their dimensions, letters and callouts, fit the template's view area (text sizes stay the same
on paper at every scale). Dimensions keep their paper geometry and the model value they state,
so a backend can set its length factor to 1/scale and measure true part sizes.
"""

from __future__ import annotations

from collections.abc import Callable

from prismfab.drawing import annotate, hang, overlap, tables
from prismfab.drawing.extent import bbox, translate, union
from prismfab.drawing.frame import frame, revision_table, title_block
from prismfab.drawing.geom import Rect
from prismfab.drawing.sheet import Entity, Sheet
from prismfab.drawing.template import SheetTemplate, load_template
from prismfab.errors import SpecError
from prismfab.model import DocumentInfo, Part

__all__ = ["ISO_5455_SCALES", "choose_scale", "layout_part"]

ISO_5455_SCALES = ((50, 1), (20, 1), (10, 1), (5, 1), (2, 1), (1, 1), (1, 2), (1, 5), (1, 10),
                   (1, 20))
"""Recommended scales of ISO 5455 (enlargement, full size, reduction), largest first."""
VIEW_GAP_MM = 6.0  # free paper between the two views' annotations
AREA_PAD_MM = 1.5  # free paper between the views and the edge of the view area
SURE_MM = 1e-6  # rounding margin of the early size check (paper mm)
CROWDED_TRIES = 2  # smaller scales tried after the largest that fits still has text collisions


def _groups(part: Part, scale: float, text_h: float, projection: str, decimal_comma: bool
            ) -> tuple[list[Entity], Rect]:
    """Both views with everything attached, placed side by side (first or third angle).

    Returns the entities and their bounding box, in paper mm about an arbitrary origin.
    """
    main = annotate.main_start(part, scale, text_h=text_h, decimal_comma=decimal_comma)
    side = annotate.side_start(part, scale, text_h=text_h, decimal_comma=decimal_comma)
    done = _finish(main, side, text_h, projection)
    assert done is not None  # no room given: always finished
    return done[0], done[1]


def _finish(main_started: annotate.Started, side_started: annotate.Started, text_h: float,
            projection: str, room: tuple[float, float] | None = None
            ) -> tuple[list[Entity], Rect, int] | None:
    """Finish both groups, clear their text collisions and set them side by side.

    Returns the entities, their bounding box and the number of text collisions left
    (``overlap.resolve``); None as soon as the views overflow ``room``.

    Args:
        room: the width and height (paper mm) the views must fit, checked after every stage
            of the main view (its bounding box only grows); None to finish regardless.
    """
    side, side_left = overlap.resolve(annotate.side_finish(side_started), text_h)
    sb = bbox(side, text_h)
    assert sb is not None  # both views always draw an outline
    keep_going = None if room is None else _room_check(main_started, sb, text_h, room)
    main = annotate.main_finish(main_started, keep_going=keep_going, room=None if room is None
                                else lambda ents: _room_left(ents, sb, text_h, room))
    if main is None:
        return None
    limit = _room_left(main, sb, text_h, room)
    main, main_left = overlap.resolve(main, text_h, limit=limit, memo=main_started.memo)
    hung = hang.hang_angle_texts(main, main_started.entities, text_h, limit=limit)
    if hung != main:
        left = len(overlap.collisions(hung, text_h))
        if left <= main_left:
            main, main_left = hung, left
    mb = bbox(main, text_h)
    assert mb is not None and sb is not None  # both views always draw an outline
    # The second view sees the part from +X: first angle puts it left of the section, third right.
    dx = mb[0] - VIEW_GAP_MM - sb[2] if projection == "first-angle" else mb[2] + VIEW_GAP_MM - sb[0]
    side = [translate(e, dx, 0.0) for e in side]
    both = main + side
    box = bbox(both, text_h)
    assert box is not None
    return both, box, side_left + main_left


def _room_left(main: list[Entity], sb: Rect, text_h: float, room: tuple[float, float] | None
               ) -> Rect | None:
    """Where the main view may grow while both views still fit ``room`` (None: anywhere).

    The spare width and height may be taken on either side (paper mm, main view frame).
    """
    if room is None:
        return None
    mb = bbox(main, text_h)
    assert mb is not None
    spare_w = room[0] - (mb[2] - mb[0] + VIEW_GAP_MM + sb[2] - sb[0])
    y0, y1 = min(mb[1], sb[1]), max(mb[3], sb[3])
    spare_h = room[1] - (y1 - y0)
    if spare_w < 0 or spare_h < 0:
        return None  # does not fit anyway
    return mb[0] - spare_w, y0 - spare_h, mb[2] + spare_w, y1 + spare_h


def _room_check(main: annotate.Started, sb: Rect, text_h: float, room: tuple[float, float]
                ) -> Callable[[list[Entity]], bool]:
    """A ``keep_going`` test: the views, as far as laid out, still fit ``room``."""
    box = bbox(main.entities, text_h)
    assert box is not None

    def keep_going(new: list[Entity]) -> bool:
        nonlocal box
        grown = bbox(new, text_h)
        if grown is not None:
            box = union([box, grown])  # type: ignore[list-item]
        assert box is not None
        w = box[2] - box[0] + VIEW_GAP_MM + sb[2] - sb[0]
        h = max(box[3], sb[3]) - min(box[1], sb[1])
        return w <= room[0] + SURE_MM and h <= room[1] + SURE_MM

    return keep_going


def _least_size(main: annotate.Started, side: annotate.Started, text_h: float
                ) -> tuple[float, float]:
    """Width and height (paper mm) the two views need at least, from their started entities.

    The finished groups hold these entities and more, and the layout sets the views side by
    side ``VIEW_GAP_MM`` apart, so the finished layout is never smaller than this.
    """
    mb, sb = bbox(main.entities, text_h), bbox(side.entities, text_h)
    assert mb is not None and sb is not None
    return (mb[2] - mb[0] + VIEW_GAP_MM + sb[2] - sb[0],
            max(mb[3], sb[3]) - min(mb[1], sb[1]))


def choose_scale(part: Part, area_w_mm: float, area_h_mm: float, *, text_h: float = 3.5,
                 projection: str = "first-angle", decimal_comma: bool = False) -> tuple[float, str]:
    """Largest ISO 5455 scale at which both views with their dimensions fit the view area."""
    found = _fit(part, area_w_mm, area_h_mm, text_h, projection, decimal_comma)
    assert found is not None  # without a larger sheet the smallest scale is always laid out
    return found[:2]  # type: ignore[return-value]


LARGER_SHEET = {"a4-landscape": "a3-landscape"}
"""Built-in sheet to move to when no ISO 5455 scale fits the views on the requested one."""


def _fit(part: Part, area_w_mm: float, area_h_mm: float, text_h: float, projection: str,
         decimal_comma: bool, *, larger: bool = False
         ) -> tuple[float, str, list[Entity], Rect, bool] | None:
    """The largest scale whose full layout fits with no text collision, and True; else the
    largest scale that fits with collisions left (or the smallest scale's layout), and False.
    With ``larger`` (a larger sheet can be used instead), None rather than a layout that does
    not fit: the smallest scale is then not laid out in full when it is sure to overflow.

    A scale is laid out in full (leaders and callouts are the costly part) only when neither the
    bare views nor the views with their dimensions alone already overflow the area. Text keeps
    its size at every scale, so a view too crowded at one scale is tried at no more than
    ``CROWDED_TRIES`` smaller ones.
    """
    xs = [p[0] for p in part.prism.vertices_mm]
    ys = [p[1] for p in part.prism.vertices_mm]
    bare_w = max(xs) - min(xs) + part.prism.height_mm
    bare_h = max(ys) - min(ys)
    room_w, room_h = area_w_mm - 2 * AREA_PAD_MM, area_h_mm - 2 * AREA_PAD_MM
    crowded: tuple[float, str, list[Entity], Rect, bool] | None = None
    tries = 0
    for k, (num, den) in enumerate(ISO_5455_SCALES):
        if crowded is not None and tries >= CROWDED_TRIES:
            return crowded
        scale = num / den
        final = k == len(ISO_5455_SCALES) - 1 and not larger
        if not final and (scale * bare_w > area_w_mm or scale * bare_h > area_h_mm):
            continue  # the bare views alone are too big: no need to lay it out
        main = annotate.main_start(part, scale, text_h=text_h, decimal_comma=decimal_comma)
        side = annotate.side_start(part, scale, text_h=text_h, decimal_comma=decimal_comma)
        least_w, least_h = _least_size(main, side, text_h)
        if not final and (least_w > room_w + SURE_MM or least_h > room_h + SURE_MM):
            continue  # the dimensions alone overflow: the finished views would too
        done = _finish(main, side, text_h, projection, None if final else (room_w, room_h))
        if done is None:
            continue  # a callout stage already overflowed: the finished views would too
        ents, box, left = done
        fits = box[2] - box[0] <= room_w and box[3] - box[1] <= room_h
        if fits and left == 0:
            return scale, f"{num}:{den}", ents, box, True
        if fits and crowded is None:
            crowded = (scale, f"{num}:{den}", ents, box, False)
        if crowded is not None:
            tries += 1
        if final:
            return crowded if crowded is not None else (scale, f"{num}:{den}", ents, box, False)
    if larger:
        return crowded
    raise AssertionError("the last ISO 5455 scale is always laid out")


def _title_values(part: Part, info: DocumentInfo, t: SheetTemplate, scale_text: str) -> dict[str, str]:
    title = info.title or part.title
    return {
        "company": info.company, "number": info.number or part.number, "revision": info.revision,
        "date": info.date, "sheet": info.sheet,
        "title": f"{title}\n{info.scenario}" if info.scenario else title,
        "approved_by": info.approved_by, "drawn_by": info.drawn_by, "checked_by": info.checked_by,
        "document_type": info.document_type, "scale": scale_text, "units": "mm", "paper": t.paper,
        "quantity": str(part.quantity), "material": part.material_name, "scenario": info.scenario,
    }


def layout_part(part: Part, info: DocumentInfo, *, template: str = "a3-landscape",
                projection: str = "first-angle", decimal_comma: bool = False) -> Sheet:
    """The fabrication drawing of one part.

    Args:
        part: the part (geometry in the part frame, fabrication data).
        info: title-block and revision data.
        template: a template name in templates/sheets or the path of a template YAML file.
        projection: "first-angle" (ISO E) or "third-angle".
        decimal_comma: write decimals with a comma (ISO 129-1) instead of a point.

    Raises:
        SpecError: unknown template or projection.
    """
    if projection not in ("first-angle", "third-angle"):
        raise SpecError("sheet.projection", f"is {projection!r}",
                        fix="use first-angle or third-angle")
    while True:
        t = load_template(template)
        rev, rev_top = revision_table(t, info.revisions)
        table, table_bottom = tables.face_table(part, t.face_table, text_h=t.text("table"),
                                                decimal_comma=decimal_comma)
        vx, vy, vw, vh = _clear_of_marks(t, _area(t.views, rev_top, table_bottom))
        nx, ny, nw, nh = _clear_of_marks(t, _area(t.notes, rev_top, table_bottom))
        th = t.text("dimension")
        found = _fit(part, vw, vh, th, projection, decimal_comma,
                     larger=template in LARGER_SHEET)
        if found is not None and (found[4] or template not in LARGER_SHEET):
            scale, scale_text, views, box, _ = found
            break
        template = LARGER_SHEET[template]  # the views do not fit: use the next larger sheet
    out: list[Entity] = list(frame(t))
    dx = vx + (vw - (box[2] - box[0])) / 2 - box[0]
    dy = vy + (vh - (box[3] - box[1])) / 2 - box[1]
    out += title_block(t, _title_values(part, info, t, scale_text), projection)
    out += rev
    out += table
    tol, tol_bottom = tables.tolerance_table(part, nx, ny + nh - 1, nw, text_h=t.text("notes"),
                                             decimal_comma=decimal_comma)
    out += tol
    notes, _ = tables.notes_block(tables.general_notes(part, scale_text=scale_text), nx,
                                  tol_bottom - 3, nw, text_h=t.text("notes"))
    out += notes
    out += [translate(e, dx, dy) for e in views]
    return Sheet(
        width_mm=t.width_mm, height_mm=t.height_mm, scale=scale, scale_text=scale_text,
        template=t.name, projection=projection, number=info.number or part.number,
        revision=info.revision, title=info.title or part.title, entities=tuple(out),
        dimension_text_mm=t.text("dimension"), view_entities=len(views),
    )


def _area(box: tuple[float, float, float, float], rev_top: float, table_bottom: float
          ) -> tuple[float, float, float, float]:
    x, y, w, h = box
    if y == 0:
        y = rev_top + 3.0
    if h == 0:
        h = table_bottom - 3.0 - y
    return x, y, w, h


def _clear_of_marks(t: SheetTemplate, box: tuple[float, float, float, float]
                    ) -> tuple[float, float, float, float]:
    """The box shrunk to keep 1 mm clear of the frame line and of the centring marks on it."""
    x, y, w, h = box
    fx, fy, fw, fh = t.frame_box
    keep = t.centring_mark_mm / 2 + 1.0
    x0 = fx + keep if x <= fx + keep else x + 1.0
    x1 = fx + fw - keep if x + w >= fx + fw - keep else x + w - 1.0
    y0 = fy + keep if y <= fy + keep else y
    y1 = min(y + h, fy + fh - keep)
    return x0, y0, x1 - x0, y1 - y0
