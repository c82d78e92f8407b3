"""``prismfab diff OLD NEW``: what changed between two specs or two package folders.

Each side is a spec file (solved here), a revision folder (``.../<prefix>/<rev>``), a prefix
folder (its latest revision) or a ``revision.json``. Prints one change per line in the words the
revision tables use; exit 0 (also when nothing changed), 2 on bad input.
"""

from __future__ import annotations

import argparse
import sys

HELP = "list what changed between two specs or two package folders, in drawing words"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments."""
    parser.add_argument("old", metavar="OLD", help="spec file or package folder (before)")
    parser.add_argument("new", metavar="NEW", help="spec file or package folder (after)")


def run(args: argparse.Namespace) -> int:
    """Compare and print; returns the exit code."""
    from prismfab.package.diff import changes, format_changes
    from prismfab.package.sources import snapshot_of

    lines = format_changes(changes(snapshot_of(args.old), snapshot_of(args.new)))
    sys.stdout.write("\n".join(lines) + "\n" if lines else "no changes\n")
    return 0
