"""DXF backend: a ``Sheet`` as an ezdxf document.

Modelspace alone is the complete drawing: the sheet is drawn there in paper millimetres (frame,
title block, tables and notes at 1:1, the views already scaled), so a viewer without paperspace
support still shows everything. Each dimension is a real DIMENSION entity whose definition
points lie on the scaled view; its length factor (dimlfac) is 1/scale, so the measurement a CAD
program reads back, times that factor, is the true part size. The displayed text is always
prismfab's (explicit text): ezdxf's degree-minute-second display truncates instead of rounding.
Callouts are LEADER + MTEXT (MLEADER is not drawn by every viewer).
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Any

from prismfab.drawing.sheet import (
    AlignedDim, AngularDim, Arc, Circle, Layer, Leader, Line, LinearDim, LineType, Polyline, Sheet,
    Solid, Table, Text, Width, cell_texts,
)
from prismfab.errors import OutputError

__all__ = ["DIMSTYLE", "LINETYPE_PATTERNS_MM", "render", "save"]

DIMSTYLE = "PF-MM"
TEXT_STYLE = "PF-TEXT"
TEXT_STYLE_BOLD = "PF-TEXT-BOLD"
LINETYPE_PATTERNS_MM: dict[str, tuple[str, tuple[float, ...]]] = {
    # ISO 128-2 proportions for a 0.5 mm line group: dash 12d, gap 3d, long dash 24d, dot 0.5d.
    "HIDDEN": ("Dashed narrow (ISO 128 02.1) __ __ __", (6.0, -1.5)),
    "DASHED": ("Dashed (ISO 128 02) __ __ __", (6.0, -1.5)),
    "CENTER": ("Long-dash dot (ISO 128 04) ____ . ____ .", (12.0, -1.5, 0.25, -1.5)),
    "PHANTOM": ("Long-dash double-dot (ISO 128 05) ____ . . ____",
                (12.0, -1.5, 0.25, -1.5, 0.25, -1.5)),
}
_LAYER_DEFAULTS = {
    Layer.OUTLINE: ("CONTINUOUS", Width.WIDE, 7),
    Layer.HIDDEN: ("HIDDEN", Width.NARROW, 8),
    Layer.RAY: ("CENTER", Width.NARROW, 1),
    Layer.APERTURE: ("CENTER", Width.WIDE, 5),
    Layer.DIMENSION: ("CONTINUOUS", Width.NARROW, 7),
    Layer.ANNOTATION: ("CONTINUOUS", Width.NARROW, 7),
    Layer.TABLE: ("CONTINUOUS", Width.NARROW, 7),
    Layer.FRAME: ("CONTINUOUS", Width.FRAME, 7),
}
_ALIGN = {
    ("left", "bottom"): "LEFT", ("center", "bottom"): "CENTER", ("right", "bottom"): "RIGHT",
    ("left", "middle"): "MIDDLE_LEFT", ("center", "middle"): "MIDDLE_CENTER",
    ("right", "middle"): "MIDDLE_RIGHT", ("left", "top"): "TOP_LEFT",
    ("center", "top"): "TOP_CENTER", ("right", "top"): "TOP_RIGHT",
}


def _lw(width: Width) -> int:
    return int(round(width.value * 100))


def _setup(sheet: Sheet) -> Any:
    import ezdxf

    previous = ezdxf.options.write_fixed_meta_data_for_testing
    try:  # the creation stamp is written at ezdxf.new(): fix it for byte-identical files
        ezdxf.options.write_fixed_meta_data_for_testing = True
        doc = ezdxf.new("R2013", units=ezdxf.units.MM)
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = previous
    doc.header["$MEASUREMENT"] = 1
    doc.header["$LUNITS"] = 2
    doc.header["$INSUNITS"] = 4
    doc.header["$LTSCALE"] = 1.0
    doc.header["$PSLTSCALE"] = 0
    doc.header["$LWDISPLAY"] = 1
    doc.header["$EXTMIN"] = (0.0, 0.0, 0.0)
    doc.header["$EXTMAX"] = (sheet.width_mm, sheet.height_mm, 0.0)
    doc.header["$LIMMIN"] = (0.0, 0.0)
    doc.header["$LIMMAX"] = (sheet.width_mm, sheet.height_mm)
    for name, (desc, pattern) in LINETYPE_PATTERNS_MM.items():
        doc.linetypes.add(name, pattern=[sum(abs(p) for p in pattern), *pattern], description=desc)
    doc.styles.add(TEXT_STYLE, font="DejaVuSans.ttf")
    doc.styles.add(TEXT_STYLE_BOLD, font="DejaVuSans-Bold.ttf")
    for layer, (ltype, width, color) in _LAYER_DEFAULTS.items():
        doc.layers.add(layer.value, color=color, linetype=ltype, lineweight=_lw(width))
    ds = doc.dimstyles.new(DIMSTYLE)
    values = dict(dimtxt=sheet.dimension_text_mm, dimasz=2.5, dimexe=2.0, dimexo=1.0, dimgap=1.0,
                  dimdec=2, dimadec=0, dimlfac=1.0, dimscale=1.0, dimtad=1, dimzin=8, dimtih=0,
                  dimtoh=0, dimaunit=0, dimlwd=25, dimlwe=25, dimclrd=256, dimclre=256,
                  dimclrt=256, dimtmove=2, dimtofl=1, dimdsep=ord("."), dimcen=0)
    for key, value in values.items():
        ds.dxf.set(key, value)
    ds.dxf.dimtxsty = TEXT_STYLE
    doc.header["$DIMSTYLE"] = DIMSTYLE
    doc.header["$DIMTXT"] = sheet.dimension_text_mm
    doc.header["$DIMLFAC"] = 1.0
    doc.header["$DIMASZ"] = 2.5
    doc.header["$DIMSCALE"] = 1.0
    doc.header["$TEXTSTYLE"] = TEXT_STYLE
    doc.header["$TEXTSIZE"] = sheet.dimension_text_mm
    return doc


def _attribs(e: Any) -> dict[str, Any]:
    return {"layer": e.layer.value, "linetype": e.line_type.value, "lineweight": _lw(e.width)}


def _line(msp: Any, e: Line, sheet: Sheet) -> None:
    msp.add_line(e.start, e.end, dxfattribs=_attribs(e))


def _polyline(msp: Any, e: Polyline, sheet: Sheet) -> None:
    pl = msp.add_lwpolyline(e.points, close=e.closed, dxfattribs=_attribs(e))
    if e.line_type is not LineType.CONTINUOUS:
        pl.dxf.flags = pl.dxf.flags | 128  # PLINEGEN: pattern runs continuously across vertices


def _arc(msp: Any, e: Arc, sheet: Sheet) -> None:
    msp.add_arc(e.centre, e.radius_mm, e.start_deg, e.end_deg, dxfattribs=_attribs(e))


def _circle(msp: Any, e: Circle, sheet: Sheet) -> None:
    msp.add_circle(e.centre, e.radius_mm, dxfattribs=_attribs(e))


def _solid(msp: Any, e: Solid, sheet: Sheet) -> None:
    hatch = msp.add_hatch(color=256, dxfattribs={"layer": e.layer.value})
    hatch.paths.add_polyline_path(e.points, is_closed=True)


def _text(msp: Any, e: Text, sheet: Sheet) -> None:
    from ezdxf.enums import TextEntityAlignment

    t = msp.add_text(e.text, height=e.height_mm, rotation=e.rotation_deg, dxfattribs={
        "layer": e.layer.value, "style": TEXT_STYLE_BOLD if e.bold else TEXT_STYLE})
    t.set_placement(e.position, align=TextEntityAlignment[_ALIGN[(e.h_align, e.v_align)]])


def _dim_override(scale: float, **extra: Any) -> dict[str, Any]:
    return {"dimlfac": 1.0 / scale, **extra}


def _linear(msp: Any, e: LinearDim, sheet: Sheet) -> None:
    dim = msp.add_linear_dim(base=e.base, p1=e.p1, p2=e.p2, angle=e.angle_deg, text=e.text,
                             dimstyle=DIMSTYLE, override=_dim_override(e.scale),
                             dxfattribs={"layer": e.layer.value})
    dim.set_location(e.text_pos, leader=False)
    dim.render()


def _aligned(msp: Any, e: AlignedDim, sheet: Sheet) -> None:
    import math

    p1, p2, distance = e.p1, e.p2, e.offset_mm
    direction = math.degrees(math.atan2(p2[1] - p1[1], p2[0] - p1[0]))
    if abs((direction - e.text_rotation_deg + 180.0) % 360.0 - 180.0) > 90.0:
        p1, p2, distance = p2, p1, -distance  # text runs along p1 -> p2: keep it readable
    dim = msp.add_aligned_dim(p1=p1, p2=p2, distance=distance, text=e.text, dimstyle=DIMSTYLE,
                              override=_dim_override(e.scale), dxfattribs={"layer": e.layer.value})
    dim.set_location(e.text_pos, leader=False)
    dim.render()


def _angular(msp: Any, e: AngularDim, sheet: Sheet) -> None:
    import math

    a1, a2 = (math.radians(a) for a in e.arc_deg())
    mid = a1 + ((a2 - a1) % (2 * math.pi)) / 2
    base = (e.vertex[0] + e.radius_mm * math.cos(mid), e.vertex[1] + e.radius_mm * math.sin(mid))
    dim = msp.add_angular_dim_3p(base=base, center=e.vertex, p1=e.p1, p2=e.p2, text=e.text,
                                 dimstyle=DIMSTYLE, override={"dimtih": 1, "dimtoh": 1},
                                 dxfattribs={"layer": e.layer.value})
    dim.set_location(e.text_pos, leader=False)
    dim.render()
    # ISO 129-1 lets angle values stand horizontal; ezdxf turns user-placed angular text along
    # the arc, so the text of the rendered block is set upright again.
    block = msp.doc.blocks.get(dim.dimension.dxf.geometry)
    for entity in block.query("MTEXT"):
        entity.dxf.discard("text_direction")
        entity.dxf.rotation = 0.0


def _leader(msp: Any, e: Leader, sheet: Sheet) -> None:
    from ezdxf.enums import MTextEntityAlignment

    msp.add_leader(e.points, dimstyle=DIMSTYLE, override={"dimasz": 2.5},
                   dxfattribs={"layer": e.layer.value, "has_arrowhead": 1 if e.arrow else 0})
    if not e.lines:  # the leader of a tolerance frame: the frame is drawn on its own
        return
    mt = msp.add_mtext("\\P".join(e.lines), dxfattribs={
        "layer": e.layer.value, "style": TEXT_STYLE, "char_height": e.height_mm,
        "line_spacing_factor": 0.9})
    align = MTextEntityAlignment.TOP_LEFT if e.h_align == "left" else MTextEntityAlignment.TOP_RIGHT
    mt.set_location(e.text_pos, attachment_point=align)


def _table(msp: Any, e: Table, sheet: Sheet) -> None:
    if not e.cells:
        return
    narrow = {"layer": e.layer.value, "lineweight": _lw(Width.NARROW)}
    for c in e.cells:
        msp.add_lwpolyline(((c.x, c.y), (c.x + c.w, c.y), (c.x + c.w, c.y + c.h), (c.x, c.y + c.h)),
                           close=True, dxfattribs=narrow)
        for t in cell_texts(c):
            _text(msp, t, sheet)
    x0 = min(c.x for c in e.cells)
    y0 = min(c.y for c in e.cells)
    x1 = max(c.x + c.w for c in e.cells)
    y1 = max(c.y + c.h for c in e.cells)
    msp.add_lwpolyline(((x0, y0), (x1, y0), (x1, y1), (x0, y1)), close=True,
                       dxfattribs={"layer": e.layer.value, "lineweight": _lw(e.outline_width)})


_DISPATCH = {
    Line: _line, Polyline: _polyline, Arc: _arc, Circle: _circle, Solid: _solid, Text: _text,
    LinearDim: _linear, AlignedDim: _aligned, AngularDim: _angular, Leader: _leader, Table: _table,
}


def render(sheet: Sheet) -> Any:
    """Build the DXF document of a sheet (nothing is written to disk).

    Returns:
        An ``ezdxf.document.Drawing`` whose modelspace is the complete drawing, paper mm.
    """
    doc = _setup(sheet)
    msp = doc.modelspace()
    for entity in sheet.entities:
        _DISPATCH[type(entity)](msp, entity, sheet)
    return doc


def save(doc: Any, path: str | os.PathLike[str]) -> Path:
    """Write a document atomically (temporary file, then rename); byte-identical across runs.

    Raises:
        OutputError: the file cannot be written.
    """
    import ezdxf

    target = Path(path)
    previous = ezdxf.options.write_fixed_meta_data_for_testing
    tmp = ""
    try:
        fd, tmp = tempfile.mkstemp(prefix=target.name + ".", suffix=".part", dir=target.parent)
        os.close(fd)
        ezdxf.options.write_fixed_meta_data_for_testing = True
        _fix_class_order(doc)
        doc.saveas(tmp)
        os.replace(tmp, target)
    except OSError as err:
        raise OutputError(f"cannot write the drawing {target}: {err}; check the folder exists and "
                          "is writable") from err
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = previous
        if tmp and os.path.exists(tmp):
            os.unlink(tmp)
    return target


def _fix_class_order(doc: Any) -> None:
    """Register the CLASSES section entries in a fixed order before the document is written.

    On writing, ezdxf adds its required classes and then one class per entity type in use,
    iterating a set of type names, whose order follows the string hash seed of the process:
    two runs would write the CLASSES section in different orders. Registering the same classes
    first (required ones in ezdxf's order, the rest sorted) fixes the order; ezdxf's own pass
    then finds them all present.
    """
    from ezdxf.sections.classes import REQ_R2004, REQUIRED_CLASSES

    if doc.dxfversion <= "AC1009":  # DXF R12 has no CLASSES section
        return
    for name in REQUIRED_CLASSES.get(doc.dxfversion, REQ_R2004):
        doc.classes.add_class(name)
    for name in sorted(doc.entitydb.dxf_types_in_use()):
        doc.classes.add_class(name)
