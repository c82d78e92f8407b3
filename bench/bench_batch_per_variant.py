"""``prismfab batch`` of N demo variants on 2 worker processes: seconds per variant, amortised.

The demo spec's magnification is swept over N values (``PRISMFAB_BENCH_VARIANTS``, default 100,
as the goal states; about 45 s on two cores); the whole command's wall time (start-up, the imports of the
workers' fork server, solving, every package file) divided by N. Goal: <= 0.5 s per variant.
Each row also gives the median seconds one item takes in its worker (``item_median_s``, from
the batch summary), which separates the per-variant work from the start-up.

Protocol (bench/run.py): ``run() -> list[dict]`` with name, value, unit, goal.
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "templates" / "specs" / "anamorphic-pair.yaml"
GOAL_S = 0.5


def _sweep(n: int) -> str:
    step = 1.5 / max(n - 1, 1)
    return ",".join(f"{2.5 + i * step:.4f}" for i in range(n))


def run() -> list[dict]:
    """Amortised seconds per built variant (and per solved-only variant)."""
    n = int(os.environ.get("PRISMFAB_BENCH_VARIANTS", "100"))  # the goal is stated for 100
    rows = []
    for mode, extra in (("build", []), ("solve only", ["--solve-only"])):
        with tempfile.TemporaryDirectory() as tmp:
            summary = Path(tmp) / "summary.json"
            cmd = [sys.executable, "-m", "prismfab", "batch", str(DEMO), "-j", "2", "-o", tmp,
                   "--vary", f"design.magnification={_sweep(n)}", "--summary", str(summary),
                   *extra]
            t0 = time.perf_counter()
            proc = subprocess.run(cmd, capture_output=True, text=True, cwd=ROOT, check=False)
            wall = time.perf_counter() - t0
            items = json.loads(summary.read_text()) if summary.is_file() else []
        rows.append({"name": f"batch {mode}: {n} demo variants, 2 workers, per variant",
                     "value": round(wall / n, 3), "unit": "s", "goal": f"<= {GOAL_S} s",
                     "ok": proc.returncode == 0, "total_s": round(wall, 2),
                     "item_median_s": round(statistics.median(r["seconds"] for r in items), 3)
                     if items else None})
    return rows


if __name__ == "__main__":
    for row in run():
        print(row)
