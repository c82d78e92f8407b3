"""The error tree of prismfab.

Every error a user can act on is a ``PrismfabError``. Leaves also inherit the matching
built-in so callers that catch ``ValueError`` or ``ImportError`` keep working::

    PrismfabError
     +-- SpecError(ValueError)             bad input: a spec field, with path and YAML line
     |    `-- MaterialError                 unknown material, or a wavelength outside its range
     +-- SolveError(ValueError)             no geometry meets the spec; says the reachable range
     +-- DesignCheckError(ValueError)       a solved design breaks a rule (TIR margin, size limit)
     +-- OutputError(OSError)               a package cannot be written (exists, locked, no space)
     `-- MissingDependencyError(ImportError)

The command line maps these to exit codes (see ``prismfab.cli.EXIT_CODES``). Messages are
rendered from the fields, so the text always names the field and says what would fix it.
Errors pickle, so batch runs across processes keep them.
"""

from __future__ import annotations

__all__ = [
    "DesignCheckError",
    "MaterialError",
    "MissingDependencyError",
    "OutputError",
    "PrismfabError",
    "SolveError",
    "SpecError",
]


class PrismfabError(Exception):
    """Root of every error prismfab raises on purpose."""


class SpecError(PrismfabError, ValueError):
    """A spec field is wrong.

    Args:
        path: dotted field path, e.g. ``design.magnification``.
        problem: what is wrong, e.g. ``must be greater than 1``.
        line: 1-based YAML line of the field, when known.
        column: 1-based YAML column, when known.
        fix: what would fix it, e.g. ``use a value between 1.05 and 8``.
        source: the spec file name, when known.
    """

    def __init__(
        self,
        path: str,
        problem: str,
        *,
        line: int | None = None,
        column: int | None = None,
        fix: str | None = None,
        source: str | None = None,
    ) -> None:
        self.path = path
        self.problem = problem
        self.line = line
        self.column = column
        self.fix = fix
        self.source = source
        super().__init__(self._render())

    def _render(self) -> str:
        where = ""
        if self.source:
            where = f"{self.source}"
        if self.line is not None:
            where += f"{':' if where else 'line '}{self.line}"
            if self.column is not None:
                where += f":{self.column}"
        head = f"{where}: " if where else ""
        field = f"field '{self.path}'" if self.path else "the spec"
        text = f"{head}{field} {self.problem}"
        if self.fix:
            text += f"; {self.fix}"
        return text if text.endswith(".") else text + "."

    def __reduce__(self):  # type: ignore[no-untyped-def]
        return (
            _rebuild_spec_error,
            (type(self), self.path, self.problem, self.line, self.column, self.fix, self.source),
        )

    def located(self, *, line: int | None, column: int | None = None, source: str | None = None
                ) -> SpecError:
        """Return a copy that names the YAML line (and file) of the field."""
        return type(self)(
            self.path,
            self.problem,
            line=self.line if self.line is not None else line,
            column=self.column if self.column is not None else column,
            fix=self.fix,
            source=self.source or source,
        )


def _rebuild_spec_error(cls, path, problem, line, column, fix, source):  # type: ignore[no-untyped-def]
    return cls(path, problem, line=line, column=column, fix=fix, source=source)


class MaterialError(SpecError):
    """Unknown material, or a wavelength outside the material's valid range."""


class SolveError(PrismfabError, ValueError):
    """No geometry meets the spec's targets.

    Args:
        path: the spec field whose target cannot be met.
        reason: why, with numbers.
        reachable: the reachable range, in words, e.g. ``M = 1.0 to 5.3``.
    """

    def __init__(self, path: str, reason: str, *, reachable: str | None = None) -> None:
        self.path = path
        self.reason = reason
        self.reachable = reachable
        text = f"field '{path}': {reason}" if path else reason
        if reachable:
            text += f"; reachable: {reachable}"
        super().__init__(text if text.endswith(".") else text + ".")

    def __reduce__(self):  # type: ignore[no-untyped-def]
        return (_rebuild_solve_error, (type(self), self.path, self.reason, self.reachable))


def _rebuild_solve_error(cls, path, reason, reachable):  # type: ignore[no-untyped-def]
    return cls(path, reason, reachable=reachable)


class DesignCheckError(SolveError):
    """A solved design breaks a rule: TIR lost, a face beyond a size limit, a chamfer that cannot fit."""


class OutputError(PrismfabError, OSError):
    """A package cannot be written."""


class MissingDependencyError(PrismfabError, ImportError):
    """A writer's library is not installed."""
