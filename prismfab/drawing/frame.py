"""Sheet furniture: ISO 5457 frame, centring marks and grid, ISO 7200 title block, revision table,
and the ISO 5456-2 projection symbol."""

from __future__ import annotations

from collections.abc import Mapping

from prismfab.drawing.geom import text_width_mm
from prismfab.drawing.sheet import Cell, Circle, Entity, Layer, Line, LineType, Polyline, Table, Text, Width
from prismfab.drawing.template import SheetTemplate

__all__ = ["frame", "grid_fields", "grid_letters", "projection_symbol", "revision_table", "title_block"]

_LETTERS = "ABCDEFGHJKLMNPQRSTUVWXYZ"  # ISO 5457: I and O are not used


def grid_letters(count: int) -> tuple[str, ...]:
    """Row letters of the grid reference system, top to bottom."""
    return tuple(_LETTERS[i] for i in range(count))


def grid_fields(lo_mm: float, hi_mm: float, centre_mm: float, field_mm: float) -> tuple[float, ...]:
    """Field boundaries from ``lo`` to ``hi``, fields of ``field_mm`` counted from ``centre_mm``."""
    cuts = [lo_mm]
    k = -int((centre_mm - lo_mm) // field_mm)
    while True:
        x = centre_mm + k * field_mm
        if x >= hi_mm - 1e-9:
            break
        if x > lo_mm + 1e-9:
            cuts.append(x)
        k += 1
    cuts.append(hi_mm)
    return tuple(cuts)


def frame(t: SheetTemplate) -> tuple[Entity, ...]:
    """Trimming edge, frame line, centring marks, grid fields and labels, sheet size note."""
    x0, y0, w, h = t.frame_box
    x1, y1 = x0 + w, y0 + h
    fw = Width.FRAME
    out: list[Entity] = [
        Polyline(((0, 0), (t.width_mm, 0), (t.width_mm, t.height_mm), (0, t.height_mm)), closed=True,
                 layer=Layer.FRAME),
        Polyline(((x0, y0), (x1, y0), (x1, y1), (x0, y1)), closed=True, width=fw, layer=Layer.FRAME),
    ]
    cx, cy = t.width_mm / 2, t.height_mm / 2
    half = t.centring_mark_mm / 2
    out += [
        Line((cx, y0 - half), (cx, y0 + half), width=fw, layer=Layer.FRAME),
        Line((cx, y1 - half), (cx, y1 + half), width=fw, layer=Layer.FRAME),
        Line((x0 - half, cy), (x0 + half, cy), width=fw, layer=Layer.FRAME),
        Line((x1 - half, cy), (x1 + half, cy), width=fw, layer=Layer.FRAME),
    ]
    gh = t.text("grid")
    cols = grid_fields(x0, x1, cx, t.grid_field_mm)
    rows = grid_fields(y0, y1, cy, t.grid_field_mm)
    tick = min(t.border_top_mm, t.border_bottom_mm, t.border_right_mm) / 2
    for x in cols[1:-1]:
        if abs(x - cx) > 1e-9:
            out += [Line((x, y0), (x, y0 - tick), layer=Layer.FRAME),
                    Line((x, y1), (x, y1 + tick), layer=Layer.FRAME)]
    for y in rows[1:-1]:
        if abs(y - cy) > 1e-9:
            out += [Line((x0, y), (x0 - tick, y), layer=Layer.FRAME),
                    Line((x1, y), (x1 + tick, y), layer=Layer.FRAME)]
    for i in range(len(cols) - 1):
        xm = (cols[i] + cols[i + 1]) / 2
        out += [Text((xm, y1 + t.border_top_mm / 2), str(i + 1), gh, h_align="center", v_align="middle",
                     layer=Layer.FRAME),
                Text((xm, y0 - t.border_bottom_mm / 2), str(i + 1), gh, h_align="center",
                     v_align="middle", layer=Layer.FRAME)]
    letters = grid_letters(len(rows) - 1)
    for i in range(len(rows) - 1):
        ym = (rows[-1 - i] + rows[-2 - i]) / 2
        out += [Text((x0 - t.border_right_mm / 2, ym), letters[i], gh, h_align="center",
                     v_align="middle", layer=Layer.FRAME),
                Text((x1 + t.border_right_mm / 2, ym), letters[i], gh, h_align="center",
                     v_align="middle", layer=Layer.FRAME)]
    out.append(Text((t.width_mm - 3, 2.5), t.paper, 2.5, h_align="right", layer=Layer.FRAME))
    return tuple(out)


def projection_symbol(centre: tuple[float, float], projection: str, *, size_mm: float = 3.5
                      ) -> tuple[Entity, ...]:
    """ISO 5456-2 symbol: a truncated cone's side view (small end left) and its end view.

    First angle puts the end view (circles) right of the side view, so the small end of the
    frustum points away from the circles; third angle puts the circles on the left, so it points
    towards them.
    """
    s = size_mm
    cx, cy = centre
    gap, length = s, 1.7 * s
    total = length + gap + 2 * s
    left = cx - total / 2
    if projection == "first-angle":
        fx, ccx = left, left + length + gap + s
    else:
        ccx, fx = left + s, left + 2 * s + gap
    trapezoid = ((fx, cy - s / 2), (fx + length, cy - s), (fx + length, cy + s), (fx, cy + s / 2))
    ext = 1.2
    return (
        Polyline(trapezoid, closed=True, width=Width.WIDE, layer=Layer.ANNOTATION),
        Circle((ccx, cy), s, width=Width.WIDE, layer=Layer.ANNOTATION),
        Circle((ccx, cy), s / 2, width=Width.WIDE, layer=Layer.ANNOTATION),
        Line((left - ext, cy), (left + total + ext, cy), LineType.CENTER, layer=Layer.ANNOTATION),
        Line((ccx, cy - s - ext), (ccx, cy + s + ext), LineType.CENTER, layer=Layer.ANNOTATION),
    )


def _fit(text: str, width_mm: float, height_mm: float, minimum_mm: float = 1.8) -> float:
    """Largest character height <= ``height_mm`` (ISO 3098 steps) at which text fits the width."""
    for h in (height_mm, 3.5, 2.5, minimum_mm):
        if h <= height_mm and text_width_mm(text, h) <= width_mm:
            return h
    return minimum_mm


def title_block(t: SheetTemplate, values: Mapping[str, str], projection: str) -> tuple[Entity, ...]:
    """ISO 7200 title block from the template's cells; ``values`` maps field -> text."""
    ox, oy = t.title_origin
    lab = t.text("field_label")
    cells, texts = [], []
    for c in t.title_cells:
        x, y = ox + c.x, oy + c.y
        cells.append(Cell(x, y, c.w, c.h, (), lab))
        texts.append(Text((x + 1.0, y + c.h - 0.8), c.label, lab, v_align="top", layer=Layer.TABLE))
        if c.field == "projection":
            texts.extend(projection_symbol((x + c.w / 2, y + (c.h - lab - 1.0) / 2), projection,
                                           size_mm=min(3.5, (c.h - lab - 2.5) / 2)))
            continue
        value = values.get(c.field, "")
        big = t.text("title") if c.field in ("title", "number") else t.text("label")
        lines = value.split("\n")
        avail_h = c.h - lab - 2.0
        if len(lines) == 1:
            hh = _fit(value, c.w - 2.0, min(big, avail_h * 0.8))
            texts.append(Text((x + 1.5, y + (avail_h - hh) / 2 + 0.8), value, hh,
                              bold=c.field in ("title", "number"), layer=Layer.TABLE))
        else:
            hh = _fit(lines[0], c.w - 2.0, min(big, avail_h * 0.45))
            sub = _fit(lines[1], c.w - 2.0, min(t.text("table"), hh))
            texts.append(Text((x + 1.5, y + 1.2 + sub + 1.2), lines[0], hh, bold=True, layer=Layer.TABLE))
            texts.append(Text((x + 1.5, y + 1.2), lines[1], sub, layer=Layer.TABLE))
    return (Table(tuple(cells), outline_width=Width.WIDE), *texts)


def revision_table(t: SheetTemplate, revisions: tuple[tuple[str, str, str, str], ...]
                   ) -> tuple[tuple[Entity, ...], float]:
    """Revision table directly above the title block; returns its entities and its top (mm)."""
    ox, oy = t.title_origin
    y = oy + t.title_height_mm
    rows = list(revisions) or [("-", "no revision recorded", "", "")]
    row_h = t.revision_row_mm
    hh = min(t.text("table"), row_h - 2.0)
    cells = []
    for r, row in enumerate(reversed(rows)):
        x = ox
        for (_, w), value in zip(t.revision_columns, row, strict=True):
            cells.append(Cell(x, y + r * row_h, w, row_h, (_clip(value, w, hh),), hh))
            x += w
    x = ox
    top = y + len(rows) * row_h
    for label, w in t.revision_columns:
        cells.append(Cell(x, top, w, row_h, (label,), hh, bold=True))
        x += w
    return (Table(tuple(cells), outline_width=Width.WIDE),), top + row_h


def _clip(text: str, width_mm: float, height_mm: float) -> str:
    """Shorten a table value with an ellipsis so it fits its column."""
    if text_width_mm(text, height_mm) <= width_mm - 2.0:
        return text
    while text and text_width_mm(text + "…", height_mm) > width_mm - 2.0:
        text = text[:-1]
    return text + "…"
