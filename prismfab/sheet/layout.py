"""Small reportlab building blocks shared by the fabrication sheet and the system report."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from prismfab.sheet.fonts import BOLD, REGULAR, register_fonts

__all__ = ["bullet", "ensure_fonts", "footer", "heading", "para", "subheading", "table"]

_INK = (0.10, 0.12, 0.16)
_RULE = (0.55, 0.58, 0.62)
_SHADE = (0.91, 0.93, 0.95)


def ensure_fonts() -> None:
    """Register the embedded fonts (idempotent)."""
    register_fonts()


def _style(name: str, **kw: Any) -> Any:
    from reportlab.lib.colors import Color
    from reportlab.lib.styles import ParagraphStyle

    ensure_fonts()
    base = {"fontName": REGULAR, "fontSize": 8.5, "leading": 11.0, "textColor": Color(*_INK)}
    base.update(kw)
    return ParagraphStyle(name, **base)


def _escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def heading(text: str) -> Any:
    """A page heading."""
    from reportlab.platypus import Paragraph

    return Paragraph(_escape(text), _style("h1", fontName=BOLD, fontSize=13, leading=17,
                                           spaceAfter=4))


def subheading(text: str) -> Any:
    """A numbered section heading."""
    from reportlab.platypus import Paragraph

    return Paragraph(_escape(text), _style("h2", fontName=BOLD, fontSize=10, leading=13,
                                           spaceBefore=8, spaceAfter=3, keepWithNext=1))


def para(text: str) -> Any:
    """A paragraph of body text."""
    from reportlab.platypus import Paragraph

    return Paragraph(_escape(text), _style("body", spaceAfter=3))


def bullet(text: str) -> Any:
    """A bulleted line."""
    from reportlab.platypus import Paragraph

    return Paragraph(_escape(text), _style("bullet", leftIndent=10, bulletIndent=2,
                                           spaceAfter=1.5), bulletText="•")


def table(rows: Sequence[Sequence[str]], *, widths: Sequence[float] | None = None,
          header: bool = True) -> Any:
    """A ruled table; the first row is the header. ``widths`` in mm."""
    from reportlab.lib.colors import Color
    from reportlab.lib.units import mm
    from reportlab.platypus import Paragraph, Table, TableStyle

    cell = _style("cell", fontSize=7.5, leading=9.2)
    head = _style("head", fontName=BOLD, fontSize=7.5, leading=9.2)
    data = [[Paragraph(_escape(str(v)).replace("\n", "<br/>"), head if header and i == 0 else cell)
             for v in row] for i, row in enumerate(rows)]
    t = Table(data, colWidths=[w * mm for w in widths] if widths else None, repeatRows=1)
    style = [
        ("GRID", (0, 0), (-1, -1), 0.4, Color(*_RULE)),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
        ("TOPPADDING", (0, 0), (-1, -1), 2),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
    ]
    if header:
        style.append(("BACKGROUND", (0, 0), (-1, 0), Color(*_SHADE)))
    t.setStyle(TableStyle(style))
    t.spaceBefore, t.spaceAfter = 2, 5
    return t


def footer(canvas: Any, doc: Any, left: str, right: str) -> None:
    """Footer line with page number."""
    from reportlab.lib.colors import Color
    from reportlab.lib.units import mm

    ensure_fonts()
    width = canvas._pagesize[0]
    canvas.saveState()
    canvas.setStrokeColor(Color(*_RULE))
    canvas.setLineWidth(0.4)
    canvas.line(18 * mm, 11 * mm, width - 15 * mm, 11 * mm)
    canvas.setFont(REGULAR, 7)
    canvas.setFillColor(Color(*_INK))
    canvas.drawString(18 * mm, 7 * mm, left)
    canvas.drawRightString(width - 15 * mm, 7 * mm, f"{right}  ·  page {doc.page}")
    canvas.restoreState()
