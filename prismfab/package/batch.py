"""Build (or only solve) many specs and variants in a process pool.

The heavy libraries are imported, and the caches every item reads (material catalogue, sheet
fonts and templates) filled, once for the whole batch: the pool uses the "forkserver" start
method, and the server process loads them before it forks any worker (``_forkserver``), so every
worker starts warm, and neither the parent's threads nor its state are copied into it. The pool
initializer imports whatever is still missing (e.g. when an earlier batch of this process started
the server with another list); a worker never imports per item. The CAD writers need only the
kernel's bindings (OCP), not the modelling library on top of it, which would also load a 3D
visualisation toolkit. Workers end through ``os._exit``, as multiprocessing ends every child, so
the kernel's static destructors never run; the server itself leaves the same way.

An item's failure is caught in the worker and comes back as a summary row with its error (the
prismfab errors pickle), so one bad variant never stops the batch. Rows come back in item order.
"""

from __future__ import annotations

import contextlib
import csv
import io
import json
import multiprocessing
import os
import time
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from prismfab.errors import SpecError
from prismfab.package.variants import Variant

__all__ = ["HEAVY_MODULES", "Row", "run_batch", "summary_csv", "summary_json", "write_summary"]

SOLVER_MODULES = (
    "prismfab.pipeline", "prismfab.design", "prismfab.optics.measure", "prismfab.design.parts",
    "prismfab.design.tolerance", "prismfab.materials", "numpy.random",
)
"""What solving an item imports (the pipeline itself imports its stages on first use)."""
HEAVY_MODULES = (
    *SOLVER_MODULES, "OCP.OCP", "ezdxf", "reportlab.platypus",
    "reportlab.graphics.charts.lineplots", "prismfab.cad.solid", "prismfab.cad.step",
    "prismfab.cad.assembly", "prismfab.drawing.dxf", "prismfab.drawing.layout",
    "prismfab.drawing.pdf", "prismfab.sheet.fabrication", "prismfab.sheet.report",
)
"""Imported once for the batch (build mode); solve-only needs ``SOLVER_MODULES`` only."""
LIGHT_MODULES = ("prismfab.package.build", "prismfab.spec.load")
"""Always preloaded in the fork server (cheap, and every item needs them)."""
SERVER_MODULE = "prismfab.package._forkserver"
"""Preloaded last: warms the shared caches, and the server leaves through os._exit."""


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
    """Import what the fork server could not give (a no-op when it did), then warm the caches."""
    import importlib

    for name in modules:
        try:
            importlib.import_module(name)
        except ImportError:  # the item that needs it reports MissingDependencyError
            pass
    if "prismfab.drawing.layout" in modules:
        _warm_writers()


def _warm_writers() -> None:
    """Parse the sheet fonts and the default template once per worker, not on its first item."""
    from prismfab.drawing.fonts import register
    from prismfab.drawing.template import load_template

    try:
        register()
        load_template("a3-landscape")
    except Exception:  # noqa: BLE001 - the item that needs them reports the problem itself
        pass


def run_item(item: Variant, out_dir: str, solve_only: bool, solve: Callable[[Any], Any] | None,
             writers: Callable[[], Any] | None) -> Row:
    """Build or solve one item; every error becomes a row (runs in a worker)."""
    start = time.perf_counter()
    overrides = _overrides(item)
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
        return _error_row(item, err, start)
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
        preload: modules the fork server imports before it forks the workers (default:
            ``HEAVY_MODULES``, or ``SOLVER_MODULES`` for ``solve_only``); empty for none.
    """
    jobs = max(1, min(jobs or os.cpu_count() or 1, len(items) or 1))
    rows: list[Row | None] = [None] * len(items)
    if jobs == 1:
        for i, item in enumerate(items):
            rows[i] = run_item(item, str(out_dir), solve_only, solve, writers)
            if progress:
                progress(i + 1, len(items), rows[i])  # type: ignore[arg-type]
        return rows  # type: ignore[return-value]
    modules = tuple(preload) if preload is not None else \
        SOLVER_MODULES if solve_only else HEAVY_MODULES
    ctx = multiprocessing.get_context("forkserver")
    # Takes effect when this process starts its fork server (once); later batches reuse it and
    # their workers import anything missing in the initializer.
    ctx.set_forkserver_preload([*LIGHT_MODULES, *modules, *((SERVER_MODULE,) if modules else ())])
    pool = ProcessPoolExecutor(max_workers=jobs, mp_context=ctx, initializer=_init_worker,
                               initargs=(modules,))
    with _one_thread_per_worker(), pool:
        futures = {pool.submit(run_item, item, str(out_dir), solve_only, solve, writers): i
                   for i, item in enumerate(items)}
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


def _error_row(item: Variant, err: BaseException, start: float) -> Row:
    return Row(item.name, "error", overrides=_overrides(item), error=str(err) or repr(err),
               error_type=type(err).__name__, seconds=time.perf_counter() - start)


def _overrides(item: Variant) -> str:
    return "; ".join(f"{p}={v:g}" for p, v in item.overrides)


THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
"""Thread-pool sizes of the numeric libraries, read once when numpy loads."""


@contextlib.contextmanager
def _one_thread_per_worker() -> Iterator[None]:
    """Workers (and their fork server) start with one numeric-library thread each.

    The workers are the parallelism: a BLAS thread pool in every worker only spins against the
    other workers (measured: a batch of six demo builds on two cores took 7.6 s with the default
    pools and 4.8 s with one thread each). A value the user has set is kept. The parent's
    environment is restored when the pool is done.
    """
    missing = [name for name in THREAD_VARIABLES if name not in os.environ]
    for name in missing:
        os.environ[name] = "1"
    try:
        yield
    finally:
        for name in missing:
            os.environ.pop(name, None)


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

