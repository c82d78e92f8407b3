"""``prismfab batch SPEC... [--vary PATH=START:STOP:STEP] [--solve-only] [-j N] [-o DIR]``.

Builds the package of every spec and every variant in a process pool (or only solves them),
shows progress on stderr, prints a summary table, and writes it as CSV or JSON with
``--summary``. A failing item is reported in its row and does not stop the others; the exit
code is 0 when every item succeeded, 2 when at least one failed.
"""

from __future__ import annotations

import argparse
import sys
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from prismfab.package.batch import Row

HELP = "build or solve many specs and swept variants in parallel, with a summary table"
BAR_WIDTH = 30


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments."""
    parser.add_argument("specs", metavar="SPEC", nargs="+", help="YAML design specs")
    parser.add_argument("--vary", metavar="PATH=START:STOP:STEP", action="append", default=[],
                        help="sweep a numeric spec field, e.g. design.magnification=2:4:0.25, or "
                        "list values: PATH=V1,V2; several --vary give every combination")
    parser.add_argument("--solve-only", action="store_true",
                        help="solve and trace only; write no packages")
    parser.add_argument("-j", "--jobs", type=int, default=None, metavar="N",
                        help="worker processes (default: number of cores)")
    parser.add_argument("-o", "--out", metavar="DIR", default="outputs",
                        help="output folder (default: outputs)")
    parser.add_argument("--summary", metavar="FILE", default=None,
                        help="write the summary table to FILE (.csv or .json)")


def progress_line(done: int, total: int, row: Row) -> str:
    """A text progress bar: ``[#######.......]  7/20  name: built``."""
    filled = BAR_WIDTH * done // max(total, 1)
    return (f"[{'#' * filled}{'.' * (BAR_WIDTH - filled)}] {done:>{len(str(total))}}/{total}  "
            f"{row.variant}: {row.status}")


def _progress(done: int, total: int, row: Row) -> None:
    tty = sys.stderr.isatty()
    line = progress_line(done, total, row)
    sys.stderr.write(f"\r{line[:150]:<150}" if tty else line + "\n")
    if tty and done == total:
        sys.stderr.write("\n")
    sys.stderr.flush()


def _num(value: float | None, fmt: str) -> str:
    if value is None:
        return "-"
    text = format(value, fmt)
    return text[1:] if text.startswith("-") and float(text) == 0.0 else text


def table(rows: list[Row]) -> str:
    """The summary table printed on stdout."""
    head = ("variant", "status", "M", "pointing mrad", "yield", "cost", "folder")
    body = [(r.variant, r.status, _num(r.magnification, ".4f"), _num(r.pointing_mrad, ".4f"),
             _num(r.yield_fraction, ".3f"), _num(r.cost_index, ".2f"),
             r.folder or (r.error[:80] if r.error else "")) for r in rows]
    widths = [max(len(str(x)) for x in col) for col in zip(head, *body, strict=True)]
    lines = ["  ".join(str(c).ljust(w) for c, w in zip(line, widths, strict=True)).rstrip()
             for line in (head, *body)]
    return "\n".join(lines) + "\n"


def run(args: argparse.Namespace) -> int:
    """Run the batch; returns the exit code."""
    from prismfab.package.batch import run_batch, write_summary
    from prismfab.package.variants import expand, parse_sweep

    if args.jobs is not None and args.jobs < 1:
        from prismfab.errors import SpecError

        raise SpecError("", f"option -j {args.jobs} must be at least 1",
                        fix="give the number of worker processes, e.g. -j 2")
    items = expand(args.specs, [parse_sweep(v) for v in args.vary])
    rows = run_batch(items, out_dir=args.out, jobs=args.jobs, solve_only=args.solve_only,
                     progress=_progress)
    sys.stdout.write(table(rows))
    if args.summary:
        sys.stdout.write(f"summary: {write_summary(rows, args.summary)}\n")
    failed = [r for r in rows if r.status == "error"]
    for r in failed:
        sys.stderr.write(f"prismfab batch: {r.variant}: {r.error_type}: {r.error}\n")
    return 2 if failed else 0
