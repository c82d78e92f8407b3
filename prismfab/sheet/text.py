"""Note texts of the PDF writers, read once from ``templates/notes/specification.yaml``."""

from __future__ import annotations

from functools import cache
from pathlib import Path
from typing import Any

__all__ = ["COATING_VERIFICATION", "DATUMS", "INSPECTION", "MELT_DATA", "PACKAGING", "SAFETY"]

NOTES_FILE = Path(__file__).resolve().parents[2] / "templates" / "notes" / "specification.yaml"


@cache
def _notes() -> dict[str, Any]:
    import yaml

    with NOTES_FILE.open(encoding="utf-8") as fh:
        data = yaml.safe_load(fh)
    if not isinstance(data, dict):
        raise ValueError(f"{NOTES_FILE}: expected a mapping of note texts")
    return data


def __getattr__(name: str) -> Any:
    key = name.lower()
    data = _notes()
    if name in __all__ and key in data:
        value = data[key]
        return tuple(value) if isinstance(value, list) else str(value)
    raise AttributeError(name)
