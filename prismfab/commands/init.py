"""``prismfab init FAMILY``: write the commented starter spec of a prism family.

The starter specs live in ``templates/specs/<family>.yaml``; each is a complete, valid spec set
in an invented scenario, with every field commented. An existing file is never overwritten
unless ``--force`` is given; the file is written to a temporary name and then renamed, so an
interrupted run leaves nothing half-written.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
from pathlib import Path

from prismfab.errors import OutputError
from prismfab.spec.types import Family

HELP = "write a commented starter spec for a prism family (e.g. 'prismfab init anamorphic-pair')"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments."""
    parser.add_argument("family", choices=[f.value for f in Family], metavar="FAMILY",
                        help="one of: " + ", ".join(f.value for f in Family))
    parser.add_argument("-o", "--output", metavar="FILE", default=None,
                        help="file to write (default: FAMILY.yaml in the current folder)")
    parser.add_argument("--force", action="store_true", help="overwrite FILE if it exists")


def run(args: argparse.Namespace) -> int:
    """Write the starter spec; returns the exit code."""
    from prismfab.spec.load import templates_dir

    template = templates_dir() / "specs" / f"{args.family}.yaml"
    target = Path(args.output or f"{args.family}.yaml")
    if target.exists() and not args.force:
        sys.stderr.write(f"prismfab init: error: '{target}' already exists; pass --force to "
                         "overwrite it, or choose another file with -o FILE.\n")
        return 2
    if target.is_dir():
        sys.stderr.write(f"prismfab init: error: '{target}' is a folder; give a file name "
                         "with -o FILE.\n")
        return 2
    try:
        text = template.read_text(encoding="utf-8")
    except OSError as err:
        raise OutputError(f"the starter spec {template} cannot be read ({err.strerror}); "
                          "reinstall prismfab") from None
    _write_atomic(target, text)
    sys.stdout.write(f"wrote {target}: a starter {args.family} spec. Edit it, then run "
                     f"'prismfab check {target}'.\n")
    return 0


def _write_atomic(target: Path, text: str) -> None:
    folder = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    except OSError as err:
        raise OutputError(f"cannot write '{target}' ({err.strerror}); check that the folder "
                          "exists and is writable") from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
