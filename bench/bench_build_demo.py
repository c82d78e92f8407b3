"""``prismfab build`` of the demo spec as a whole command, against a floor script.

The floor is the least any package build must pay: start Python, import the same libraries
(cadquery, ezdxf, reportlab), write the same solids (the demo's prism sections, extruded) to
STEP, an empty DXF and a one-page PDF, and leave with ``os._exit`` as the command does. The
solved parts are prepared once in this process and handed to the floor script as a pickle, so
the floor does no solving. Goal: build / floor <= 1.5.

The machine is shared, so build and floor runs alternate (a change of load hits both) and the
row gives medians; ``best_s``/``floor_best_s`` are the fastest runs, and ``cpu_s``/``floor_cpu_s``
the median CPU time (user + system) of the command, which load disturbs less than wall time.

Protocol (bench/run.py): ``run() -> list[dict]`` with name, value, unit, floor, ratio, goal.
"""

from __future__ import annotations

import os
import pickle
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "templates" / "specs" / "anamorphic-pair.yaml"
REPEATS = 3

FLOOR = r"""
import os, pickle, sys
import cadquery as cq
import ezdxf
from reportlab.pdfgen import canvas
out = sys.argv[2]
with open(sys.argv[1], "rb") as f:
    parts = pickle.load(f)
for part in parts:
    solid = cq.Workplane("XY").polyline(part.prism.vertices_mm).close().extrude(part.prism.height_mm)
    cq.exporters.export(solid, os.path.join(out, part.number + ".step"))
    ezdxf.new("R2013").saveas(os.path.join(out, part.number + ".dxf"))
    c = canvas.Canvas(os.path.join(out, part.number + ".pdf"))
    c.drawString(72, 72, part.number)
    c.showPage()
    c.save()
sys.stdout.flush()
os._exit(0)
"""


def _once(cmd: list[str]) -> tuple[float, float]:
    """Wall and CPU seconds (user + system) of one run of a command in a fresh folder."""
    with tempfile.TemporaryDirectory() as tmp:
        args = [a.replace("{tmp}", tmp) for a in cmd]
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        subprocess.run(args, check=True, capture_output=True, cwd=ROOT)
        wall = time.perf_counter() - t0
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def run() -> list[dict]:
    """Median wall time of the whole build command and of the floor script, runs alternating."""
    from prismfab.pipeline import run as solve
    from prismfab.spec.load import load_spec

    parts = solve(load_spec(DEMO)).parts
    with tempfile.NamedTemporaryFile(suffix=".pickle", delete=False) as f:
        pickle.dump(parts, f)
        pickled = f.name
    build_cmd = [sys.executable, "-m", "prismfab", "build", str(DEMO), "-o", "{tmp}"]
    floor_cmd = [sys.executable, "-c", FLOOR, pickled, "{tmp}"]
    builds, floors = [], []
    try:
        for _ in range(REPEATS):
            builds.append(_once(build_cmd))
            floors.append(_once(floor_cmd))
    finally:
        os.unlink(pickled)
    build_s = statistics.median(w for w, _ in builds)
    floor_s = statistics.median(w for w, _ in floors)
    return [{"name": "prismfab build demo (anamorphic pair, 2 parts), whole command",
             "value": round(build_s, 3), "unit": "s", "floor": round(floor_s, 3),
             "ratio": round(build_s / floor_s, 3), "goal": "ratio <= 1.5",
             "best_s": round(min(w for w, _ in builds), 3),
             "floor_best_s": round(min(w for w, _ in floors), 3),
             "cpu_s": round(statistics.median(c for _, c in builds), 3),
             "floor_cpu_s": round(statistics.median(c for _, c in floors), 3)}]


if __name__ == "__main__":
    for row in run():
        print(row)
