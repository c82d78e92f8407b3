"""``prismfab schema``: print the JSON Schema (draft 2020-12) of the spec format.

Editors use it for completion and checking while a spec is typed; it is rendered from the same
field table the loader validates against, so the two cannot disagree.
"""

from __future__ import annotations

import argparse
import json
import sys

HELP = "print the JSON Schema of the spec file format (for editor completion and checks)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments (none)."""
    del parser


def run(args: argparse.Namespace) -> int:
    """Print the schema; returns the exit code."""
    del args
    from prismfab.spec.schema import json_schema

    sys.stdout.write(json.dumps(json_schema(), indent=2, sort_keys=True, ensure_ascii=False))
    sys.stdout.write("\n")
    return 0
