"""The neutral sheet model: what a drawing holds, independent of the file format.

``prismfab.drawing.layout`` builds a ``Sheet`` from a ``Part``; ``prismfab.drawing.dxf`` and
``prismfab.drawing.pdf`` draw the same ``Sheet``, so the DXF and the PDF cannot disagree.

Frame: every coordinate is in paper millimetres, origin at the lower-left corner of the trimmed
sheet, x to the right, y up. Views are already scaled; a dimension keeps its defining points on
paper and states the model value it measures (``measured_mm`` / ``measured_deg``), with
``paper distance / sheet scale == measured_mm``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from enum import Enum

__all__ = [
    "AlignedDim",
    "AngularDim",
    "Arc",
    "Cell",
    "Circle",
    "Entity",
    "Layer",
    "Leader",
    "Line",
    "LineType",
    "LinearDim",
    "Polyline",
    "Sheet",
    "Solid",
    "Table",
    "Text",
    "Width",
]

P2 = tuple[float, float]


class LineType(Enum):
    """ISO 128-2 line types, valued by the standard DXF line-type name that carries them."""

    CONTINUOUS = "CONTINUOUS"  # 01.1 narrow / 01.2 wide
    HIDDEN = "HIDDEN"  # 02.1 dashed narrow: hidden edges
    CENTER = "CENTER"  # 04.1 long-dash dot narrow: ray path, centre lines; 04.2 wide: special area
    PHANTOM = "PHANTOM"  # 05.1 long-dash double-dot narrow: adjacent parts, extreme positions


class Width(Enum):
    """Line width classes (ISO 128-2, wide = 2 x narrow), valued in mm on paper."""

    NARROW = 0.25
    WIDE = 0.5
    FRAME = 0.7


class Layer(Enum):
    """What an entity shows; the DXF backend makes one layer per member."""

    OUTLINE = "PF-OUTLINE"
    HIDDEN = "PF-HIDDEN"
    RAY = "PF-RAY-PATH"
    APERTURE = "PF-CLEAR-APERTURE"
    DIMENSION = "PF-DIMENSION"
    ANNOTATION = "PF-ANNOTATION"
    TABLE = "PF-TABLE"
    FRAME = "PF-FRAME"


@dataclass(frozen=True, slots=True)
class Line:
    """A straight line from ``start`` to ``end`` (paper mm)."""

    start: P2
    end: P2
    line_type: LineType = LineType.CONTINUOUS
    width: Width = Width.NARROW
    layer: Layer = Layer.ANNOTATION


@dataclass(frozen=True, slots=True)
class Polyline:
    """Connected straight segments through ``points`` (paper mm)."""

    points: tuple[P2, ...]
    closed: bool = False
    line_type: LineType = LineType.CONTINUOUS
    width: Width = Width.NARROW
    layer: Layer = Layer.ANNOTATION


@dataclass(frozen=True, slots=True)
class Arc:
    """A circular arc, counter-clockwise from ``start_deg`` to ``end_deg`` (paper frame)."""

    centre: P2
    radius_mm: float
    start_deg: float
    end_deg: float
    line_type: LineType = LineType.CONTINUOUS
    width: Width = Width.NARROW
    layer: Layer = Layer.ANNOTATION


@dataclass(frozen=True, slots=True)
class Circle:
    """A circle (paper mm)."""

    centre: P2
    radius_mm: float
    line_type: LineType = LineType.CONTINUOUS
    width: Width = Width.NARROW
    layer: Layer = Layer.ANNOTATION


@dataclass(frozen=True, slots=True)
class Solid:
    """A filled polygon: arrowheads, datum triangles (paper mm)."""

    points: tuple[P2, ...]
    layer: Layer = Layer.ANNOTATION


@dataclass(frozen=True, slots=True)
class Text:
    """One line of text.

    Args:
        position: anchor point, paper mm.
        text: the characters (no line breaks).
        height_mm: capital height on paper (ISO 3098 series).
        rotation_deg: counter-clockwise from the paper x axis.
        h_align: "left", "center" or "right" about ``position``.
        v_align: "bottom" (baseline), "middle" or "top".
        bold: heavier face (title block values).
    """

    position: P2
    text: str
    height_mm: float
    rotation_deg: float = 0.0
    h_align: str = "left"
    v_align: str = "bottom"
    bold: bool = False
    layer: Layer = Layer.ANNOTATION


@dataclass(frozen=True, slots=True)
class LinearDim:
    """A linear dimension measured along direction ``angle_deg`` (0 = horizontal).

    Args:
        p1, p2: the measured points on the view (paper mm).
        base: a point on the dimension line (paper mm).
        angle_deg: direction of the dimension line.
        measured_mm: the model value the dimension states (paper distance / scale).
        scale: drawing scale (paper / model), e.g. 5.0 for 5:1.
        text: display text, formatted by prismfab.
        text_pos: centre of the text (paper mm).
        auxiliary: True for an auxiliary (parenthesised) dimension.
    """

    p1: P2
    p2: P2
    base: P2
    angle_deg: float
    measured_mm: float
    scale: float
    text: str
    text_pos: P2
    auxiliary: bool = False
    layer: Layer = Layer.DIMENSION

    def dim_line(self) -> tuple[P2, P2]:
        """The two ends of the dimension line (paper mm)."""
        u = (math.cos(math.radians(self.angle_deg)), math.sin(math.radians(self.angle_deg)))
        return _project(self.p1, self.base, u), _project(self.p2, self.base, u)

    @property
    def text_rotation_deg(self) -> float:
        """Text direction: along the dimension line, readable from the bottom or right."""
        return readable_deg(self.angle_deg)


@dataclass(frozen=True, slots=True)
class AlignedDim:
    """A dimension parallel to ``p1 -> p2``, offset by ``offset_mm`` (+ = left of p1 -> p2)."""

    p1: P2
    p2: P2
    offset_mm: float
    measured_mm: float
    scale: float
    text: str
    text_pos: P2
    auxiliary: bool = False
    layer: Layer = Layer.DIMENSION

    def dim_line(self) -> tuple[P2, P2]:
        """The two ends of the dimension line (paper mm)."""
        dx, dy = self.p2[0] - self.p1[0], self.p2[1] - self.p1[1]
        n = math.hypot(dx, dy)
        ox, oy = -dy / n * self.offset_mm, dx / n * self.offset_mm
        return (self.p1[0] + ox, self.p1[1] + oy), (self.p2[0] + ox, self.p2[1] + oy)

    @property
    def text_rotation_deg(self) -> float:
        """Text direction: along the dimension line, readable from the bottom or right."""
        return readable_deg(math.degrees(math.atan2(self.p2[1] - self.p1[1], self.p2[0] - self.p1[0])))


@dataclass(frozen=True, slots=True)
class AngularDim:
    """An angle at ``vertex``, swept counter-clockwise from ray ``vertex -> p1`` to ``vertex -> p2``.

    Args:
        vertex: apex of the angle (paper mm).
        p1, p2: points on the two legs; extension lines run from them to the arc.
        radius_mm: radius of the dimension arc.
        measured_deg: the model angle the dimension states.
        text: display text, formatted by prismfab.
        text_pos: centre of the (horizontal) text.
        auxiliary: True for an auxiliary (parenthesised) dimension.
    """

    vertex: P2
    p1: P2
    p2: P2
    radius_mm: float
    measured_deg: float
    text: str
    text_pos: P2
    auxiliary: bool = False
    layer: Layer = Layer.DIMENSION

    def arc_deg(self) -> tuple[float, float]:
        """Start and end direction of the arc, degrees, counter-clockwise."""
        a1 = math.degrees(math.atan2(self.p1[1] - self.vertex[1], self.p1[0] - self.vertex[0]))
        a2 = math.degrees(math.atan2(self.p2[1] - self.vertex[1], self.p2[0] - self.vertex[0]))
        return a1 % 360.0, a2 % 360.0


@dataclass(frozen=True, slots=True)
class Leader:
    """A leader: arrow at ``points[0]``, text lines left- or right-aligned at ``text_pos``.

    Args:
        points: vertices from the arrow tip to the shoulder end (paper mm).
        lines: the callout text, one entry per line.
        text_pos: top-left (or top-right, ``h_align == "right"``) corner of the text.
        height_mm: character height.
        arrow: False for a dot-less reference line (e.g. to a datum or a label).
    """

    points: tuple[P2, ...]
    lines: tuple[str, ...]
    text_pos: P2
    height_mm: float
    h_align: str = "left"
    arrow: bool = True
    layer: Layer = Layer.ANNOTATION


@dataclass(frozen=True, slots=True)
class Cell:
    """One table cell: a box and its text lines (top-left aligned unless ``h_align``)."""

    x: float
    y: float
    w: float
    h: float
    lines: tuple[str, ...]
    height_mm: float
    h_align: str = "left"
    bold: bool = False


@dataclass(frozen=True, slots=True)
class Table:
    """A table: boxed cells (paper mm). ``title`` is printed above it when not empty."""

    cells: tuple[Cell, ...]
    outline_width: Width = Width.WIDE
    layer: Layer = Layer.TABLE


Entity = (Line | Polyline | Arc | Circle | Solid | Text | LinearDim | AlignedDim | AngularDim
          | Leader | Table)


@dataclass(frozen=True, slots=True)
class Sheet:
    """One laid-out drawing sheet.

    Args:
        width_mm, height_mm: trimmed paper size.
        scale: view scale (paper / model), from the ISO 5455 series.
        scale_text: e.g. "5:1".
        template: template name the sheet was laid out from.
        projection: "first-angle" or "third-angle".
        number, revision, title: identification (for file metadata).
        entities: everything drawn, in drawing order.
        dimension_text_mm: the one character height of all dimensions (ISO 129-1).
        view_entities: how many of the last ``entities`` make up the two views (0: unknown).
    """

    width_mm: float
    height_mm: float
    scale: float
    scale_text: str
    template: str
    projection: str
    number: str
    revision: str
    title: str
    entities: tuple[Entity, ...]
    dimension_text_mm: float = 3.5
    view_entities: int = 0

    def of_type(self, kind: type) -> tuple[Entity, ...]:
        """The entities of one kind, in drawing order."""
        return tuple(e for e in self.entities if isinstance(e, kind))

    def texts(self) -> tuple[str, ...]:
        """Every string the sheet shows (texts, dimensions, leaders, tables)."""
        out: list[str] = []
        for e in self.entities:
            if isinstance(e, Text):
                out.append(e.text)
            elif isinstance(e, LinearDim | AlignedDim | AngularDim):
                out.append(e.text)
            elif isinstance(e, Leader):
                out.extend(e.lines)
            elif isinstance(e, Table):
                for c in e.cells:
                    out.extend(c.lines)
        return tuple(out)


def readable_deg(angle_deg: float) -> float:
    """Turn a line direction into a text direction readable from the bottom or the right."""
    a = angle_deg % 180.0
    if a > 90.0 + 1e-9:
        a -= 180.0
    return a


def _project(p: P2, base: P2, u: P2) -> P2:
    """Foot of ``p`` on the line through ``base`` with unit direction ``u``."""
    t = (p[0] - base[0]) * u[0] + (p[1] - base[1]) * u[1]
    return base[0] + t * u[0], base[1] + t * u[1]


CELL_PAD_MM = 1.0
"""Gap between a table cell's border and its text (left and top), paper mm."""
LINE_PITCH = 1.5
"""Baseline-to-baseline distance of stacked text lines, in character heights."""


def cell_texts(cell: Cell) -> tuple[Text, ...]:
    """The text lines of a table cell, placed (both backends draw these)."""
    out = []
    for i, line in enumerate(cell.lines):
        y = cell.y + cell.h - CELL_PAD_MM - cell.height_mm - i * LINE_PITCH * cell.height_mm
        if cell.h <= 2 * CELL_PAD_MM + 1.6 * cell.height_mm and len(cell.lines) == 1:
            y = cell.y + (cell.h - cell.height_mm) / 2  # single line in a low row: centred
        if cell.h_align == "center":
            x, align = cell.x + cell.w / 2, "center"
        elif cell.h_align == "right":
            x, align = cell.x + cell.w - CELL_PAD_MM, "right"
        else:
            x, align = cell.x + CELL_PAD_MM, "left"
        out.append(Text((x, y), line, cell.height_mm, h_align=align, bold=cell.bold, layer=Layer.TABLE))
    return tuple(out)


def leader_texts(leader: Leader) -> tuple[Text, ...]:
    """The text lines of a leader callout, placed from ``text_pos`` (top of the first line)."""
    x, y = leader.text_pos
    return tuple(
        Text((x, y - leader.height_mm - i * LINE_PITCH * leader.height_mm), line, leader.height_mm,
             h_align=leader.h_align, layer=leader.layer)
        for i, line in enumerate(leader.lines)
    )
