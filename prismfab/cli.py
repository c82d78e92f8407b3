"""The ``prismfab`` command line: parses, calls the API, prints.

Each sub-command lives in ``prismfab/commands/<name>.py`` and exposes ``HELP`` (one line),
``add_arguments(parser)`` and ``run(args) -> int``. Command modules import nothing heavy at
module level, so ``prismfab check`` and ``prismfab solve`` start without cadquery or reportlab.

Exit codes (one table, documented in the README):

====  =====================================================================
0     success
1     unexpected internal error (a bug: run again with --verbose and report it)
2     bad input: a spec field, a file, or a target that cannot be met
4     output cannot be written (revision exists, folder locked, disk full)
5     a library a writer needs is missing
130   interrupted
====  =====================================================================
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
import traceback

from prismfab import __version__
from prismfab.errors import (
    MissingDependencyError,
    OutputError,
    PrismfabError,
    SolveError,
    SpecError,
)

__all__ = ["COMMANDS", "EXIT_CODES", "main"]

COMMANDS: tuple[str, ...] = (
    "init",
    "check",
    "solve",
    "build",
    "diff",
    "batch",
    "watch",
    "materials",
    "schema",
)
"""Sub-commands, in help order; each is ``prismfab.commands.<name>``."""

EXIT_CODES: tuple[tuple[type[BaseException], int], ...] = (
    (SpecError, 2),
    (SolveError, 2),
    (OutputError, 4),
    (MissingDependencyError, 5),
    (PrismfabError, 2),
)
"""First match wins: error class -> exit code."""


def _load(name: str):  # type: ignore[no-untyped-def]
    try:
        return importlib.import_module(f"prismfab.commands.{name}")
    except ModuleNotFoundError as err:
        if err.name == f"prismfab.commands.{name}":
            return None
        raise


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="prismfab",
        description="Custom prism design spec -> solved, verified, vendor-ready fabrication package.",
    )
    parser.add_argument("--version", action="version", version=f"prismfab {__version__}")
    parser.add_argument("-v", "--verbose", action="store_true", help="show tracebacks on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in COMMANDS:
        module = _load(name)
        if module is None:
            continue
        p = sub.add_parser(name, help=module.HELP, description=module.HELP)
        module.add_arguments(p)
        p.set_defaults(_run=module.run)
    return parser


def _paragraph(text: str) -> str:
    """One paragraph: a single line (terminals wrap it), whitespace folded."""
    return " ".join(text.split()) + "\n"


def exit_code_for(err: BaseException) -> int:
    """The exit code for an error (see ``EXIT_CODES``)."""
    for cls, code in EXIT_CODES:
        if isinstance(err, cls):
            return code
    return 1


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit code (never raises for user errors)."""
    parser = _parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as done:  # argparse already printed usage or help
        return int(done.code or 0)
    if not getattr(args, "_run", None):
        parser.print_help(sys.stderr)
        return 2
    try:
        return int(args._run(args))
    except KeyboardInterrupt:
        sys.stderr.write("prismfab: interrupted; nothing half-written was kept.\n")
        return 130
    except PrismfabError as err:
        if args.verbose:
            traceback.print_exc()
        sys.stderr.write(_paragraph(f"prismfab {args.command}: error: {err}"))
        return exit_code_for(err)
    except Exception as err:  # a bug: say so in one paragraph, traceback only with --verbose
        if args.verbose:
            traceback.print_exc()
        sys.stderr.write(
            _paragraph(
                f"prismfab {args.command}: internal error ({type(err).__name__}: {err}). "
                "This is a bug in prismfab; run again with --verbose and report the traceback."
            )
        )
        return 1


def entry() -> None:
    """Console-script entry point."""
    code = main()
    sys.stdout.flush()
    sys.stderr.flush()
    kernel_loaded = "cadquery" in sys.modules or "OCP" in sys.modules  # the writers use OCP alone
    if os.environ.get("PRISMFAB_FAST_EXIT", "1") == "1" and kernel_loaded:
        # OCCT/VTK static destructors cost about a second at exit; every file is closed by now.
        os._exit(code)
    sys.exit(code)
