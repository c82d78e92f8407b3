"""prismfab.drawing: a Part as a dimensioned fabrication drawing.

``layout_part(part, info)`` lays the drawing out once as a neutral ``Sheet`` (sheet.py); the DXF
backend (``prismfab.drawing.dxf.render`` / ``save``) and the PDF backend
(``prismfab.drawing.pdf.draw_sheet``) draw that same Sheet. Neither ezdxf nor reportlab is
imported until a backend is used.
"""

from __future__ import annotations

from prismfab.drawing.layout import choose_scale, layout_part
from prismfab.drawing.sheet import Sheet

__all__ = ["Sheet", "choose_scale", "layout_part"]
