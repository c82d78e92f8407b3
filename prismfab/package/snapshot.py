"""The semantic snapshot of a solved design: what a revision is compared by.

A snapshot is plain JSON data (so it lives in ``revision.json`` and compares across versions of
prismfab): the spec's fields flattened to dotted paths (what the engineer asked for), and per
prism what the shop makes (material, section angles, face lengths, clear apertures, coatings,
ISO 10110 indications, tolerances) plus a few traced figures for summaries. Angles are stored
in degrees, lengths in millimetres, as floats rounded to 1e-9 so the JSON text is stable.
"""

from __future__ import annotations

import dataclasses
import math
from enum import Enum
from typing import Any

from prismfab.model import Part

__all__ = ["FORMAT", "part_snapshot", "snapshot", "spec_fields"]

FORMAT = 1
_SKIP_SPEC_FIELDS = frozenset({"source", "lines", "materials_file"})


def _plain(value: Any) -> Any:
    """A JSON value: enums to their value, tuples to lists, floats rounded to 1e-9."""
    if isinstance(value, Enum):
        return value.value
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        return value
    if isinstance(value, float):
        return round(value, 9) if math.isfinite(value) else str(value)
    if isinstance(value, (tuple, list)):
        return [_plain(v) for v in value]
    return str(value)


def spec_fields(spec: Any) -> dict[str, Any]:
    """Every spec field as ``{dotted path: JSON value}`` (source, line table and file name left out).

    ``fabrication.coatings`` becomes ``fabrication.coatings.<role>.<field>``; the design family
    is ``family``.
    """
    out: dict[str, Any] = {}
    _flatten(spec, "", out)
    return dict(sorted(out.items()))


def _flatten(obj: Any, path: str, out: dict[str, Any]) -> None:
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        for f in dataclasses.fields(obj):
            if not path and f.name in _SKIP_SPEC_FIELDS:
                continue
            _flatten(getattr(obj, f.name), f"{path}.{f.name}" if path else f.name, out)
    elif path.endswith("coatings") and isinstance(obj, tuple):
        for role, coating in obj:
            _flatten(coating, f"{path}.{role}", out)
    else:
        out[path] = _plain(obj)


def part_snapshot(part: Part) -> dict[str, Any]:
    """What the shop makes of one part, as JSON data (see the module docstring)."""
    prism = part.prism
    n = len(prism.faces)
    tol = part.tolerances
    angles = [
        {"faces": f"{prism.faces[i - 1].label}–{prism.faces[i].label}",
         "value_deg": _plain(math.degrees(prism.interior_angle_rad(i))),
         "functional": i in part.functional_angles}
        for i in range(n)
    ]
    faces = {
        f.label: {
            "role": f.role.value,
            "length_mm": _plain(f.length_mm),
            "clear_aperture_mm": _plain(f.clear_aperture_mm),
            "polished": f.polished,
            "surface_form": f.surface_form,
            "surface_imperfections": f.surface_imperfections,
            "coating": f.coating_text,
        }
        for f in part.faces
    }
    return {
        "number": part.number,
        "title": part.title,
        "quantity": part.quantity,
        "material": {"name": part.material_name, "code": part.material_code,
                     "nd": _plain(part.nd), "vd": _plain(part.vd),
                     "indications": list(part.material_indications)},
        "height_mm": _plain(prism.height_mm),
        "bevel_mm": _plain(part.bevel_mm),
        "angles": angles,
        "faces": faces,
        "tolerances": {
            "angle_arcsec": _plain(tol.angle_arcsec),
            "pyramidal_arcsec": _plain(tol.pyramidal_arcsec),
            "length_mm": _plain(tol.length_mm),
            "height_mm": _plain(tol.height_mm),
            "nd": _plain(tol.nd_tolerance),
            "vd_pct": _plain(tol.vd_tolerance_pct),
            "grade": tol.grade,
            "yield_fraction": _plain(tol.yield_fraction),
            "cost_index": _plain(tol.cost_index),
        },
    }


def snapshot(solution: Any, *, extra_hash: str = "") -> dict[str, Any]:
    """The snapshot of a ``prismfab.pipeline.Solution``.

    Args:
        solution: the solved design.
        extra_hash: hash of the user materials file and solve lock, when there are any (a
            change to them is a change of the design even when the spec text is the same).
    """
    design = solution.performance.design
    return {
        "format": FORMAT,
        "spec": spec_fields(solution.spec),
        "inputs_sha256": extra_hash,
        "parts": {p.prism.name: part_snapshot(p) for p in solution.parts},
        "performance": {
            "magnification_in_plane": _plain(design.magnification_in_plane),
            "pointing_mrad": _plain(design.pointing_mrad),
            "lateral_offset_mm": _plain(design.lateral_offset_mm),
            "transmission": _plain(design.transmission),
        },
    }
