"""Build (or only solve) many specs and variants in a process pool.

Each worker process imports the heavy libraries once (the pool initializer), then takes items.
An item's failure is caught in the worker and comes back as a summary row with its error (the
prismfab errors pickle), so one bad variant never stops the batch. Rows come back in item order.

The pool uses the "forkserver" start method: workers start from a small server process that has
the heavy modules preloaded, so neither the parent's threads nor its state are copied into them.
"""

from __future__ import annotations

import csv
import io
import json
import multiprocessing
import os
import time
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from prismfab.errors import SpecError
from prismfab.package.variants import Variant

__all__ = ["HEAVY_MODULES", "Row", "run_batch", "summary_csv", "summary_json", "write_summary"]

HEAVY_MODULES = ("prismfab.pipeline", "cadquery", "ezdxf", "reportlab.platypus")
"""Imported once per worker (build mode); solve-only workers need the first only."""


@dataclass(frozen=True, slots=True)
class Row:
    """One line of the batch summary.

    Args:
        variant: the item's name.
        status: "built", "reused", "solved" or "error".
        magnification: traced in-plane magnification at the design wavelength (None on error
            or when a reused revision was not solved again).
        pointing_mrad: output pointing at the design wavelength.
        yield_fraction: lowest Monte Carlo yield over the parts.
        cost_index: sum of the parts' relative cost (commercial = 1 per part).
        folder: the revision folder ("" when only solved or on error).
        revision: the revision letter.
        overrides: the swept values, "path=value; ...".
        seconds: wall time of the item in its worker.
        error: the error message ("" when fine).
        error_type: the error's class name.
    """

    variant: str
    status: str
    magnification: float | None = None
    pointing_mrad: float | None = None
    yield_fraction: float | None = None
    cost_index: float | None = None
    folder: str = ""
    revision: str = ""
    overrides: str = ""
    seconds: float = 0.0
    error: str = ""
    error_type: str = ""


def _figures(solution: Any) -> dict[str, float | None]:
    if solution is None:
        return {}
    design = solution.performance.design
    tols = [p.tolerances for p in solution.parts]
    return {"magnification": design.magnification_in_plane, "pointing_mrad": design.pointing_mrad,
            "yield_fraction": min((t.yield_fraction for t in tols), default=None),
            "cost_index": sum(t.cost_index for t in tols) if tols else None}


def _init_worker(modules: Sequence[str]) -> None:
    import importlib

    for name in modules:
        try:
            importlib.import_module(name)
        except ImportError:  # the item that needs it reports MissingDependencyError
            pass


def run_item(item: Variant, out_dir: str, solve_only: bool, solve: Callable[[Any], Any] | None,
             writers: Callable[[], Any] | None) -> Row:
    """Build or solve one item; every error becomes a row (runs in a worker)."""
    start = time.perf_counter()
    overrides = "; ".join(f"{p}={v:g}" for p, v in item.overrides)
    try:
        if solve is None:
            from prismfab.pipeline import run as solve
        if solve_only:
            figures, status, folder, revision = _figures(solve(item.inputs.spec)), "solved", "", ""
        else:
            from prismfab.package.build import build

            result = build(item.inputs, out_dir=Path(out_dir), solve=solve,
                           writers=writers() if writers else None)
            figures, status = _figures(result.solution), "reused" if result.reused else "built"
            folder, revision = str(result.folder), result.revision
    except Exception as err:  # noqa: BLE001 - one item's failure must not stop the batch
        return Row(item.name, "error", overrides=overrides, error=str(err) or repr(err),
                   error_type=type(err).__name__, seconds=time.perf_counter() - start)
    return Row(item.name, status, folder=folder, revision=revision, overrides=overrides,
               seconds=time.perf_counter() - start, **figures)


def run_batch(items: Sequence[Variant], *, out_dir: str | os.PathLike[str] = "outputs",
              jobs: int | None = None, solve_only: bool = False,
              progress: Callable[[int, int, Row], None] | None = None,
              solve: Callable[[Any], Any] | None = None,
              writers: Callable[[], Any] | None = None,
              preload: Sequence[str] | None = None) -> list[Row]:
    """Run every item; returns the rows in item order.

    Args:
        items: the batch items (``prismfab.package.variants.expand``).
        out_dir: output folder of the packages.
        jobs: worker processes (default: the number of cores); 1 runs in this process.
        solve_only: solve and measure only, write nothing.
        progress: called after each item with (done, total, row).
        solve, writers: a module-level solve function and writer-table factory (tests use
            small fakes; both must pickle by name).
        preload: modules each worker imports at start (default: ``HEAVY_MODULES``, or only the
            pipeline for ``solve_only``).
    """
    jobs = max(1, min(jobs or os.cpu_count() or 1, len(items) or 1))
    args = (str(out_dir), solve_only, solve, writers)
    rows: list[Row | None] = [None] * len(items)
    if jobs == 1:
        for i, item in enumerate(items):
            rows[i] = run_item(item, *args)
            if progress:
                progress(i + 1, len(items), rows[i])  # type: ignore[arg-type]
        return rows  # type: ignore[return-value]
    modules = tuple(preload) if preload is not None else \
        HEAVY_MODULES[:1] if solve_only else HEAVY_MODULES
    ctx = multiprocessing.get_context("forkserver")
    ctx.set_forkserver_preload(["prismfab.package.build", "prismfab.spec.load"])
    with ProcessPoolExecutor(max_workers=jobs, mp_context=ctx, initializer=_init_worker,
                             initargs=(modules,)) as pool:
        futures = {pool.submit(run_item, item, *args): i for i, item in enumerate(items)}
        for done, future in enumerate(as_completed(futures), start=1):
            i = futures[future]
            try:
                rows[i] = future.result()
            except Exception as err:  # noqa: BLE001 - a worker died (killed, out of memory)
                rows[i] = Row(items[i].name, "error", error=f"worker failed: {err}",
                              error_type=type(err).__name__)
            if progress:
                progress(done, len(items), rows[i])  # type: ignore[arg-type]
    return rows  # type: ignore[return-value]


_COLUMNS = ("variant", "status", "magnification", "pointing_mrad", "yield_fraction",
            "cost_index", "revision", "folder", "overrides", "seconds", "error")


def _cell(value: Any, key: str) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return f"{value:.2f}" if key == "seconds" else f"{value:.6g}"
    return str(value)


def summary_csv(rows: Sequence[Row]) -> str:
    """The summary as CSV text."""
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(_COLUMNS)
    for r in rows:
        d = asdict(r)
        w.writerow([_cell(d[k], k) for k in _COLUMNS])
    return out.getvalue()


def summary_json(rows: Sequence[Row]) -> str:
    """The summary as JSON text (a list of rows, numbers as numbers)."""
    return json.dumps([asdict(r) for r in rows], indent=2, ensure_ascii=False) + "\n"


def write_summary(rows: Sequence[Row], path: str | os.PathLike[str]) -> Path:
    """Write the summary as CSV or JSON, by the file's extension.

    Raises:
        SpecError: the extension is neither .csv nor .json.
        OutputError: the file cannot be written.
    """
    from prismfab.errors import OutputError

    target = Path(path)
    if target.suffix.lower() not in (".csv", ".json"):
        raise SpecError("", f"option --summary '{target}' has an unknown extension",
                        fix="end the file name in .csv or .json")
    text = summary_json(rows) if target.suffix.lower() == ".json" else summary_csv(rows)
    try:
        target.write_text(text, encoding="utf-8")
    except OSError as err:
        raise OutputError(f"cannot write the summary '{target}': {err.strerror or err}") from err
    return target


def is_failure(row: Row) -> bool:
    """True for an error row."""
    return row.status == "error"

