"""``prismfab build SPEC [-o DIR] [--zip]``: solve a spec and write its fabrication package.

Prints the revision folder and what the revision changed; an unchanged spec reuses its revision
and writes nothing. Exit 2 on a bad spec or an unreachable target, 4 when the package cannot be
written (nothing half-written is kept either way).
"""

from __future__ import annotations

import argparse
import sys
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from prismfab.package.build import BuildResult

HELP = "solve a spec and write its vendor package (STEP, DXF, PDF, RFQ) as a new revision"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments."""
    parser.add_argument("spec", metavar="SPEC", help="the YAML design spec")
    parser.add_argument("-o", "--out", metavar="DIR", default="outputs",
                        help="output folder; the package goes to DIR/<prefix>/<revision>/ "
                        "(default: outputs)")
    parser.add_argument("--zip", action="store_true",
                        help="also write DIR/<prefix>/<prefix>_<revision>.zip")


def run(args: argparse.Namespace) -> int:
    """Build; returns the exit code."""
    from pathlib import Path

    from prismfab.package.build import build
    from prismfab.package.inputs import inputs_from_file
    from prismfab.spec.load import load_spec

    path = Path(args.spec)
    result = build(inputs_from_file(path, load_spec(path)), out_dir=Path(args.out),
                   make_zip=args.zip)
    sys.stdout.write(report(result))
    return 0


def report(result: BuildResult) -> str:
    """The lines printed after a build (folder, revision, changes, zip)."""
    from prismfab.package.diff import format_changes

    if result.reused:
        lines = [f"unchanged: revision {result.revision} reused, nothing written: {result.folder}"]
    else:
        lines = [f"revision {result.revision} written: {result.folder}"]
        lines += [f"  {c}" for c in format_changes(result.changes)] or ["  first issue"]
    if result.zip_path is not None:
        lines.append(f"zip: {result.zip_path}")
    return "\n".join(lines) + "\n"
