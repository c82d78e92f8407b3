"""``prismfab build`` of the demo spec as a whole command, against a floor script.

The floor is the least any package build must pay: start Python, import the same libraries
(cadquery, ezdxf, reportlab), write the same solids (the demo's prism sections, extruded) to
STEP, an empty DXF and a one-page PDF, and leave with ``os._exit`` as the command does. The
solved parts are prepared once in this process and handed to the floor script as a pickle, so
the floor does no solving. Goal: build / floor <= 1.5.

Protocol (bench/run.py): ``run() -> list[dict]`` with name, value, unit, floor, ratio, goal.
"""

from __future__ import annotations

import os
import pickle
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "templates" / "specs" / "anamorphic-pair.yaml"
REPEATS = 2

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


def _best(cmd: list[str], make_dir: bool) -> float:
    times = []
    for _ in range(REPEATS):
        with tempfile.TemporaryDirectory() as tmp:
            args = [a.replace("{tmp}", tmp) for a in cmd]
            t0 = time.perf_counter()
            subprocess.run(args, check=True, capture_output=True, cwd=ROOT)
            times.append(time.perf_counter() - t0)
    return min(times)


def run() -> list[dict]:
    """Wall time of the whole build command and of the floor script (best of REPEATS)."""
    from prismfab.pipeline import run as solve
    from prismfab.spec.load import load_spec

    parts = solve(load_spec(DEMO)).parts
    with tempfile.NamedTemporaryFile(suffix=".pickle", delete=False) as f:
        pickle.dump(parts, f)
        pickled = f.name
    try:
        env_cmd = [sys.executable, "-m", "prismfab", "build", str(DEMO), "-o", "{tmp}"]
        build_s = _best(env_cmd, True)
        floor_s = _best([sys.executable, "-c", FLOOR, pickled, "{tmp}"], True)
    finally:
        os.unlink(pickled)
    return [{"name": "prismfab build demo (anamorphic pair, 2 parts), whole command",
             "value": round(build_s, 3), "unit": "s", "floor": round(floor_s, 3),
             "ratio": round(build_s / floor_s, 3), "goal": "ratio <= 1.5"}]


if __name__ == "__main__":
    for row in run():
        print(row)
