"""CAD writers: part solids, part and assembly STEP files, hidden-line views for the sheets.

Importing this package is cheap: cadquery and OCP are imported only inside the functions that
use them (about 2.5-4 s the first time in a process, see shared stack notes).

* ``part_solid(part)``: the bevelled solid in the part frame (``cadquery.Solid``).
* ``part_step(part, path)``: one deterministic STEP AP214 file per part, named and coloured.
* ``assembly_step(solution_or_parts, path)``: the prisms at their poses in the system frame,
  the chief-ray path and a mounting reference plane.
* ``project_views(part, views)``: visible and hidden 2D polylines per view, part-frame mm.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    import os

    from prismfab.cad.projection import ProjectedView, ViewSpec
    from prismfab.model import Part

__all__ = ["assembly_step", "part_solid", "part_step", "project_views"]


def part_solid(part: Part) -> Any:
    """The part's bevelled solid, part frame, mm (see ``prismfab.cad.solid.part_solid``)."""
    from prismfab.cad.solid import part_solid as build

    return build(part)


def part_step(part: Part, path: str | os.PathLike[str]) -> Path:
    """Write the part STEP file (see ``prismfab.cad.step.part_step``)."""
    from prismfab.cad.step import part_step as write

    return write(part, path)


def assembly_step(source: Any, path: str | os.PathLike[str], **options: Any) -> Path:
    """Write the system assembly STEP file (see ``prismfab.cad.assembly.assembly_step``)."""
    from prismfab.cad.assembly import assembly_step as write

    return write(source, path, **options)


def project_views(part: Part, views: Sequence[ViewSpec] | None = None
                  ) -> tuple[ProjectedView, ...]:
    """Hidden-line views of the part (see ``prismfab.cad.projection.project_views``).

    Args:
        part: the part.
        views: the views; None gives the principal section from +Z and the side view from -Y.
    """
    from prismfab.cad import projection

    if views is None:
        return projection.project_views(part)
    return projection.project_views(part, views)
