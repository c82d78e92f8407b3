"""One embedded TrueType family for every PDF prismfab writes.

The DejaVu Sans files come with the plotting library that the CAD kernel's install brings along;
their path is found without importing that library. Debian's font package is the fallback. The
font is embedded as a subset, so text stays selectable and output stays byte-identical.
"""

from __future__ import annotations

import importlib.util
from functools import cache
from pathlib import Path

from prismfab.errors import MissingDependencyError

__all__ = ["BOLD", "REGULAR", "register_fonts"]

REGULAR = "PF-Sans"
BOLD = "PF-Sans-Bold"

_FILES = {REGULAR: "DejaVuSans.ttf", BOLD: "DejaVuSans-Bold.ttf"}


def _font_dirs() -> list[Path]:
    dirs = []
    spec = importlib.util.find_spec("matplotlib")
    if spec is not None and spec.origin:
        dirs.append(Path(spec.origin).parent / "mpl-data" / "fonts" / "ttf")
    dirs.append(Path("/usr/share/fonts/truetype/dejavu"))
    return dirs


@cache
def register_fonts() -> tuple[str, str]:
    """Register the regular and bold faces with reportlab once; returns their names.

    Raises:
        MissingDependencyError: no DejaVu Sans file was found.
    """
    from reportlab.lib.fonts import addMapping
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    for name, filename in _FILES.items():
        path = next((d / filename for d in _font_dirs() if (d / filename).is_file()), None)
        if path is None:
            raise MissingDependencyError(
                f"font file {filename} not found in {[str(d) for d in _font_dirs()]}; "
                "reinstall prismfab's dependencies (pip install -e .) or install Debian's "
                "fonts-dejavu-core"
            )
        pdfmetrics.registerFont(TTFont(name, str(path)))
    addMapping(REGULAR, 0, 0, REGULAR)
    addMapping(REGULAR, 1, 0, BOLD)
    addMapping(REGULAR, 0, 1, REGULAR)
    addMapping(REGULAR, 1, 1, BOLD)
    return REGULAR, BOLD
