"""One embedded TrueType family for every PDF prismfab writes.

The DejaVu Sans files come with the plotting library that the CAD kernel's install brings along;
their path is found without importing that library. Debian's font package is the fallback. The
font is embedded as a subset, so text stays selectable and output stays byte-identical.
"""

from __future__ import annotations

from functools import cache

from prismfab.drawing import fonts

__all__ = ["BOLD", "REGULAR", "register_fonts"]

REGULAR = fonts.REGULAR
BOLD = fonts.BOLD


@cache
def register_fonts() -> tuple[str, str]:
    """Register the regular and bold faces with reportlab once; returns their names.

    Raises:
        MissingDependencyError: no DejaVu Sans file was found.
    """
    from reportlab.lib.fonts import addMapping

    # The drawing backends register the same two files under the same names; parsing a face
    # takes tens of milliseconds, so both share one registration per process.
    fonts.register()
    addMapping(REGULAR, 0, 0, REGULAR)
    addMapping(REGULAR, 1, 0, BOLD)
    addMapping(REGULAR, 0, 1, REGULAR)
    addMapping(REGULAR, 1, 1, BOLD)
    return REGULAR, BOLD
