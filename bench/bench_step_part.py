"""Time to write one part STEP file, after the CAD kernel is imported (goal: 0.2 s or less).

The part: a 60° equilateral prism, side 20 mm, height 15 mm, 0.3 mm bevels on all nine edges
(an invented bench part). ``part_step`` builds the solid, chamfers it in one builder, checks it,
names and colours its faces and writes STEP AP214 through XCAF. The floor is the bare minimum
the kernel needs for a STEP file of the same prism: extrude the section (no bevels) and write it
with the plain STEP writer, no names, no colours, no checks.
"""

from __future__ import annotations

import math
import statistics
import tempfile
import time
from pathlib import Path

from prismfab.model import Coating, Face, FaceRole, Part, PartFace, Prism, Tolerances

REPEATS = 10
GOAL_S = 0.2


def bench_part() -> Part:
    """The bench part (all nine edges bevelled)."""
    s, h = 20.0, 15.0
    vertices = ((0.0, 0.0), (s, 0.0), (s / 2, s * math.sqrt(3.0) / 2))
    roles = (FaceRole.GROUND, FaceRole.EXIT, FaceRole.ENTRY)
    labels = ("A", "B", "C")
    side_faces = tuple(Face(a, r) for a, r in zip(labels, roles, strict=True))
    prism = Prism("P1", "517642", vertices, side_faces, h)
    faces = tuple(PartFace(a, r, s, None, None, None, r.is_optical, "", "", Coating(), "")
                  for a, r in zip(labels, roles, strict=True))
    edges = (("C", "A"), ("A", "B"), ("B", "C"))
    edges += tuple((a, e) for a in labels for e in ("BOTTOM", "TOP"))
    tol = Tolerances(angle_arcsec=60.0, pyramidal_arcsec=60.0, length_mm=0.1, height_mm=0.1,
                     nd_tolerance=0.0005, vd_tolerance_pct=0.8, surface_form_fringes=(1.0, 0.5))
    return Part(number="BENCH-0001-01", title="bench prism", quantity=1, prism=prism, faces=faces,
                material_name="517642 borosilicate crown", material_code="517642", nd=1.5168,
                vd=64.17, material_indications=(), bevel_mm=0.3, bevelled_edges=edges,
                sharp_edges=(), datums=(), tolerances=tol, functional_angles=(0, 1, 2))


def _floor_write(part: Part, path: Path) -> None:
    from OCP.IFSelect import IFSelect_RetDone
    from OCP.STEPControl import STEPControl_AsIs, STEPControl_Writer

    from prismfab.cad.solid import _extrude  # the same extrusion, without bevels

    writer = STEPControl_Writer()
    writer.Transfer(_extrude(part), STEPControl_AsIs)
    if writer.Write(str(path)) != IFSelect_RetDone:
        raise OSError(f"cannot write {path}")


def _median_s(fn: object, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()  # type: ignore[operator]
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def run() -> list[dict[str, object]]:
    """First-call and median time of one part STEP, against the bare extrude-and-write floor."""
    import OCP.OCP  # noqa: F401 - the import is not part of the measured time

    from prismfab.cad.projection import project_views
    from prismfab.cad.solid import quiet_kernel
    from prismfab.cad.step import part_step

    quiet_kernel()
    part = bench_part()
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "part.step"
        start = time.perf_counter()
        part_step(part, path)
        first = time.perf_counter() - start
        median = _median_s(lambda: part_step(part, path), REPEATS)
        floor = _median_s(lambda: _floor_write(part, Path(folder) / "floor.step"), REPEATS)
        views = _median_s(lambda: project_views(part), REPEATS)
    goal = f"<= {GOAL_S} s"
    return [
        {"name": "step_part_first", "value": first, "unit": "s", "goal": goal},
        {"name": "step_part_median", "value": median, "unit": "s", "floor": floor,
         "ratio": median / floor, "goal": goal},
        {"name": "project_views_2_median", "value": views, "unit": "s",
         "goal": "section + side view, informative"},
    ]
