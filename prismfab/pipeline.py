"""The whole model from a spec, with no files written: solve, trace, size into parts, tolerance."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from prismfab.model import Part, Performance, System
from prismfab.spec.types import Spec

__all__ = ["Solution", "run"]


@dataclass(frozen=True, slots=True)
class Solution:
    """Everything the writers need.

    Args:
        spec: the validated spec.
        system: the solved, sized system.
        performance: the verified trace of ``system``.
        parts: one per prism, in beam order, with derived tolerances.
        tolerance_report: the tolerance analysis (``prismfab.design.tolerance.ToleranceReport``),
            or None when tolerancing was skipped.
    """

    spec: Spec
    system: System
    performance: Performance
    parts: tuple[Part, ...]
    tolerance_report: Any = None


def run(spec: Spec, *, tolerances: bool = True) -> Solution:
    """Solve, verify, size and tolerance a spec.

    Raises:
        SolveError: no geometry meets the spec (the message gives the reachable range).
        DesignCheckError: the solved design breaks a rule (TIR margin, size limit).
    """
    from prismfab.design import solve
    from prismfab.design.parts import make_parts
    from prismfab.optics.measure import measure

    system = solve(spec)
    performance = measure(system)
    parts = make_parts(spec, system, performance)
    report = None
    if tolerances:
        from prismfab.design.tolerance import derive

        parts, report = derive(spec, system, parts)
    return Solution(spec=spec, system=system, performance=performance, parts=parts,
                    tolerance_report=report)
