"""Tolerance Monte Carlo: 10,000 builds of a two-prism anamorphic pair at 3 wavelengths.

Times (best of 3, one core): the exact-re-trace sensitivities (central differences of every
error parameter), one yield evaluation of 10,000 compensated builds on the linearised model,
and the whole ``derive`` with 10,000 builds per candidate (class selection, looser-class yields,
surface form, cost). Goal: the whole derive in 2 s or less. The pair is two Brewster-entry,
normal-exit prisms of 517642 borosilicate crown at 780 nm (775-785 nm band), built by hand so the
bench does not depend on the solvers.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from prismfab.design.montecarlo import Limits, draws, linearise, monte_carlo  # noqa: E402
from prismfab.design.parts import make_parts  # noqa: E402
from prismfab.design.sensitivity import build_model  # noqa: E402
from prismfab.design.tolerance import datum_index, derive  # noqa: E402
from prismfab.materials import get  # noqa: E402
from prismfab.model import Performance  # noqa: E402
from tests.tolerance_systems import brewster_pair, spec_for  # noqa: E402

N_BUILDS = 10_000
GOAL_S = 2.0


def _best(fn, repeats: int = 3) -> float:  # type: ignore[no-untyped-def]
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def run() -> list[dict[str, object]]:
    """Benchmark rows: name, value, unit, optional floor/ratio/goal."""
    mat = get("517642")
    system = brewster_pair(float(mat.n(780.0)))
    spec = spec_for(system)
    parts = make_parts(spec, system, Performance(results=()))
    wl = system.beam.wavelengths_nm
    n = np.array([[float(mat.n(w))] * 2 for w in wl])
    datums = tuple(datum_index(p) for p in parts)
    model = build_model(system, n, np.full(2, mat.nd), datum_faces=datums, wavelengths_nm=wl)
    t_sens = _best(lambda: model.jacobian())
    lin = linearise(model, compensator_prisms=(1, 0))
    unit = draws(len(lin.model_index), N_BUILDS, seed=1)
    scale = np.full(len(lin.model_index), 1e-4)
    limits = Limits(1e-3, 0.02, 0.5)
    t_mc = _best(lambda: monte_carlo(lin, scale, limits, unit))
    t_derive = _best(lambda: derive(spec, system, parts, n_builds=N_BUILDS))
    return [
        {"name": "tolerance sensitivities (exact re-trace, 2 prisms, 3 wavelengths)",
         "value": t_sens, "unit": "s"},
        {"name": f"tolerance yield of {N_BUILDS} builds (linearised, compensated)",
         "value": t_mc, "unit": "s"},
        {"name": f"tolerance derive, {N_BUILDS} builds per candidate", "value": t_derive, "unit": "s",
         "floor": GOAL_S, "ratio": t_derive / GOAL_S, "goal": f"<= {GOAL_S:g} s on one core"},
    ]


if __name__ == "__main__":
    for row in run():
        print(row)
