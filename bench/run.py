"""Run the prismfab benchmarks: ``python bench/run.py [NAME...] [--json FILE]``.

Every module ``bench/bench_<name>.py`` exposes ``run() -> list[dict]``; each dict has the keys
``name``, ``value``, ``unit`` and optionally ``floor`` (a reference value in the same unit) and
``ratio`` (> 1 means slower than the floor) and ``goal`` (text). NAME selects modules by
``<name>`` (or the full ``bench_<name>``). See bench/README.md.
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import sys
import time
from pathlib import Path
from types import ModuleType

HERE = Path(__file__).resolve().parent


def discover() -> dict[str, Path]:
    """Benchmark modules by short name, sorted."""
    return {p.stem.removeprefix("bench_"): p for p in sorted(HERE.glob("bench_*.py"))}


def load(path: Path) -> ModuleType:
    """Import one benchmark module from its file."""
    spec = importlib.util.spec_from_file_location(path.stem, path)
    if spec is None or spec.loader is None:
        raise ImportError(f"cannot load {path}")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _fmt(value: object) -> str:
    if isinstance(value, float):
        return f"{value:.4g}"
    return "" if value is None else str(value)


def table(rows: list[dict[str, object]]) -> str:
    """Plain-text table of benchmark rows."""
    cols = ["name", "value", "unit", "floor", "ratio", "goal"]
    cells = [[_fmt(r.get(c)) for c in cols] for r in rows]
    widths = [max(len(c), *(len(row[i]) for row in cells)) for i, c in enumerate(cols)]
    lines = ["  ".join(c.ljust(w) for c, w in zip(cols, widths, strict=True))]
    lines.append("  ".join("-" * w for w in widths))
    lines += ["  ".join(v.ljust(w) for v, w in zip(row, widths, strict=True)) for row in cells]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    """Run the selected benchmarks, print a table, optionally write JSON."""
    parser = argparse.ArgumentParser(description="Run prismfab benchmarks.")
    parser.add_argument("names", nargs="*", help="benchmark names (default: all)")
    parser.add_argument("--json", type=Path, help="write {'benchmarks': [...]} to this file")
    args = parser.parse_args(argv)
    found = discover()
    wanted = [n.removeprefix("bench_") for n in args.names] or list(found)
    unknown = [n for n in wanted if n not in found]
    if unknown:
        print(f"unknown benchmark(s): {', '.join(unknown)}; available: {', '.join(found)}",
              file=sys.stderr)
        return 2
    rows: list[dict[str, object]] = []
    for name in wanted:
        start = time.perf_counter()
        for row in load(found[name]).run():
            rows.append({"module": name, **row})
        print(f"# {name}: {time.perf_counter() - start:.1f} s", file=sys.stderr)
    print(table(rows))
    if args.json:
        args.json.write_text(json.dumps({"benchmarks": rows}, indent=2, sort_keys=True) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
