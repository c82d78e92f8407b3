"""Design solvers: ``solve(spec) -> System``, one module per prism family.

``solve`` dispatches on ``spec.family`` to ``prismfab.design.<family>.design(spec)`` (module
name = family value with "-" replaced by "_"). Each family returns a sized, verified
``System``: prisms at their poses with final section polygons, face roles and coatings, the
beam, solver facts, tuning rows, warnings, clear apertures and AOI ranges. Shared functions live
in ``design.common`` (geometry, 2D trace, assembly) and ``design.sizing`` (footprint -> clear
aperture -> face length -> polygon). A spec with a ``lock:`` section gets the locked geometry
(``design.lock``).
"""

from __future__ import annotations

import importlib

from prismfab.errors import SolveError
from prismfab.model import System
from prismfab.spec.types import Spec

__all__ = ["solve"]


def solve(spec: Spec) -> System:
    """Solve the spec's design family into a sized, verified ``System``.

    Raises:
        SolveError: no geometry meets the targets (the message gives the reachable range).
        DesignCheckError: the solved design breaks a rule (clear aperture, size limit).
        MaterialError: a material is unknown or used outside its range.
        SpecError: the spec's ``lock`` was written for other inputs.
    """
    name = spec.family.value.replace("-", "_")
    try:
        module = importlib.import_module(f"prismfab.design.{name}")
    except ModuleNotFoundError as err:
        if err.name != f"prismfab.design.{name}":
            raise
        raise SolveError("design.family", f"no solver for the family '{spec.family.value}' "
                         "is installed in this build") from err
    system = module.design(spec)
    if spec.lock is not None:
        from prismfab.design.lock import apply_lock

        system = apply_lock(spec, system)
    return system
