"""Cold wall time of ``prismfab solve`` on each starter spec, one fresh subprocess each.

Protocol (bench/run.py): ``run() -> list[dict]`` with name, value, unit and an optional floor
(the goal: under 1 s per spec, cold, including interpreter start-up and imports).
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
FAMILIES = ("anamorphic-single", "anamorphic-pair", "brewster", "dispersing", "fold", "wedge",
            "custom")
GOAL_S = 1.0


def run() -> list[dict]:
    """One result per starter spec of the refracting families."""
    out = []
    for fam in FAMILIES:
        spec = ROOT / "templates" / "specs" / f"{fam}.yaml"
        if not spec.exists():
            continue
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "prismfab", "solve", str(spec), "--json"],
                              capture_output=True, text=True, check=False)
        dt = time.perf_counter() - t0
        out.append({"name": f"solve cold {fam}", "value": round(dt, 3), "unit": "s",
                    "floor": GOAL_S, "ok": proc.returncode == 0})
    return out


if __name__ == "__main__":
    for row in run():
        print(row)
