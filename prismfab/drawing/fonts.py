"""The one font of every drawing: DejaVu Sans, found at a fixed list of places.

The DXF names the same file in its text styles, and the PDF embeds it, so both backends measure
and draw text with identical metrics. Lookup order (first hit wins, so output is deterministic
for a given installation): the copy shipped with the plotting library that the CAD kernel's
install brings along (found without importing that library), then Debian's fonts-dejavu-core.
Text heights on the sheet are capital heights, as DXF text heights are; the PDF font size is
the height divided by the face's capital height per em.
"""

from __future__ import annotations

import importlib.util
from functools import cache
from pathlib import Path

from prismfab.errors import MissingDependencyError

__all__ = ["BOLD", "CAP_HEIGHT_EM", "REGULAR", "font_path", "register", "text_width_mm"]

REGULAR = "PF-Sans"
BOLD = "PF-Sans-Bold"
CAP_HEIGHT_EM = 1493.0 / 2048.0
"""DejaVu Sans capital height per em (glyph 'H', 1493 units of 2048)."""
_FILES = {REGULAR: "DejaVuSans.ttf", BOLD: "DejaVuSans-Bold.ttf"}


def _font_dirs() -> tuple[Path, ...]:
    dirs = []
    spec = importlib.util.find_spec("matplotlib")
    if spec is not None and spec.origin:
        dirs.append(Path(spec.origin).parent / "mpl-data" / "fonts" / "ttf")
    dirs.append(Path("/usr/share/fonts/truetype/dejavu"))
    return tuple(dirs)


@cache
def font_path(bold: bool = False) -> Path:
    """Path of the regular (or bold) DejaVu Sans file.

    Raises:
        MissingDependencyError: no copy was found.
    """
    filename = _FILES[BOLD if bold else REGULAR]
    for d in _font_dirs():
        if (d / filename).is_file():
            return d / filename
    raise MissingDependencyError(
        f"font file {filename} not found in {[str(d) for d in _font_dirs()]}; reinstall prismfab's "
        "dependencies (pip install -e .) or install Debian's fonts-dejavu-core")


@cache
def register() -> tuple[str, str]:
    """Register both faces with reportlab once (names shared with the fabrication sheet)."""
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    known = set(pdfmetrics.getRegisteredFontNames())
    for name, bold in ((REGULAR, False), (BOLD, True)):
        if name not in known:
            pdfmetrics.registerFont(TTFont(name, str(font_path(bold))))
    return REGULAR, BOLD


@cache
def text_width_mm(text: str, height_mm: float, bold: bool = False) -> float:
    """Advance width of one line of text whose capital height is ``height_mm``, mm."""
    from reportlab.pdfbase import pdfmetrics

    register()
    return float(pdfmetrics.stringWidth(text, BOLD if bold else REGULAR, height_mm / CAP_HEIGHT_EM))
