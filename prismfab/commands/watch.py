"""``prismfab watch SPEC [-o DIR] [--interval S] [--max-builds N]``: rebuild when the spec changes.

Polls the file (modification time, then content hash); on a change it builds the package and
prints the revision and what changed. A spec that does not load or solve is reported and the
watch goes on; Ctrl-C ends it (exit 130).
"""

from __future__ import annotations

import argparse
import sys

HELP = "watch a spec file and rebuild its package whenever it changes"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments."""
    parser.add_argument("spec", metavar="SPEC", help="the YAML design spec")
    parser.add_argument("-o", "--out", metavar="DIR", default="outputs",
                        help="output folder (default: outputs)")
    parser.add_argument("--interval", type=float, default=1.0, metavar="S",
                        help="seconds between checks (default: 1)")
    parser.add_argument("--max-builds", type=int, default=None, metavar="N",
                        help="stop after N builds (default: run until interrupted)")
    parser.add_argument("--zip", action="store_true", help="also zip each revision")


def run(args: argparse.Namespace) -> int:
    """Watch; returns the exit code."""
    from pathlib import Path

    from prismfab.package.watch import watch

    def say(text: str) -> None:
        sys.stdout.write(text + "\n")
        sys.stdout.flush()

    watch(Path(args.spec), out_dir=Path(args.out), interval_s=max(args.interval, 0.05),
          max_builds=args.max_builds, make_zip=args.zip, report=say)
    return 0
