"""The system assembly STEP: every prism at its solved pose, the nominal beam path, a mount plane.

System frame (DEVELOPERS.md): the input beam travels along +z, x lies in the plane of incidence,
y is out of plane; prism heights run along +y with the beam plane at y = 0. Each prism is one
product (its part solid in the part frame, with named faces) placed by its ``Pose``
(``system_point = rotation @ part_point + translation``). Two more named components:

* ``chief ray``: the nominal chief-ray path as a chain of thin cylinders (radius
  ``BEAM_RADIUS_MM``) between the given path points, in the system frame;
* ``mounting reference plane`` (optional): a plate of ``PLATE_THICKNESS_MM`` whose top lies a
  clearance below the lowest prism end face (y = -height/2 - clearance for centred prisms),
  spanning the prisms' footprint plus a margin.

Determinism: the OCCT STEP writer orders the styled items of colours on more than one product
from pointer-keyed maps, so an assembly with several coloured parts changes its bytes from run to
run (measured here: two prisms with face colours
gave 4 different files in 6 processes, the beam alone coloured gave 1 in 3). Only the chief ray is coloured here (red),
prisms and plate carry names and face names but no colours; that keeps the file byte-identical
across runs. Coloured single parts are in the part STEP files.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from prismfab.cad.step import (
    StepSchema,
    add_part,
    new_document,
    product_name,
    set_colour,
    set_name,
    write_document,
)
from prismfab.model import Part, Pose, Vec3

__all__ = [
    "BEAM_RADIUS_MM",
    "PLATE_MARGIN_MM",
    "PLATE_THICKNESS_MM",
    "assembly_step",
    "plate_box_mm",
]

BEAM_RADIUS_MM = 0.1
"""Radius of the chief-ray cylinders (a thin marker, not the beam size)."""
PLATE_THICKNESS_MM = 2.0
PLATE_MARGIN_MM = 5.0
"""How far the mounting plate reaches beyond the prisms' footprint in x and z."""
BEAM_COLOUR = (0.90, 0.10, 0.10)
RAY_ID, PLATE_ID = "chief-ray", "mounting-plane"


def assembly_step(source: Any, path: str | os.PathLike[str], *,
                  chief_ray_mm: Sequence[Sequence[float]] | None = None,
                  plate_clearance_mm: float | None = 2.0, name: str = "prism system",
                  schema: StepSchema = StepSchema.AP214) -> Path:
    """Write the system assembly as one STEP file, system frame, millimetres.

    Args:
        source: a ``prismfab.pipeline.Solution`` (its ``parts`` and
            ``performance.chief_ray_mm`` are used) or a sequence of ``Part`` (placed by
            ``part.prism.pose``).
        path: the file to write (replaced atomically).
        chief_ray_mm: the chief-ray path points in the system frame; overrides the solution's.
            Fewer than two points: no beam component.
        plate_clearance_mm: gap between the lowest prism end face and the mounting plate's top,
            mm; None for no plate.
        name: the assembly's product name.
        schema: the application protocol.

    Returns:
        The path written.

    Raises:
        DesignCheckError: a part's bevel does not fit.
        OutputError: the file cannot be written.
    """
    parts, ray = _unpack(source, chief_ray_mm)
    if not parts:
        raise ValueError("assembly_step needs at least one part")
    doc = new_document()
    root = _new_assembly(doc, name)
    products = {name: (name, name, "prism system assembly, system frame, mm")}
    for part in parts:
        _add_prism(doc, root, part)
        products[part.number] = (part.number, product_name(part), part.material_name)
    if len(ray) >= 2:
        _add_free(doc, root, _ray_shape(ray), "chief ray", colour=BEAM_COLOUR)
        products["chief ray"] = (RAY_ID, "chief ray", "nominal chief-ray path, system frame")
    if plate_clearance_mm is not None:
        _add_free(doc, root, _plate_shape(plate_box_mm(parts, plate_clearance_mm)),
                  "mounting reference plane", colour=None)
        products["mounting reference plane"] = (PLATE_ID, "mounting reference plane",
                                                "top face = mounting reference plane")
    _shape_tool(doc).UpdateAssemblies()
    target = Path(path)
    write_document(doc, target, products=products, file_name=name,
                   description=f"{name}; system frame; mm", schema=schema)
    return target


def _unpack(source: Any, ray: Sequence[Sequence[float]] | None
            ) -> tuple[tuple[Part, ...], tuple[Vec3, ...]]:
    if hasattr(source, "parts"):
        parts = tuple(source.parts)
        if ray is None:
            ray = getattr(getattr(source, "performance", None), "chief_ray_mm", ())
    else:
        parts = tuple(source)
    points = tuple((float(p[0]), float(p[1]), float(p[2])) for p in (ray or ()))
    return parts, points


def _shape_tool(doc: Any) -> Any:
    from OCP.XCAFDoc import XCAFDoc_DocumentTool

    return XCAFDoc_DocumentTool.ShapeTool_s(doc.Main())


def _new_assembly(doc: Any, name: str) -> Any:
    label = _shape_tool(doc).NewShape()
    set_name(label, name)
    return label


def _location(pose: Pose) -> Any:
    from OCP.gp import gp_Trsf
    from OCP.TopLoc import TopLoc_Location

    (a, b, c), (d, e, f), (g, h, i) = pose.rotation
    tx, ty, tz = pose.translation_mm
    trsf = gp_Trsf()
    trsf.SetValues(a, b, c, tx, d, e, f, ty, g, h, i, tz)
    return TopLoc_Location(trsf)


def _add_prism(doc: Any, root: Any, part: Part) -> None:
    from prismfab.cad.solid import build_solid

    label = add_part(doc, part, build_solid(part).shape, colours=False)
    component = _shape_tool(doc).AddComponent(root, label, _location(part.prism.pose))
    set_name(component, part.prism.name)


def _add_free(doc: Any, root: Any, shape: Any, name: str,
              colour: tuple[float, float, float] | None) -> None:
    from OCP.TopLoc import TopLoc_Location

    tool = _shape_tool(doc)
    label = tool.AddShape(shape, False)
    set_name(label, name)
    if colour is not None:
        set_colour(doc, label, colour, surface=True)
    set_name(tool.AddComponent(root, label, TopLoc_Location()), name)


def _ray_shape(points: tuple[Vec3, ...]) -> Any:
    """A compound of thin cylinders, one per path segment (system frame)."""
    from OCP.BRep import BRep_Builder
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeCylinder
    from OCP.gp import gp_Ax2, gp_Dir, gp_Pnt
    from OCP.TopoDS import TopoDS_Compound

    compound, builder = TopoDS_Compound(), BRep_Builder()
    builder.MakeCompound(compound)
    for p, q in zip(points, points[1:], strict=False):
        d = (q[0] - p[0], q[1] - p[1], q[2] - p[2])
        length = math.sqrt(d[0] ** 2 + d[1] ** 2 + d[2] ** 2)
        if length < 1e-9:
            continue
        axis = gp_Ax2(gp_Pnt(*p), gp_Dir(*d))
        builder.Add(compound, BRepPrimAPI_MakeCylinder(axis, BEAM_RADIUS_MM, length).Shape())
    return compound


def plate_box_mm(parts: Sequence[Part], clearance_mm: float) -> tuple[Vec3, Vec3]:
    """Lower and upper corners of the mounting plate, system frame (mm).

    Its top lies ``clearance_mm`` below the lowest point of any prism; in x and z it covers every
    prism's footprint plus ``PLATE_MARGIN_MM``.
    """
    corners = [part.prism.pose.apply((x, y, z)) for part in parts
               for x, y in part.prism.vertices_mm for z in (0.0, part.prism.height_mm)]
    xs, ys, zs = zip(*corners, strict=True)
    top = min(ys) - clearance_mm
    return ((min(xs) - PLATE_MARGIN_MM, top - PLATE_THICKNESS_MM, min(zs) - PLATE_MARGIN_MM),
            (max(xs) + PLATE_MARGIN_MM, top, max(zs) + PLATE_MARGIN_MM))


def _plate_shape(box: tuple[Vec3, Vec3]) -> Any:
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeBox
    from OCP.gp import gp_Pnt

    return BRepPrimAPI_MakeBox(gp_Pnt(*box[0]), gp_Pnt(*box[1])).Shape()
