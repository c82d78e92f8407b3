"""Shared building blocks of the design solvers, in one import point.

Every family solver works in the **beam plane** (the system x-z plane, y = 0) with *plane
coordinates* ``(z_mm, x_mm)``: the input beam travels along +z, x is the in-plane transverse
axis. A direction is an angle ``theta`` (rad) from +z towards +x, ``(cos theta, sin theta)``.
Because ``Pose.in_plane`` maps part (X, Y) to plane (z, x) by a proper rotation, a section that
is counter-clockwise in plane coordinates stays counter-clockwise in the part frame, and the
outward normal of the edge from vertex i to i+1 is the edge direction turned clockwise,
``(de_x, -de_z)`` written in (z, x) order, exactly as DEVELOPERS.md states for the part frame.

The code lives in one module per job; this module re-exports it unchanged:
  * ``_plane``: vectors and interface laws (:func:`unit`, :func:`angle_of`, :func:`refract`,
    :func:`reflect`, :func:`fresnel_r`) and polygons (:func:`edge_normal`,
    :func:`line_intersection`, :func:`polygon_from_lines`, :func:`polygon_from_angles`,
    :func:`is_convex_ccw`, :func:`polygons_overlap`)
  * ``_angle_model``: chief-ray angle model, directions only (:class:`PrismAngles`,
    :func:`propagate_angles`, :func:`angular_dispersion`)
  * ``_trace2d``: exact 2D trace through placed sections (:class:`Section`, :func:`trace_plane`,
    :func:`trace_plane_edges`, :func:`resume_plane`)
  * ``_roots``: numerical solvers (:func:`bracketed_root`, :func:`newton`)
  * ``_assembly``: materials, coatings and placement (:func:`material_of`,
    :func:`index_function`, :func:`face_coating`, :func:`place_section`,
    :func:`section_in_plane`, :func:`labels`, :func:`require`)
"""

from __future__ import annotations

from prismfab.design._angle_model import (
    AngleEvent,
    PrismAngles,
    angular_dispersion,
    propagate_angles,
)
from prismfab.design._assembly import (
    LABELS,
    face_coating,
    index_function,
    labels,
    material_of,
    place_section,
    require,
    round_mm,
    section_in_plane,
)
from prismfab.design._plane import (
    angle_of,
    edge_normal,
    fresnel_r,
    is_convex_ccw,
    line_intersection,
    polygon_from_angles,
    polygon_from_lines,
    polygons_overlap,
    reflect,
    refract,
    unit,
)
from prismfab.design._roots import bracketed_root, newton
from prismfab.design._trace2d import (
    Hit,
    PlanePath,
    Section,
    resume_plane,
    section_edges,
    trace_plane,
    trace_plane_edges,
)

__all__ = [
    "LABELS",
    "AngleEvent",
    "Hit",
    "PlanePath",
    "PrismAngles",
    "Section",
    "angle_of",
    "angular_dispersion",
    "bracketed_root",
    "edge_normal",
    "face_coating",
    "fresnel_r",
    "index_function",
    "is_convex_ccw",
    "labels",
    "line_intersection",
    "material_of",
    "newton",
    "place_section",
    "polygon_from_angles",
    "polygon_from_lines",
    "polygons_overlap",
    "propagate_angles",
    "reflect",
    "refract",
    "require",
    "resume_plane",
    "round_mm",
    "section_edges",
    "section_in_plane",
    "trace_plane",
    "trace_plane_edges",
    "unit",
]
