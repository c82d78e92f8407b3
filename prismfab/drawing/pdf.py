"""PDF backend: draw a ``Sheet`` on a reportlab canvas as vector graphics, at exact scale.

Text is real text in the embedded DejaVu Sans subset (selectable, searchable); dimensions are
drawn from their stored geometry (extension lines, dimension line or arc, closed filled
arrowheads) with the same text as the DXF. The caller owns the canvas and the page: this draws
one sheet on the current page, origin at the page's lower-left corner, and does not show the
page. Use ``Canvas(..., invariant=1)`` for byte-identical files.
"""

from __future__ import annotations

import math
from typing import Any

from prismfab.drawing import fonts
from prismfab.drawing.dxf import LINETYPE_PATTERNS_MM
from prismfab.drawing.geom import add, mul, run_on, sub, text_width_mm, unit
from prismfab.drawing.sheet import (
    AlignedDim, AngularDim, Arc, Circle, Leader, Line, LinearDim, LineType, Polyline, Sheet, Solid,
    Table, Text, Width, cell_texts, leader_texts,
)

__all__ = ["draw_sheet"]

P2 = tuple[float, float]
PT_PER_MM = 72.0 / 25.4
ARROW_MM = 2.5
EXT_OFFSET_MM = 1.0
EXT_BEYOND_MM = 2.0


def _stroke(c: Any, line_type: LineType, width: Width) -> None:
    c.setLineWidth(width.value)
    if line_type is LineType.CONTINUOUS:
        c.setDash([])
    else:
        c.setDash([abs(v) for v in LINETYPE_PATTERNS_MM[line_type.value][1]], 0)


def _path(c: Any, points: tuple[P2, ...], closed: bool, *, fill: bool = False) -> None:
    p = c.beginPath()
    p.moveTo(*points[0])
    for q in points[1:]:
        p.lineTo(*q)
    if closed:
        p.close()
    c.drawPath(p, stroke=0 if fill else 1, fill=1 if fill else 0)


def _arrow(c: Any, tip: P2, direction: P2) -> None:
    u = unit(direction)
    base = sub(tip, mul(u, ARROW_MM))
    n = (-u[1], u[0])
    _path(c, (tip, add(base, mul(n, ARROW_MM / 6)), sub(base, mul(n, ARROW_MM / 6))), True, fill=True)


def _text(c: Any, t: Text) -> None:
    regular, bold = fonts.register()
    size = t.height_mm / fonts.CAP_HEIGHT_EM
    c.saveState()
    c.translate(*t.position)
    c.rotate(t.rotation_deg)
    c.setFont(bold if t.bold else regular, size)
    y = {"bottom": 0.0, "middle": -t.height_mm / 2, "top": -t.height_mm}[t.v_align]
    if t.h_align == "center":
        c.drawCentredString(0, y, t.text)
    elif t.h_align == "right":
        c.drawRightString(0, y, t.text)
    else:
        c.drawString(0, y, t.text)
    c.restoreState()


def _line(c: Any, e: Line) -> None:
    _stroke(c, e.line_type, e.width)
    c.line(*e.start, *e.end)


def _polyline(c: Any, e: Polyline) -> None:
    _stroke(c, e.line_type, e.width)
    _path(c, e.points, e.closed)


def _arc(c: Any, e: Arc) -> None:
    _stroke(c, e.line_type, e.width)
    _arc_path(c, e.centre, e.radius_mm, e.start_deg, e.end_deg)


def _arc_path(c: Any, centre: P2, r: float, start_deg: float, end_deg: float) -> None:
    sweep = (end_deg - start_deg) % 360.0
    p = c.beginPath()
    p.arc(centre[0] - r, centre[1] - r, centre[0] + r, centre[1] + r, start_deg, sweep)
    c.drawPath(p, stroke=1, fill=0)


def _circle(c: Any, e: Circle) -> None:
    _stroke(c, e.line_type, e.width)
    c.circle(e.centre[0], e.centre[1], e.radius_mm, stroke=1, fill=0)


def _solid(c: Any, e: Solid) -> None:
    _path(c, e.points, True, fill=True)


def _extension(c: Any, p: P2, d: P2) -> None:
    v = sub(d, p)
    length = math.hypot(*v)
    if length < 1e-9:
        return
    u = unit(v)
    c.line(*add(p, mul(u, EXT_OFFSET_MM)), *add(d, mul(u, EXT_BEYOND_MM)))


def _straight_dim(c: Any, p1: P2, p2: P2, d1: P2, d2: P2, text: str, pos: P2, rot: float,
                  text_h: float) -> None:
    _stroke(c, LineType.CONTINUOUS, Width.NARROW)
    _extension(c, p1, d1)
    _extension(c, p2, d2)
    u = unit(sub(d2, d1))
    if math.hypot(*sub(d2, d1)) >= 2 * ARROW_MM + 1.0:
        c.line(*d1, *d2)
        _arrow(c, d1, mul(u, -1.0))
        _arrow(c, d2, u)
    else:  # arrows outside, pointing in
        c.line(*sub(d1, mul(u, ARROW_MM + 2.0)), *add(d2, mul(u, ARROW_MM + 2.0)))
        _arrow(c, d1, u)
        _arrow(c, d2, mul(u, -1.0))
    more = run_on(d1, d2, pos, text_width_mm(text, text_h) / 2)
    if more is not None:  # text beyond an end of its line: the line runs on under it
        c.line(*more[0], *more[1])
    _text(c, Text(pos, text, text_h, rot, "center", "middle"))


def _linear(c: Any, e: LinearDim, sheet: Sheet) -> None:
    d1, d2 = e.dim_line()
    _straight_dim(c, e.p1, e.p2, d1, d2, e.text, e.text_pos, e.text_rotation_deg,
                  sheet.dimension_text_mm)


def _aligned(c: Any, e: AlignedDim, sheet: Sheet) -> None:
    d1, d2 = e.dim_line()
    _straight_dim(c, e.p1, e.p2, d1, d2, e.text, e.text_pos, e.text_rotation_deg,
                  sheet.dimension_text_mm)


def _angular(c: Any, e: AngularDim, sheet: Sheet) -> None:
    _stroke(c, LineType.CONTINUOUS, Width.NARROW)
    a1, a2 = e.arc_deg()
    r = e.radius_mm
    for p, a in ((e.p1, a1), (e.p2, a2)):
        dp = math.hypot(*sub(p, e.vertex))
        u = (math.cos(math.radians(a)), math.sin(math.radians(a)))
        if dp < r:  # leg shorter than the arc radius: extension line out to the arc
            c.line(*add(e.vertex, mul(u, dp + EXT_OFFSET_MM)), *add(e.vertex, mul(u, r + EXT_BEYOND_MM)))
    _arc_path(c, e.vertex, r, a1, a2)
    for a, sign in ((a1, -1.0), (a2, 1.0)):
        rad = math.radians(a)
        tip = add(e.vertex, (r * math.cos(rad), r * math.sin(rad)))
        tangent = (-math.sin(rad) * sign, math.cos(rad) * sign)
        _arrow(c, tip, tangent)
    _text(c, Text(e.text_pos, e.text, sheet.dimension_text_mm, 0.0, "center", "middle"))


def _leader(c: Any, e: Leader, sheet: Sheet) -> None:
    _stroke(c, LineType.CONTINUOUS, Width.NARROW)
    _path(c, e.points, False)
    if e.arrow:
        _arrow(c, e.points[0], sub(e.points[0], e.points[1]))
    for t in leader_texts(e):
        _text(c, t)


def _table(c: Any, e: Table) -> None:
    if not e.cells:
        return
    _stroke(c, LineType.CONTINUOUS, Width.NARROW)
    for cell in e.cells:
        c.rect(cell.x, cell.y, cell.w, cell.h, stroke=1, fill=0)
    _stroke(c, LineType.CONTINUOUS, e.outline_width)
    x0, y0 = min(k.x for k in e.cells), min(k.y for k in e.cells)
    x1, y1 = max(k.x + k.w for k in e.cells), max(k.y + k.h for k in e.cells)
    c.rect(x0, y0, x1 - x0, y1 - y0, stroke=1, fill=0)
    for cell in e.cells:
        for t in cell_texts(cell):
            _text(c, t)


def draw_sheet(canvas: Any, sheet: Sheet) -> None:
    """Draw the sheet on the canvas's current page (page size = sheet size, paper mm).

    Args:
        canvas: a ``reportlab.pdfgen.canvas.Canvas``.
        sheet: the laid-out drawing.
    """
    fonts.register()
    c = canvas
    c.saveState()
    c.scale(PT_PER_MM, PT_PER_MM)
    c.setStrokeColorRGB(0, 0, 0)
    c.setFillColorRGB(0, 0, 0)
    c.setLineCap(0)
    c.setLineJoin(1)
    for e in sheet.entities:
        if isinstance(e, Line):
            _line(c, e)
        elif isinstance(e, Polyline):
            _polyline(c, e)
        elif isinstance(e, Arc):
            _arc(c, e)
        elif isinstance(e, Circle):
            _circle(c, e)
        elif isinstance(e, Solid):
            _solid(c, e)
        elif isinstance(e, Text):
            _text(c, e)
        elif isinstance(e, LinearDim):
            _linear(c, e, sheet)
        elif isinstance(e, AlignedDim):
            _aligned(c, e, sheet)
        elif isinstance(e, AngularDim):
            _angular(c, e, sheet)
        elif isinstance(e, Leader):
            _leader(c, e, sheet)
        elif isinstance(e, Table):
            _table(c, e)
    c.restoreState()
