"""PDF writers: the fabrication sheet per part and the system report (reportlab, imported lazily)."""

from __future__ import annotations

from typing import Any

__all__ = ["fabrication_sheet", "system_report"]


def fabrication_sheet(*args: Any, **kwargs: Any) -> Any:
    """See ``prismfab.sheet.fabrication.fabrication_sheet``."""
    from prismfab.sheet.fabrication import fabrication_sheet as _write

    return _write(*args, **kwargs)


def system_report(*args: Any, **kwargs: Any) -> Any:
    """See ``prismfab.sheet.report.system_report``."""
    from prismfab.sheet.report import system_report as _write

    return _write(*args, **kwargs)
