"""The solid of one part, in the part frame, with its protective bevels.

Part frame (DEVELOPERS.md): datum vertex at the origin, principal section in the XY plane,
counter-clockwise seen from +Z, height along +Z; the lower end face (datum A, ``BOTTOM``) lies on
Z = 0 and the upper one (``TOP``) on Z = height. The section polygon already carries the apex
flats as ground faces, so the solid is the plain extrusion of that polygon, then chamfered.

Bevels: ``Part.bevel_mm`` is the bevel's *face width* w (what a drawing calls "0.3 × 45°"). A
symmetric chamfer on an edge of interior dihedral angle θ has legs a = w / (2 sin(θ/2)) along
each face (isosceles triangle with apex θ and base w). Every chamfer goes into one
``BRepFilletAPI_MakeChamfer`` (chained builders renumber the topology between calls). If that
builder fails or gives an invalid shape although the fit check below says the bevels fit, the
same bevels are cut as planar half-spaces: for a convex prism a symmetric chamfer is exactly the
half-space with normal (n1 + n2)/|n1 + n2| through the points at leg a on either face.

Fit check (done before any kernel call, so a misfit is a ``DesignCheckError`` that names the
edge and the numbers, never a kernel failure): along every face, the stretch left between the
chamfer legs that eat into it from both ends must be at least ``FIT_MARGIN_MM``:

* a side face along the section loses the legs of the bevelled vertical edges at its ends;
* a side face along the height loses the legs of its bevelled TOP and BOTTOM edges;
* an end face along side face i loses, at each end vertex of interior angle α, the distance
  (d_prev + d_i cos α) / sin α where the inward strips of width d_prev and d_i meet, plus the leg
  of a bevelled vertical edge there. At an acute apex this grows as d / tan(α/2): the rule that
  the chamfer strips on an end face must not meet along the face.

Faces are found by outward normal and plane offset (never by index order), because chamfering
and boolean operations renumber the topology.
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Iterator
from dataclasses import dataclass
from enum import Enum
from typing import Any

import numpy as np

from prismfab.errors import DesignCheckError
from prismfab.model import Part, Vec3

__all__ = [
    "BOTTOM",
    "FIT_MARGIN_MM",
    "TOP",
    "Bevel",
    "BuiltSolid",
    "ChamferMethod",
    "FacePlane",
    "bevels",
    "build_solid",
    "chamfer_planes",
    "face_planes",
    "find_face",
    "part_solid",
    "quiet_kernel",
    "reuse_solids",
]

TOP = "TOP"
BOTTOM = "BOTTOM"
FIT_MARGIN_MM = 0.1
"""Least face stretch left between chamfer legs (our choice: a margin so no face vanishes)."""
PLANE_TOL_MM = 1e-6
"""A face lies on a plane when its offset matches to this (mm)."""
NORMAL_TOL = 1e-9
"""A face normal matches when 1 - cos(angle) is below this (about 0.003°)."""
_BEVEL_PATH = "fabrication.bevel_mm"


class ChamferMethod(Enum):
    """How the bevels are made."""

    AUTO = "auto"  # the chamfer builder, planar half-space cuts if it fails
    BUILDER = "builder"  # BRepFilletAPI_MakeChamfer only
    PLANAR = "planar"  # planar half-space cuts only (every face planar)


@dataclass(frozen=True, slots=True)
class FacePlane:
    """A face plane of the part, in the part frame.

    Args:
        name: face label, ``"TOP"`` or ``"BOTTOM"``, or ``"A/B"`` for a bevel between A and B.
        normal: outward unit normal.
        offset_mm: ``normal · x`` on the plane; the solid lies where ``normal · x <= offset_mm``.
    """

    name: str
    normal: Vec3
    offset_mm: float


@dataclass(frozen=True, slots=True)
class Bevel:
    """One bevelled edge, checked to fit.

    Args:
        edge: the two faces it joins, as named in ``Part.bevelled_edges``.
        planes: the planes of those two faces.
        dihedral_rad: interior angle between the two faces.
        width_mm: bevel face width w.
        leg_mm: leg along each face, w / (2 sin(θ/2)).
    """

    edge: tuple[str, str]
    planes: tuple[FacePlane, FacePlane]
    dihedral_rad: float
    width_mm: float
    leg_mm: float

    @property
    def label(self) -> str:
        """The edge as written on drawings, e.g. ``"A/TOP"``."""
        return f"{self.edge[0]}/{self.edge[1]}"


@dataclass(frozen=True)
class BuiltSolid:
    """A built part solid (kernel objects; not a model value).

    Args:
        shape: the ``TopoDS_Solid``, part frame, mm.
        method: which method made the bevels (``BUILDER`` or ``PLANAR``; ``BUILDER`` also when
            there is nothing to bevel).
        planes: the side, end and bevel planes, part frame.
    """

    shape: Any
    method: ChamferMethod
    planes: tuple[FacePlane, ...]


def face_planes(part: Part) -> tuple[FacePlane, ...]:
    """The side face planes (in face order), then BOTTOM (Z = 0) and TOP (Z = height)."""
    verts = part.prism.vertices_mm
    out = []
    for i, face in enumerate(part.prism.faces):
        (x0, y0), (x1, y1) = verts[i], verts[(i + 1) % len(verts)]
        length = math.hypot(x1 - x0, y1 - y0)
        n = ((y1 - y0) / length, -(x1 - x0) / length, 0.0)
        out.append(FacePlane(face.label, n, n[0] * x0 + n[1] * y0))
    out.append(FacePlane(BOTTOM, (0.0, 0.0, -1.0), 0.0))
    out.append(FacePlane(TOP, (0.0, 0.0, 1.0), part.prism.height_mm))
    return tuple(out)


def _fail(part: Part, edge: str, reason: str, fix: str) -> DesignCheckError:
    return DesignCheckError(_BEVEL_PATH, f"part {part.number}: edge {edge} {reason}; {fix}")


def _edge_names(part: Part, edges: tuple[tuple[str, str], ...], what: str) -> set[frozenset[str]]:
    labels = [f.label for f in part.prism.faces]
    n = len(labels)
    out: set[frozenset[str]] = set()
    for a, b in edges:
        for name in (a, b):
            if name not in labels and name not in (TOP, BOTTOM):
                raise _fail(part, f"{a}/{b}", f"in {what} names no face {name!r}",
                            f"use face labels {', '.join(labels)}, TOP or BOTTOM")
        sides = [labels.index(x) for x in (a, b) if x in labels]
        adjacent = len(sides) == 1 or (len(sides) == 2 and (sides[0] - sides[1]) % n in (1, n - 1))
        if not adjacent:
            raise _fail(part, f"{a}/{b}", f"in {what} joins faces that do not meet",
                        "name two faces that share an edge")
        out.add(frozenset((a, b)))
    return out


def bevels(part: Part) -> tuple[Bevel, ...]:
    """Resolve ``part.bevelled_edges`` into chamfers with legs, and check that they fit.

    Raises:
        DesignCheckError: an edge names no face, joins faces that do not meet, is both bevelled
            and sharp, or its bevel does not fit (the message names the edge and the numbers).
    """
    _check_section(part)
    bevelled = _edge_names(part, part.bevelled_edges, "bevelled_edges")
    sharp = _edge_names(part, part.sharp_edges, "sharp_edges")
    both = bevelled & sharp
    if both:
        edge = "/".join(sorted(next(iter(sorted(both, key=sorted)))))
        raise _fail(part, edge, "is listed as both bevelled and sharp", "list it only once")
    if part.bevel_mm < 0 or not math.isfinite(part.bevel_mm):
        raise _fail(part, "(all)", f"has a bevel width of {part.bevel_mm} mm",
                    "use a bevel width of 0 mm or more")
    if part.bevel_mm == 0:
        return ()
    planes = {p.name: p for p in face_planes(part)}
    seen: set[frozenset[str]] = set()
    out = []
    for a, b in part.bevelled_edges:
        if frozenset((a, b)) in seen:
            continue
        seen.add(frozenset((a, b)))
        p1, p2 = planes[a], planes[b]
        cos_n = float(np.dot(p1.normal, p2.normal))
        dihedral = math.pi - math.acos(max(-1.0, min(1.0, cos_n)))
        leg = part.bevel_mm / (2.0 * math.sin(dihedral / 2.0))
        out.append(Bevel((a, b), (p1, p2), dihedral, part.bevel_mm, leg))
    result = tuple(out)
    _check_fit(part, result)
    return result


def _check_section(part: Part) -> None:
    """The section must be convex and counter-clockwise (the part-frame convention)."""
    prism = part.prism
    for i in range(len(prism.vertices_mm)):
        angle = prism.interior_angle_rad(i)
        if not 1e-9 < angle < math.pi - 1e-9:
            raise DesignCheckError(
                "prism.vertices_mm", f"part {part.number}: the section is not a convex "
                f"counter-clockwise polygon (interior angle {math.degrees(angle):.6g}° at vertex "
                f"{i}); list the vertices counter-clockwise seen from +Z, without collinear ones")


def _legs(bevs: tuple[Bevel, ...]) -> dict[frozenset[str], float]:
    return {frozenset(b.edge): b.leg_mm for b in bevs}


def _check_fit(part: Part, bevs: tuple[Bevel, ...]) -> None:
    prism = part.prism
    labels = [f.label for f in prism.faces]
    n, legs = len(labels), _legs(bevs)
    fix = (f"make bevel_mm smaller than {part.bevel_mm} mm, truncate the apex with a wider flat, "
           "or mark the edge sharp")

    def leg(a: str, b: str) -> float:
        return legs.get(frozenset((a, b)), 0.0)

    for i in range(n):
        here, prev, nxt = labels[i], labels[i - 1], labels[(i + 1) % n]
        length = prism.face_length_mm(i)
        used = leg(prev, here) + leg(here, nxt)
        if length - used < FIT_MARGIN_MM:
            raise _fail(part, f"{prev}/{here}" if leg(prev, here) else f"{here}/{nxt}",
                        f"bevel legs take {used:.4g} mm of face {here}, which is {length:.4g} mm "
                        f"long (at least {FIT_MARGIN_MM} mm must stay)", fix)
        used = leg(here, TOP) + leg(here, BOTTOM)
        if prism.height_mm - used < FIT_MARGIN_MM:
            raise _fail(part, f"{here}/{TOP}", f"and {here}/{BOTTOM} bevel legs take {used:.4g} mm"
                        f" of the {prism.height_mm:.4g} mm height", fix)
        for end in (BOTTOM, TOP):
            start = _end_consumption(prism.interior_angle_rad(i), leg(prev, end), leg(here, end),
                                     leg(prev, here))
            stop = _end_consumption(prism.interior_angle_rad((i + 1) % n), leg(nxt, end),
                                    leg(here, end), leg(here, nxt))
            if length - start - stop < FIT_MARGIN_MM:
                apex = math.degrees(min(prism.interior_angle_rad(i),
                                        prism.interior_angle_rad((i + 1) % n)))
                raise _fail(part, f"{here}/{end}",
                            f"bevel strips on the {end} face need {start + stop:.4g} mm along face "
                            f"{here}, which is {length:.4g} mm long (interior angle down to "
                            f"{apex:.4g}°, leg {leg(here, end) or leg(prev, end):.4g} mm; at "
                            f"least {FIT_MARGIN_MM} mm must stay)", fix)


def _end_consumption(alpha_rad: float, d_other_mm: float, d_here_mm: float, vertical_mm: float
                     ) -> float:
    """Length of a side face's trace on an end face eaten at one vertex (mm)."""
    meet = (d_other_mm + d_here_mm * math.cos(alpha_rad)) / math.sin(alpha_rad)
    return max(meet, 0.0) + vertical_mm


def chamfer_planes(bevs: tuple[Bevel, ...]) -> tuple[FacePlane, ...]:
    """The plane of each symmetric chamfer, part frame (planar form of the bevels)."""
    out = []
    for bev in bevs:
        p1, p2 = bev.planes
        n1, n2 = np.array(p1.normal), np.array(p2.normal)
        edge_point = np.linalg.pinv(np.vstack([n1, n2])) @ np.array([p1.offset_mm, p2.offset_mm])
        into_face1 = -(n2 - np.dot(n1, n2) * n1)
        into_face1 /= np.linalg.norm(into_face1)
        normal = (n1 + n2) / np.linalg.norm(n1 + n2)
        offset = float(normal @ (edge_point + bev.leg_mm * into_face1))
        n3 = (float(normal[0]), float(normal[1]), float(normal[2]))
        out.append(FacePlane(bev.label, n3, offset))
    return tuple(out)


def part_solid(part: Part, *, method: ChamferMethod = ChamferMethod.AUTO) -> Any:
    """The part's solid in the part frame, bevelled, as a ``cadquery.Solid``.

    Args:
        part: the part; its section, height, bevel width and bevelled edges are used.
        method: how to make the bevels (see ``ChamferMethod``).

    Raises:
        DesignCheckError: a bevel does not fit (names the edge and the numbers), or the kernel
            could not make a valid solid.
    """
    import cadquery as cq

    return cq.Solid(build_solid(part, method=method).shape)


def quiet_kernel() -> None:
    """Keep the CAD kernel's progress messages off stdout (failures are still reported)."""
    from OCP.Message import Message, Message_Gravity

    for printer in Message.DefaultMessenger_s().Printers():
        printer.SetTraceLevel(Message_Gravity.Message_Fail)


_REUSE: dict[tuple[Part, ChamferMethod], BuiltSolid] | None = None


@contextlib.contextmanager
def reuse_solids() -> Iterator[None]:
    """Within the block, ``build_solid`` builds each part's solid once and hands it out again.

    A package writes each part's STEP file and then the assembly, which holds the same solids;
    the kernel shapes are never modified after they are built, so sharing them is safe. Outside
    such a block every call builds afresh.
    """
    global _REUSE
    outer = _REUSE
    _REUSE = {} if outer is None else outer
    try:
        yield
    finally:
        _REUSE = outer


def build_solid(part: Part, *, method: ChamferMethod = ChamferMethod.AUTO) -> BuiltSolid:
    """Build the bevelled solid and report how (kernel objects; see ``part_solid``)."""
    if _REUSE is None:
        return _build(part, method)
    key = (part, method)
    if key not in _REUSE:
        _REUSE[key] = _build(part, method)
    return _REUSE[key]


def _build(part: Part, method: ChamferMethod) -> BuiltSolid:
    quiet_kernel()
    bevs = bevels(part)
    base = _extrude(part)
    planes = face_planes(part)
    if not bevs:
        return _checked(part, BuiltSolid(base, ChamferMethod.BUILDER, planes))
    planes = planes + chamfer_planes(bevs)
    if method is not ChamferMethod.PLANAR:
        shape = _chamfer(part, base, bevs)
        if shape is not None and _is_valid(shape):
            return BuiltSolid(shape, ChamferMethod.BUILDER, planes)  # checked just now
        if method is ChamferMethod.BUILDER:
            raise DesignCheckError(_BEVEL_PATH, f"part {part.number}: the chamfer builder failed "
                                   "on bevels that pass the fit check; use the planar method")
    shape = _cut_planar(base, chamfer_planes(bevs))
    return _checked(part, BuiltSolid(shape, ChamferMethod.PLANAR, planes))


def _extrude(part: Part) -> Any:
    from OCP.BRepBuilderAPI import BRepBuilderAPI_MakeFace, BRepBuilderAPI_MakePolygon
    from OCP.BRepPrimAPI import BRepPrimAPI_MakePrism
    from OCP.gp import gp_Pnt, gp_Vec

    poly = BRepBuilderAPI_MakePolygon()
    for x, y in part.prism.vertices_mm:
        poly.Add(gp_Pnt(float(x), float(y), 0.0))
    poly.Close()
    face = BRepBuilderAPI_MakeFace(poly.Wire(), True).Face()
    # Copy=True: the top face gets its own geometry instead of a located copy of the bottom one;
    # a located face is not matched to its STEP entity, so its name would be lost.
    return BRepPrimAPI_MakePrism(face, gp_Vec(0.0, 0.0, part.prism.height_mm), True, True).Shape()


def _chamfer(part: Part, shape: Any, bevs: tuple[Bevel, ...]) -> Any | None:
    """All bevels in one chamfer builder; None if the kernel fails."""
    from OCP.BRepFilletAPI import BRepFilletAPI_MakeChamfer

    builder = BRepFilletAPI_MakeChamfer(shape)
    for bev in bevs:
        f1, f2 = (find_face(shape, p) for p in bev.planes)
        builder.Add(bev.leg_mm, _shared_edge(f1, f2, bev.label))
    try:  # the kernel reports failure only by exception or IsDone, with no reason
        builder.Build()
    except Exception:  # noqa: BLE001 - StdFail_NotDone and Standard_Failure come as bare errors
        return None
    return _single_solid(builder.Shape()) if builder.IsDone() else None


def _cut_planar(shape: Any, planes: tuple[FacePlane, ...]) -> Any:
    """Cut every chamfer plane as a half-space, one after the other.

    One boolean with all half-spaces as tools does not work: the tools overlap each other and
    the result splits into pieces, so the cuts are sequential (about 7 ms each).
    """
    from OCP.BRepAlgoAPI import BRepAlgoAPI_Cut
    from OCP.BRepBuilderAPI import BRepBuilderAPI_MakeFace
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeHalfSpace
    from OCP.gp import gp_Dir, gp_Pln, gp_Pnt

    for p in planes:
        n = np.array(p.normal)
        on = n * p.offset_mm
        face = BRepBuilderAPI_MakeFace(gp_Pln(gp_Pnt(*on), gp_Dir(*n))).Face()
        half = BRepPrimAPI_MakeHalfSpace(face, gp_Pnt(*(on + n))).Solid()
        cut = BRepAlgoAPI_Cut(shape, half)
        if not cut.IsDone():
            return None
        shape = _single_solid(cut.Shape())
        if shape is None:
            return None
    return shape


def _single_solid(shape: Any) -> Any | None:
    from OCP.TopAbs import TopAbs_SOLID
    from OCP.TopExp import TopExp_Explorer
    from OCP.TopoDS import TopoDS

    solids = []
    explorer = TopExp_Explorer(shape, TopAbs_SOLID)
    while explorer.More():
        solids.append(TopoDS.Solid_s(explorer.Current()))
        explorer.Next()
    return solids[0] if len(solids) == 1 else None


def _is_valid(shape: Any) -> bool:
    from OCP.BRepCheck import BRepCheck_Analyzer

    return bool(BRepCheck_Analyzer(shape).IsValid())


def _checked(part: Part, built: BuiltSolid) -> BuiltSolid:
    if built.shape is None or not _is_valid(built.shape):
        raise DesignCheckError(_BEVEL_PATH, f"part {part.number}: the CAD kernel could not make "
                               "a valid solid of the bevelled prism; make bevel_mm smaller or mark "
                               "the edges at acute apices sharp")
    return built


def faces_of(shape: Any) -> list[Any]:
    """The faces of a shape in the kernel's stored order."""
    from OCP.TopAbs import TopAbs_FACE
    from OCP.TopExp import TopExp_Explorer
    from OCP.TopoDS import TopoDS

    out = []
    explorer = TopExp_Explorer(shape, TopAbs_FACE)
    while explorer.More():
        out.append(TopoDS.Face_s(explorer.Current()))
        explorer.Next()
    return out


def plane_of(face: Any) -> tuple[Vec3, float] | None:
    """Outward unit normal and offset of a planar face; None if the face is not planar."""
    from OCP.BRepAdaptor import BRepAdaptor_Surface
    from OCP.GeomAbs import GeomAbs_Plane
    from OCP.TopAbs import TopAbs_REVERSED

    surface = BRepAdaptor_Surface(face)
    if surface.GetType() != GeomAbs_Plane:
        return None
    pln = surface.Plane()
    d, o = pln.Axis().Direction(), pln.Location()
    sign = -1.0 if face.Orientation() == TopAbs_REVERSED else 1.0
    n = (sign * d.X(), sign * d.Y(), sign * d.Z())
    return n, n[0] * o.X() + n[1] * o.Y() + n[2] * o.Z()


def find_face(shape: Any, plane: FacePlane) -> Any:
    """The one face of ``shape`` on ``plane`` with the same outward normal.

    Raises:
        LookupError: no face or more than one matches (the shape is not this part).
    """
    hits = []
    for face in faces_of(shape):
        found = plane_of(face)
        if found is None:
            continue
        n, offset = found
        same_normal = 1.0 - float(np.dot(n, plane.normal)) < NORMAL_TOL
        if same_normal and abs(offset - plane.offset_mm) < PLANE_TOL_MM:
            hits.append(face)
    if len(hits) != 1:
        raise LookupError(f"face {plane.name}: {len(hits)} faces match its plane, expected 1")
    return hits[0]


def _shared_edge(f1: Any, f2: Any, label: str) -> Any:
    from OCP.TopAbs import TopAbs_EDGE
    from OCP.TopExp import TopExp_Explorer
    from OCP.TopoDS import TopoDS

    explorer = TopExp_Explorer(f1, TopAbs_EDGE)
    while explorer.More():
        edge = explorer.Current()
        other = TopExp_Explorer(f2, TopAbs_EDGE)
        while other.More():
            if edge.IsSame(other.Current()):
                return TopoDS.Edge_s(edge)
            other.Next()
        explorer.Next()
    raise LookupError(f"edge {label}: its two faces share no edge")
