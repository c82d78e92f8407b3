"""Sheet templates: paper, frame, text sizes, areas, title-block cells and revision table, as data.

Templates live in ``templates/sheets/<name>.yaml``; a user may pass the path of their own file.
Boxes are ``[x, y, width, height]`` in paper mm from the lower-left corner of the trimmed sheet.
In the ``views`` and ``notes`` boxes, ``y: 0`` means "start above the title block and revision
table" and ``height: 0`` means "reach up to the face table".
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from prismfab.errors import SpecError

__all__ = ["Box", "SheetTemplate", "TitleCell", "load_template", "template_dirs"]

Box = tuple[float, float, float, float]
_PATH = "sheet.template"
TITLE_FIELDS = frozenset({
    "company", "number", "revision", "date", "sheet", "title", "approved_by", "drawn_by",
    "checked_by", "document_type", "scale", "projection", "units", "paper", "quantity",
    "material", "scenario",
})


@dataclass(frozen=True, slots=True)
class TitleCell:
    """One title-block cell: box relative to the block origin (mm), label, data field."""

    x: float
    y: float
    w: float
    h: float
    label: str
    field: str


@dataclass(frozen=True, slots=True)
class SheetTemplate:
    """A parsed sheet template (see the module docstring for the box conventions)."""

    name: str
    paper: str
    width_mm: float
    height_mm: float
    border_left_mm: float
    border_right_mm: float
    border_bottom_mm: float
    border_top_mm: float
    frame_width_mm: float
    centring_mark_mm: float
    grid_field_mm: float
    text_mm: tuple[tuple[str, float], ...]
    face_table: Box
    views: Box
    notes: Box
    title_origin: tuple[float, float]
    title_width_mm: float
    title_cells: tuple[TitleCell, ...]
    revision_row_mm: float
    revision_columns: tuple[tuple[str, float], ...]

    def text(self, role: str) -> float:
        """Character height of a text role ("dimension", "table", "notes", ...), mm."""
        return dict(self.text_mm)[role]

    @property
    def frame_box(self) -> Box:
        """The drawing frame: (x, y, width, height), paper mm."""
        return (self.border_left_mm, self.border_bottom_mm,
                self.width_mm - self.border_left_mm - self.border_right_mm,
                self.height_mm - self.border_bottom_mm - self.border_top_mm)

    @property
    def title_height_mm(self) -> float:
        """Height of the title block, mm."""
        return max(c.y + c.h for c in self.title_cells)


def template_dirs() -> tuple[Path, ...]:
    """Where named templates are looked up, in order."""
    here = Path(__file__).resolve().parent
    return (here.parent / "templates" / "sheets", here.parents[1] / "templates" / "sheets")


def load_template(name_or_path: str) -> SheetTemplate:
    """Load a sheet template by name ("a3-landscape") or by the path of a YAML file.

    Raises:
        SpecError: the template is unknown or a field is missing or wrong.
    """
    path = Path(name_or_path)
    if not (path.suffix in (".yaml", ".yml") and path.is_file()):
        found = [d / f"{name_or_path}.yaml" for d in template_dirs() if (d / f"{name_or_path}.yaml").is_file()]
        if not found:
            known = sorted({p.stem for d in template_dirs() if d.is_dir() for p in d.glob("*.yaml")})
            raise SpecError(_PATH, f"names unknown template {name_or_path!r}",
                            fix=f"use one of {', '.join(known)} or the path of a template YAML file")
        path = found[0]
    try:
        stat = path.stat()
        return _load_file(str(path), stat.st_mtime_ns, stat.st_size)
    except OSError as err:
        raise SpecError(_PATH, f"file {path} cannot be read ({err})",
                        fix="check the file is valid YAML") from err


@lru_cache(maxsize=16)
def _load_file(path: str, mtime_ns: int, size: int) -> SheetTemplate:
    """Parse a template file once per process and version of the file (mtime and size key it)."""
    import yaml

    try:
        data = yaml.safe_load(Path(path).read_text(encoding="utf-8"))
    except yaml.YAMLError as err:
        raise SpecError(_PATH, f"file {path} cannot be read ({err})",
                        fix="check the file is valid YAML") from err
    return _parse(data, path)


def _get(data: Any, key: str, where: str, source: str) -> Any:
    if not isinstance(data, dict) or key not in data:
        raise SpecError(f"{_PATH}.{where}{key}", "is missing", source=source,
                        fix="copy templates/sheets/a3-landscape.yaml and edit it")
    return data[key]


def _num(data: Any, key: str, where: str, source: str) -> float:
    value = _get(data, key, where, source)
    if isinstance(value, bool) or not isinstance(value, int | float) or value < 0:
        raise SpecError(f"{_PATH}.{where}{key}", f"must be a number >= 0, got {value!r}", source=source)
    return float(value)


def _box(data: Any, key: str, source: str) -> Box:
    value = _get(data, key, "areas.", source)
    if not (isinstance(value, list) and len(value) == 4
            and all(isinstance(v, int | float) and not isinstance(v, bool) for v in value)):
        raise SpecError(f"{_PATH}.areas.{key}", f"must be [x, y, width, height] in mm, got {value!r}",
                        source=source)
    return (float(value[0]), float(value[1]), float(value[2]), float(value[3]))


def _parse(data: Any, source: str) -> SheetTemplate:
    paper, borders, frame = (_get(data, k, "", source) for k in ("paper", "borders_mm", "frame"))
    text = _get(data, "text_mm", "", source)
    roles = ("dimension", "label", "table", "notes", "field_label", "title", "grid")
    areas, tb, rev = (_get(data, k, "", source) for k in ("areas", "title_block", "revision_table"))
    cells = []
    for i, c in enumerate(_get(tb, "cells", "title_block.", source)):
        where = f"title_block.cells[{i}]."
        field = str(_get(c, "field", where, source))
        if field not in TITLE_FIELDS:
            raise SpecError(f"{_PATH}.{where}field", f"names unknown field {field!r}", source=source,
                            fix=f"use one of {', '.join(sorted(TITLE_FIELDS))}")
        cells.append(TitleCell(*(_num(c, k, where, source) for k in ("x", "y", "w", "h")),
                               label=str(_get(c, "label", where, source)), field=field))
    origin = _get(tb, "origin", "title_block.", source)
    columns = tuple((str(_get(c, "label", "revision_table.columns.", source)),
                     _num(c, "w", "revision_table.columns.", source))
                    for c in _get(rev, "columns", "revision_table.", source))
    return SheetTemplate(
        name=str(_get(data, "name", "", source)), paper=str(_get(paper, "size", "paper.", source)),
        width_mm=_num(paper, "width_mm", "paper.", source),
        height_mm=_num(paper, "height_mm", "paper.", source),
        border_left_mm=_num(borders, "left", "borders_mm.", source),
        border_right_mm=_num(borders, "right", "borders_mm.", source),
        border_bottom_mm=_num(borders, "bottom", "borders_mm.", source),
        border_top_mm=_num(borders, "top", "borders_mm.", source),
        frame_width_mm=_num(frame, "line_width_mm", "frame.", source),
        centring_mark_mm=_num(frame, "centring_mark_mm", "frame.", source),
        grid_field_mm=_num(frame, "grid_field_mm", "frame.", source),
        text_mm=tuple((r, _num(text, r, "text_mm.", source)) for r in roles),
        face_table=_box(areas, "face_table", source), views=_box(areas, "views", source),
        notes=_box(areas, "notes", source),
        title_origin=(float(origin[0]), float(origin[1])),
        title_width_mm=_num(tb, "width_mm", "title_block.", source),
        title_cells=tuple(cells), revision_row_mm=_num(rev, "row_mm", "revision_table.", source),
        revision_columns=columns,
    )
