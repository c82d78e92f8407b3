"""CAD writers: solids, part and assembly STEP files, hidden-line views, read back and checked.

The parts are hand-built test inputs (tests/fixtures.py and the builders below); the expected
values are computed here from the parts' own numbers by independent routes (shoelace area,
scipy half-space intersection and convex hull, plane geometry), never copied from the output.
"""

from __future__ import annotations

import dataclasses
import math
import os
import subprocess
import sys
from pathlib import Path
from typing import Any

import cadquery as cq  # this module is the only test module that imports cadquery
import numpy as np
import pytest
from scipy.spatial import ConvexHull, HalfspaceIntersection

from prismfab.cad import assembly_step, part_solid, part_step, project_views
from prismfab.cad.projection import ISOMETRIC_VIEW, SECTION_VIEW, SIDE_VIEW
from prismfab.cad.solid import ChamferMethod, bevels, build_solid
from prismfab.cad.step import ROLE_COLOURS
from prismfab.errors import DesignCheckError, OutputError
from prismfab.model import Coating, Face, FaceRole, Part, PartFace, Pose, Prism
from tests.fixtures import sample_part

ROOT = Path(__file__).resolve().parent.parent
LENGTH_TOL_MM = 1e-9


# ---------------------------------------------------------------------------------- test parts

def make_part(number: str, vertices: list[tuple[float, float]], roles: list[FaceRole],
              height_mm: float, *, bevel_mm: float = 0.3,
              sharp: tuple[tuple[str, str], ...] = (), pose: Pose | None = None) -> Part:
    """A part with every edge bevelled except ``sharp`` (test input, invented numbers)."""
    labels = [chr(ord("A") + i) for i in range(len(vertices))]
    faces = tuple(Face(label, role) for label, role in zip(labels, roles, strict=True))
    prism = Prism("P9", "517642", tuple(vertices), faces, height_mm, pose or Pose())
    part_faces = tuple(
        PartFace(label, role, prism.face_length_mm(i), None, None, None, role.is_optical, "", "",
                 Coating(), "")
        for i, (label, role) in enumerate(zip(labels, roles, strict=True)))
    n = len(labels)
    edges = [(labels[i - 1], labels[i]) for i in range(n)]
    edges += [(label, end) for label in labels for end in ("BOTTOM", "TOP")]
    keep = tuple(e for e in edges if frozenset(e) not in {frozenset(s) for s in sharp})
    return dataclasses.replace(sample_part(), number=number, title=f"test prism {number}",
                               prism=prism, faces=part_faces, bevel_mm=bevel_mm,
                               bevelled_edges=keep, sharp_edges=sharp, ray_path_mm=())


def equilateral_part(**kw: object) -> Part:
    """60° equilateral dispersing prism, side 20 mm, height 15 mm, all 9 edges bevelled."""
    s = 20.0
    return make_part("EX-2001-01", [(0.0, 0.0), (s, 0.0), (s / 2, s * math.sqrt(3.0) / 2)],
                     [FaceRole.GROUND, FaceRole.EXIT, FaceRole.ENTRY], 15.0,
                     **kw)  # type: ignore[arg-type]


def right_angle_part() -> Part:
    """Right-angle fold prism, legs 15 mm, height 15 mm, 0.5 mm bevels."""
    return make_part("EX-2001-02", [(0.0, 0.0), (15.0, 0.0), (0.0, 15.0)],
                     [FaceRole.ENTRY, FaceRole.TIR, FaceRole.EXIT], 15.0, bevel_mm=0.5)


def penta_like_part() -> Part:
    """Convex pentagon (interior 90° and four 112.5°) with a 2 mm apex flat: six faces."""
    directions = [0.0, 90.0, 157.5, 225.0, 292.5]
    u = [np.array([math.cos(math.radians(a)), math.sin(math.radians(a))]) for a in directions]
    side = 10.0  # faces C and E; D closes the polygon
    d_len = float(-(20 * (u[0] + u[1]) + side * (u[2] + u[4]))[0] / u[3][0])
    lengths = [20.0, 20.0, side, d_len, side]
    pts = [np.zeros(2)]
    for length, d in zip(lengths[:-1], u[:-1], strict=True):
        pts.append(pts[-1] + length * d)
    k, flat_mm = 3, 2.0  # truncate vertex 3 (between faces C and D) with a flat
    a, b = (pts[k - 1] - pts[k]), (pts[k + 1] - pts[k])
    a, b = a / np.linalg.norm(a), b / np.linalg.norm(b)
    reach = flat_mm / 2 / math.sin(math.acos(float(a @ b)) / 2)
    pts = pts[:k] + [pts[k] + reach * a, pts[k] + reach * b] + pts[k + 1:]
    vertices = [(float(p[0]), float(p[1])) for p in pts]
    roles = [FaceRole.ENTRY, FaceRole.EXIT, FaceRole.MIRROR, FaceRole.GROUND, FaceRole.MIRROR,
             FaceRole.GROUND]
    return make_part("EX-2001-03", vertices, roles, 12.0)


PARTS = {"sample": sample_part, "equilateral": equilateral_part, "right-angle": right_angle_part,
         "penta-like": penta_like_part}


# --------------------------------------------------------------------- independent geometry

def outward_normals(part: Part) -> list[np.ndarray]:
    """Outward normals of the side faces from the vertex list (edge turned clockwise)."""
    v = np.array(part.prism.vertices_mm)
    d = np.roll(v, -1, axis=0) - v
    return [np.array([dy, -dx, 0.0]) / math.hypot(dx, dy) for dx, dy in d]


def design_halfspaces(part: Part) -> np.ndarray:
    """Rows (n, -offset) with n·x - offset <= 0 inside: faces plus planar symmetric chamfers.

    The chamfer plane of an edge with interior dihedral θ and bevel face width w has the bisector
    normal (n1 + n2)/|n1 + n2| and lies w / (2 tan(θ/2)) inside the edge: the height of the
    isosceles triangle with apex θ over base w (plane geometry, from memory).
    """
    v = np.array(part.prism.vertices_mm)
    planes = {}
    for i, n in enumerate(outward_normals(part)):
        planes[part.prism.faces[i].label] = (n, float(n[:2] @ v[i]))
    planes["BOTTOM"] = (np.array([0.0, 0.0, -1.0]), 0.0)
    planes["TOP"] = (np.array([0.0, 0.0, 1.0]), part.prism.height_mm)
    rows = [np.append(n, -c) for n, c in planes.values()]
    for a, b in part.bevelled_edges:
        (n1, c1), (n2, c2) = planes[a], planes[b]
        theta = math.pi - math.acos(float(np.clip(n1 @ n2, -1, 1)))
        on_edge = np.linalg.lstsq(np.vstack([n1, n2]), np.array([c1, c2]), rcond=None)[0]
        nb = (n1 + n2) / np.linalg.norm(n1 + n2)
        depth = part.bevel_mm / (2.0 * math.tan(theta / 2.0))
        rows.append(np.append(nb, -(float(nb @ on_edge) - depth)))
    return np.array(rows)


def planar_design_volume(part: Part) -> float:
    """Volume of the design with planar chamfers: scipy half-space intersection, convex hull."""
    v = np.array(part.prism.vertices_mm)
    inside = np.append(v.mean(axis=0), part.prism.height_mm / 2)
    pts = HalfspaceIntersection(design_halfspaces(part), inside).intersections
    return float(ConvexHull(pts).volume)


def angle_deg(a: np.ndarray, b: np.ndarray) -> float:
    """Angle between two vectors (degrees), by atan2 so it stays exact near 0° and 180°."""
    return math.degrees(math.atan2(float(np.linalg.norm(np.cross(a, b))), float(a @ b)))


def shoelace_area(part: Part) -> float:
    """Section area by the shoelace formula (mm²)."""
    x, y = np.array(part.prism.vertices_mm).T
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))


def read_step(path: Path) -> cq.Shape:
    """Re-import a STEP file with OCCT's reader (geometry only)."""
    return cq.importers.importStep(str(path)).val()


def planar_faces(shape: cq.Shape) -> list[tuple[np.ndarray, float, cq.Face]]:
    """(outward normal, offset, face) of every planar face."""
    out = []
    for face in shape.Faces():
        if face.geomType() == "PLANE":
            n = np.array(face.normalAt().toTuple())
            out.append((n, float(n @ np.array(face.Center().toTuple())), face))
    return out


def face_with_plane(shape: cq.Shape, normal: np.ndarray, offset: float) -> cq.Face:
    """The one planar face with this outward normal and plane offset."""
    hits = [f for n, c, f in planar_faces(shape)
            if float(n @ normal) > 1 - 1e-12 and abs(c - offset) < 1e-6]
    assert len(hits) == 1
    return hits[0]


def read_xcaf(path: Path) -> tuple[str, dict[str, tuple[float, float, float] | None]]:
    """Label name of the single product and {face name: surface colour} from a part STEP."""
    from OCP.Interface import Interface_Static
    from OCP.Quantity import Quantity_Color, Quantity_TOC_sRGB
    from OCP.STEPCAFControl import STEPCAFControl_Reader
    from OCP.TCollection import TCollection_ExtendedString
    from OCP.TDataStd import TDataStd_Name
    from OCP.TDF import TDF_LabelSequence
    from OCP.TDocStd import TDocStd_Document
    from OCP.XCAFApp import XCAFApp_Application
    from OCP.XCAFDoc import XCAFDoc_ColorSurf, XCAFDoc_DocumentTool

    doc = TDocStd_Document(TCollection_ExtendedString("XmlOcaf"))
    XCAFApp_Application.GetApplication_s().InitDocument(doc)
    reader = STEPCAFControl_Reader()
    Interface_Static.SetIVal_s("read.stepcaf.subshapes.name", 1)  # face names (off by default)
    reader.SetNameMode(True)
    reader.SetColorMode(True)
    reader.ReadFile(str(path))
    reader.Transfer(doc)
    shapes = XCAFDoc_DocumentTool.ShapeTool_s(doc.Main())
    colours = XCAFDoc_DocumentTool.ColorTool_s(doc.Main())

    def name(label: Any) -> str:
        if not label.IsAttribute(TDataStd_Name.GetID_s()):
            return ""
        attr = TDataStd_Name()
        label.FindAttribute(TDataStd_Name.GetID_s(), attr)
        return str(attr.Get().ToExtString())

    free = TDF_LabelSequence()
    shapes.GetFreeShapes(free)
    assert free.Length() == 1
    top, subs = free.Value(1), TDF_LabelSequence()
    shapes.GetSubShapes_s(top, subs)
    faces: dict[str, tuple[float, float, float] | None] = {}
    for i in range(1, subs.Length() + 1):
        colour = Quantity_Color()
        found = colours.GetColor(shapes.GetShape_s(subs.Value(i)), XCAFDoc_ColorSurf, colour)
        faces[name(subs.Value(i))] = colour.Values(Quantity_TOC_sRGB) if found else None
    return name(top), faces


# ---------------------------------------------------------------------------------- the tests

def test_import_is_light() -> None:
    """Importing prismfab.cad loads neither cadquery nor OCP."""
    code = ("import sys, prismfab.cad; "
            "print(any(m.split('.')[0] in ('cadquery', 'OCP') for m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_leg_from_face_width() -> None:
    """Chamfer leg a = w / (2 sin(θ/2)): 0.7071 w at 90°, w at 60°.

    Isosceles triangle with apex θ over base w (plane geometry).
    """
    legs = {b.label: b.leg_mm for b in bevels(equilateral_part())}
    assert legs["A/TOP"] == pytest.approx(0.3 / math.sqrt(2.0), abs=1e-12)
    assert legs["C/A"] == pytest.approx(0.3, abs=1e-12)


@pytest.mark.parametrize("name", sorted(PARTS))
def test_part_step_reads_back(name: str, tmp_path: Path) -> None:
    """One valid solid; optical face angles, height and footprint as designed; faces planar."""
    part = PARTS[name]()
    path = part_step(part, tmp_path / f"{part.number}.step")
    shape = read_step(path)
    assert len(shape.Solids()) == 1
    solid = shape.Solids()[0]
    assert solid.isValid()
    # angles between every pair of optical face normals, from the re-imported planes
    normals = outward_normals(part)
    v = np.array(part.prism.vertices_mm)
    found = {f.label: face_with_plane(solid, normals[i], float(normals[i][:2] @ v[i])).normalAt().toTuple()
             for i, f in enumerate(part.prism.faces)}
    optical = [(i, f.label) for i, f in enumerate(part.prism.faces) if f.role.is_optical]
    for i, a in optical:
        for j, b in optical:
            if i < j:
                design = angle_deg(normals[i], normals[j])
                got = angle_deg(np.array(found[a]), np.array(found[b]))
                assert got == pytest.approx(design, abs=1e-9)
    corners = np.array([p.toTuple() for p in solid.Vertices()])  # exact box: all faces planar
    assert (corners[:, 2].min(), corners[:, 2].max()) == pytest.approx(
        (0.0, part.prism.height_mm), abs=LENGTH_TOL_MM)
    lo, hi = v.min(axis=0), v.max(axis=0)
    assert np.all(corners[:, :2] >= lo - LENGTH_TOL_MM)
    assert np.all(corners[:, :2] <= hi + LENGTH_TOL_MM)
    # where every face of the builder's result is planar, the convex hull of its vertices is an
    # exact, independent volume (planar cuts, checked against a convex hull); a curved corner patch
    # lies inside the hull by less than a leg cubed per corner
    hull = ConvexHull(corners).volume
    if all(f.geomType() == "PLANE" for f in solid.Faces()):
        assert solid.Volume() == pytest.approx(hull, rel=1e-9)
    else:
        leg = max(b.leg_mm for b in bevels(part))
        assert 0.0 <= hull - solid.Volume() <= 2 * len(part.prism.faces) * leg**3


@pytest.mark.parametrize("name", sorted(PARTS))
def test_unbevelled_volume_and_box(name: str, tmp_path: Path) -> None:
    """Without bevels: volume = shoelace area × height, box = polygon box × height."""
    part = dataclasses.replace(PARTS[name](), bevel_mm=0.0)
    solid = read_step(part_step(part, tmp_path / "p.step")).Solids()[0]
    assert solid.Volume() == pytest.approx(shoelace_area(part) * part.prism.height_mm, rel=1e-12)
    corners, v = np.array([p.toTuple() for p in solid.Vertices()]), np.array(part.prism.vertices_mm)
    got = (*corners.min(axis=0), *corners.max(axis=0))
    want = (*v.min(axis=0), 0.0, *v.max(axis=0), part.prism.height_mm)
    assert got == pytest.approx(want, abs=LENGTH_TOL_MM)


@pytest.mark.parametrize("name", sorted(PARTS))
def test_planar_bevel_volume(name: str) -> None:
    """Planar bevels: volume equals the scipy half-space intersection of the design to 1e-6."""
    part = PARTS[name]()
    built = build_solid(part, method=ChamferMethod.PLANAR)
    solid = cq.Solid(built.shape)
    assert built.method is ChamferMethod.PLANAR and solid.isValid()
    assert solid.Volume() == pytest.approx(planar_design_volume(part), rel=1e-6)


@pytest.mark.parametrize("name", sorted(PARTS))
def test_builder_bevels(name: str) -> None:
    """Chamfer builder: bevel faces sit where face width w puts them; volume near the planar one.

    The builder closes a corner where three bevels meet with an extra small face, so its volume
    differs from the planar design by at most the corner pieces, each smaller than a leg cubed.
    """
    part = PARTS[name]()
    built = build_solid(part)
    solid = cq.Solid(built.shape)
    assert built.method is ChamferMethod.BUILDER
    rows = design_halfspaces(part)
    for row in rows[len(part.prism.faces) + 2:]:
        face_with_plane(solid, row[:3], -row[3])  # the bevel plane exists exactly once
    legs = [b.leg_mm for b in bevels(part)]
    corners = 2 * len(part.prism.faces)
    assert abs(solid.Volume() - planar_design_volume(part)) <= corners * max(legs) ** 3


def test_sharp_edge_stays_sharp() -> None:
    """Edge B/C of the sample part is listed sharp: faces B and C still share an edge."""
    part = sample_part()
    solid = part_solid(part)
    normals, v = outward_normals(part), np.array(part.prism.vertices_mm)
    fb = face_with_plane(solid, normals[1], float(normals[1][:2] @ v[1]))
    fc = face_with_plane(solid, normals[2], float(normals[2][:2] @ v[2]))
    assert any(e.isSame(g) for e in fb.Edges() for g in fc.Edges())


def test_names_and_colours_in_step(tmp_path: Path) -> None:
    """Product id and name, face names, and role colours apart from ground."""
    part = sample_part()
    path = part_step(part, tmp_path / "p.step")
    text = path.read_text()
    assert "PRODUCT('EX-1001-01','EX-1001-01 Brewster expander prism'" in text
    assert "AUTOMOTIVE_DESIGN" in text and "SI_UNIT(.MILLI.,.METRE.)" in text
    for face in ("face A (ground)", "face B (entry)", "face C (exit)", "face TOP (end)",
                 "face BOTTOM (datum A)"):
        assert f"ADVANCED_FACE('{face}'" in text
    label, faces = read_xcaf(path)
    assert label == "EX-1001-01 Brewster expander prism"  # what a CAD tree shows
    assert set(faces) == {"face A (ground)", "face B (entry)", "face C (exit)", "face TOP (end)",
                          "face BOTTOM (datum A)"}
    assert faces["face B (entry)"] == pytest.approx(ROLE_COLOURS[FaceRole.ENTRY], abs=1e-6)
    assert faces["face C (exit)"] == pytest.approx(ROLE_COLOURS[FaceRole.EXIT], abs=1e-6)
    assert faces["face A (ground)"] != pytest.approx(faces["face B (entry)"], abs=1e-3)


WRITE_BOTH = """
import sys
from prismfab.cad import assembly_step, part_step
from tests.fixtures import sample_part
part = sample_part()
part_step(part, sys.argv[1] + "/part.step")
ray = [part.prism.pose.apply((x, y, part.prism.height_mm / 2)) for x, y in part.ray_path_mm]
assembly_step([part], sys.argv[1] + "/assembly.step", chief_ray_mm=ray)
"""


def test_byte_identical_across_processes(tmp_path: Path) -> None:
    """Part and assembly STEP: identical bytes from two separate processes (and no temp files)."""
    runs = [tmp_path / "run1", tmp_path / "run2"]
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    procs = []
    for run in runs:
        run.mkdir()
        procs.append(subprocess.Popen([sys.executable, "-c", WRITE_BOTH, str(run)], cwd=ROOT,
                                      env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE))
    for proc in procs:
        out, err = proc.communicate(timeout=60)
        assert proc.returncode == 0, err
        assert out == b""  # the kernel's progress messages stay off stdout
    for name in ("part.step", "assembly.step"):
        assert (runs[0] / name).read_bytes() == (runs[1] / name).read_bytes()
    assert sorted(p.name for p in runs[0].iterdir()) == ["assembly.step", "part.step"]


def test_reused_solids_write_the_same_files(tmp_path: Path) -> None:
    """Inside reuse_solids a part's solid is built once and shared; the STEP files do not change.

    The files are the second and later ones this process writes: an assembly must not carry
    ids that count on from earlier writes (a batch worker writes many).
    """
    from prismfab.cad.solid import reuse_solids

    p1, p2 = sample_part(), equilateral_part(
        pose=Pose.in_plane(angle_rad=1.1, x_mm=12.0, z_mm=40.0, height_mm=15.0))
    assert build_solid(p1) is not build_solid(p1)  # outside the block: built afresh each time
    fresh = [part_step(p1, tmp_path / "p1.step").read_bytes(),
             assembly_step([p1, p2], tmp_path / "a.step").read_bytes()]
    with reuse_solids():
        assert build_solid(p1) is build_solid(p1)
        assert build_solid(p1) is not build_solid(p1, method=ChamferMethod.PLANAR)
        shared = [part_step(p1, tmp_path / "p1r.step").read_bytes(),
                  assembly_step([p1, p2], tmp_path / "ar.step").read_bytes()]
    assert fresh == shared
    assert build_solid(p1) is not build_solid(p1)  # the block's store is gone


def test_chamfer_that_cannot_fit() -> None:
    """5° apex with 0.5 mm bevels on every edge: a DesignCheckError that names the edge."""
    apex, length = math.radians(5.0), 10.0  # bevel strips meet along the end face of a 5° apex
    part = make_part("EX-2001-09", [(0.0, 0.0), (length, 0.0),
                                    (length * math.cos(apex), length * math.sin(apex))],
                     [FaceRole.GROUND, FaceRole.EXIT, FaceRole.ENTRY], 10.0, bevel_mm=0.5)
    with pytest.raises(DesignCheckError) as err:
        part_solid(part)
    text = str(err.value)
    assert "EX-2001-09" in text and "fabrication.bevel_mm" in text
    assert "edge A/BOTTOM" in text and "interior angle down to 5°" in text


def test_flat_narrower_than_its_legs() -> None:
    """An apex flat narrower than the bevel legs on its two edges is refused, naming it."""
    part = penta_like_part()
    part = dataclasses.replace(part, bevel_mm=1.5)
    words = r"edge D/BOTTOM .* along face D, which is 2 mm long"
    with pytest.raises(DesignCheckError, match=words):
        bevels(part)


@pytest.mark.parametrize(("edges", "sharp", "words"), [
    ((("A", "X"),), (), "names no face 'X'"),
    ((("A", "B"),), (("B", "A"),), "both bevelled and sharp"),
])
def test_bad_edge_names(edges: tuple[tuple[str, str], ...], sharp: tuple[tuple[str, str], ...],
                        words: str) -> None:
    """Edge lists that name no face, or an edge twice, are refused before any kernel call."""
    part = dataclasses.replace(sample_part(), bevelled_edges=edges, sharp_edges=sharp)
    with pytest.raises(DesignCheckError, match=words):
        bevels(part)


def test_non_adjacent_faces_refused() -> None:
    """Faces A and C of a six-sided section do not meet."""
    part = dataclasses.replace(penta_like_part(), bevelled_edges=(("A", "C"),))
    words = "edge A/C in bevelled_edges joins faces that do not meet"
    with pytest.raises(DesignCheckError, match=words):
        bevels(part)


def test_planar_fallback_when_builder_fails(monkeypatch: pytest.MonkeyPatch) -> None:
    """If the chamfer builder fails on bevels that fit, planar cuts make the solid."""
    import prismfab.cad.solid as solid_module

    monkeypatch.setattr(solid_module, "_chamfer", lambda *args: None)
    part = right_angle_part()
    built = build_solid(part)
    assert built.method is ChamferMethod.PLANAR
    assert cq.Solid(built.shape).Volume() == pytest.approx(planar_design_volume(part), rel=1e-6)


def test_assembly_places_parts(tmp_path: Path) -> None:
    """Prisms at their poses: the chief ray's entry point lies on the entry face (1e-6 mm)."""
    p1 = sample_part()
    p2 = equilateral_part(pose=Pose.in_plane(angle_rad=1.1, x_mm=12.0, z_mm=40.0, height_mm=15.0))
    ray = [p1.prism.pose.apply((x, y, p1.prism.height_mm / 2)) for x, y in p1.ray_path_mm]
    path = assembly_step([p1, p2], tmp_path / "a.step", chief_ray_mm=ray, plate_clearance_mm=2.0)
    text = path.read_text()
    for words in ("PRODUCT('EX-1001-01','EX-1001-01 Brewster expander prism'",
                  "PRODUCT('EX-2001-01','EX-2001-01 test prism EX-2001-01'",
                  "'chief ray'", "'mounting reference plane'", "ADVANCED_FACE('face B (entry)'"):
        assert words in text
    shape = cq.importers.importStep(str(path)).val()
    volumes = {p.number: part_solid(p).Volume() for p in (p1, p2)}
    solids = {num: [s for s in shape.Solids() if abs(s.Volume() - vol) < 1e-6 * vol]
              for num, vol in volumes.items()}
    assert all(len(found) == 1 for found in solids.values())
    # entry face B of P1, moved by its pose, holds the entry point of the chief ray
    n_b = outward_normals(p1)[1]
    n_sys = np.array(p1.prism.pose.apply_vector(tuple(n_b)))
    entry = np.array(ray[1])
    faces = [f for n, c, f in planar_faces(solids["EX-1001-01"][0])
             if float(n @ n_sys) > 1 - 1e-12 and abs(c - float(n_sys @ entry)) < 1e-6]
    assert len(faces) == 1
    vertex = cq.Vertex.makeVertex(*entry)
    assert faces[0].distance(vertex) < 1e-6
    # each prism's datum corner lands at its pose translation (the bottom face holds it)
    for part in (p1, p2):
        solid = solids[part.number][0]
        corner = np.array(part.prism.pose.translation_mm)
        down = np.array(part.prism.pose.apply_vector((0.0, 0.0, -1.0)))
        assert any(float(n @ down) > 1 - 1e-12 and abs(c - float(down @ corner)) < 1e-6
                   for n, c, _ in planar_faces(solid))
    plate = [s for s in shape.Solids() if s.BoundingBox().ylen == pytest.approx(2.0)]
    assert len(plate) == 1
    assert plate[0].BoundingBox().ymax == pytest.approx(-15.0 / 2 - 2.0, abs=1e-9)


def test_views_section_and_side() -> None:
    """Section view = part (X, Y), side view = (X, Z); hidden lines never repeat visible ones."""
    part = dataclasses.replace(right_angle_part(), bevel_mm=0.0)
    section, side = project_views(part)
    assert section.view == SECTION_VIEW and side.view == SIDE_VIEW
    assert sum(section.bounds_mm, ()) == pytest.approx((0.0, 0.0, 15.0, 15.0), abs=1e-9)
    assert section.hidden == ()  # the lower outline lies exactly under the upper one
    assert sorted(section.visible) == [((0.0, 0.0), (0.0, 15.0)), ((0.0, 0.0), (15.0, 0.0)),
                                       ((0.0, 15.0), (15.0, 0.0))]
    assert sum(side.bounds_mm, ()) == pytest.approx((0.0, 0.0, 15.0, 15.0), abs=1e-9)


def test_views_isometric_bevelled() -> None:
    """Isometric view of a bevelled prism has hidden edges, none lying on a visible one."""
    part = equilateral_part()
    (iso,) = project_views(part, (ISOMETRIC_VIEW,))
    assert iso.visible and iso.hidden
    assert project_views(part, (ISOMETRIC_VIEW,)) == (iso,)  # deterministic
    for hidden in iso.hidden:
        mid = np.mean(hidden, axis=0)
        for visible in iso.visible:
            p, q = np.array(visible[0]), np.array(visible[-1])
            t = float(np.clip((mid - p) @ (q - p) / ((q - p) @ (q - p)), 0, 1))
            assert np.linalg.norm(p + t * (q - p) - mid) > 1e-6


def test_unwritable_folder(tmp_path: Path) -> None:
    """A missing folder is an OutputError, and nothing is left behind."""
    with pytest.raises(OutputError, match="cannot write STEP file"):
        part_step(sample_part(), tmp_path / "missing" / "p.step")
    assert list(tmp_path.iterdir()) == []


def test_clockwise_section_refused() -> None:
    """A clockwise vertex list breaks the part-frame convention and is refused by name."""
    part = right_angle_part()
    prism = dataclasses.replace(part.prism, vertices_mm=((0.0, 0.0), (0.0, 15.0), (15.0, 0.0)))
    with pytest.raises(DesignCheckError, match="prism.vertices_mm"):
        bevels(dataclasses.replace(part, prism=prism))
