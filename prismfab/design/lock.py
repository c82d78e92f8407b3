"""Locked builds: pin the solved geometry in the spec so a later solve gives the same prisms.

``prismfab solve --write-lock FILE`` writes the spec with a ``lock:`` section (``lock_yaml``):
the prismfab version, the family, a short digest of each input the geometry depends on (beam,
design, fabrication, and the material indices at the beam's wavelengths), and per prism its
material, height, part-frame vertices and pose, floats written in shortest round-trip form.

``apply_lock`` (called by ``prismfab.design.solve``) honours it:

* inputs changed since the lock was written -> ``SpecError`` naming the changed sections (the
  lock no longer describes this spec);
* the solver gives the locked geometry (to 1e-6 mm) -> the solved system with the locked
  numbers substituted, so the output is bit-identical to the lock;
* otherwise (another prismfab version solves differently, or the lock was edited) -> the locked
  geometry is kept: traced again for clear apertures, incidences and transmission, with a
  warning that says by how much this version's own solution differs.
"""

from __future__ import annotations

import dataclasses
import enum
import hashlib
import json
import math
from dataclasses import replace

import numpy as np

from prismfab.errors import SolveError, SpecError
from prismfab.model import Pose, Prism, System
from prismfab.spec.types import Lock, Spec

__all__ = ["GEOMETRY_TOL_MM", "apply_lock", "inputs_digest", "lock_yaml"]

GEOMETRY_TOL_MM = 1e-6
"""A solved vertex this close to the locked one is the locked vertex."""
_PIVOT_FAMILIES = ("anamorphic-single", "anamorphic-pair", "brewster", "dispersing")


def _plain(value):  # noqa: ANN001, ANN202 - JSON-ready copy of a value object
    if dataclasses.is_dataclass(value):
        return {f.name: _plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, enum.Enum):
        return value.value
    if isinstance(value, (tuple, list)):
        return [_plain(v) for v in value]
    if isinstance(value, float):
        return repr(value)
    return value


def _digest(value) -> str:  # noqa: ANN001
    text = json.dumps(_plain(value), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]


def inputs_digest(spec: Spec) -> dict[str, str]:
    """Digest of each input the solved geometry depends on (16 hex digits each)."""
    from prismfab import materials

    keys = sorted({p for p in (getattr(spec.design, "materials", ()) or ())}
                  | ({spec.design.material} if hasattr(spec.design, "material") else set()))
    wls = sorted({spec.beam.wavelength_nm, *spec.beam.band_nm})
    idx = {k: [repr(float(materials.get(k, catalogue_file=spec.materials_file or None).n(w)))
               for w in wls] for k in keys}
    return {"beam": _digest(spec.beam), "design": _digest(spec.design),
            "fabrication": _digest(spec.fabrication), "materials": _digest(idx)}


def _check_inputs(spec: Spec, lock: Lock) -> None:
    now = inputs_digest(spec)
    changed = [k for k, v in lock.inputs if now.get(k) != v]
    if changed:
        line = spec.line_of("lock.inputs")
        raise SpecError("lock.inputs", "was written for other values of " + ", ".join(changed)
                        + " than the spec holds now", line=line, source=spec.source or None,
                        fix="delete the lock section and write it again with 'prismfab solve "
                        "--write-lock', or undo the change")


def _difference_mm(system: System, lock: Lock) -> float:
    """Largest distance between a solved and a locked vertex, in the system frame (mm)."""
    if len(system.prisms) != len(lock.prisms):
        return math.inf
    worst = 0.0
    for p, q in zip(system.prisms, lock.prisms, strict=True):
        if (p.name, p.material) != (q.name, q.material) or len(p.vertices_mm) != len(q.vertices_mm):
            return math.inf
        pq = Pose(rotation=q.rotation, translation_mm=q.translation_mm)  # type: ignore[arg-type]
        for z in (0.0, max(p.height_mm, q.height_mm)):
            for a, b in zip(p.vertices_mm, q.vertices_mm, strict=True):
                da = np.subtract(p.pose.apply((*a, min(z, p.height_mm))),
                                 pq.apply((*b, min(z, q.height_mm))))
                worst = max(worst, float(np.linalg.norm(da)))
    return worst


def _locked_prism(p: Prism, q) -> Prism:  # noqa: ANN001
    pose = Pose(rotation=q.rotation, translation_mm=q.translation_mm)  # type: ignore[arg-type]
    return replace(p, vertices_mm=q.vertices_mm, height_mm=q.height_mm, pose=pose)


def apply_lock(spec: Spec, system: System) -> System:
    """The system with the spec's locked geometry (see the module docstring).

    Raises:
        SpecError: the lock's inputs no longer match the spec.
        SolveError: the lock's prisms do not fit this family's faces.
    """
    lock = spec.lock
    if lock is None:
        return system
    _check_inputs(spec, lock)
    diff = _difference_mm(system, lock)
    if diff <= GEOMETRY_TOL_MM:
        return replace(system, prisms=tuple(_locked_prism(p, q)
                                            for p, q in zip(system.prisms, lock.prisms, strict=True)))
    return _retraced(spec, system, lock, diff)


def _retraced(spec: Spec, system: System, lock: Lock, diff: float) -> System:
    from prismfab.design import sizing
    from prismfab.design.common import index_function, section_in_plane

    if len(system.prisms) != len(lock.prisms) or any(
            len(p.faces) != len(q.vertices_mm) for p, q in zip(system.prisms, lock.prisms)):
        raise SolveError("lock.prisms", "the locked prisms have other faces than this version "
                         "of prismfab makes for the design",
                         reachable="delete the lock section and write it again")
    locked = [_locked_prism(p, q) for p, q in zip(system.prisms, lock.prisms, strict=True)]
    drafts = [sizing.Draft(p.name, p.material, index_function(spec, p.material, path="lock"),
                           section_in_plane(p), tuple(f.role for f in p.faces),
                           tuple(f.note for f in p.faces)) for p in locked]
    words = "an unlimited amount" if math.isinf(diff) else f"up to {diff:.4g} mm"
    warning = (f"geometry taken from the lock written by prismfab {lock.prismfab_version}; this "
               f"version solves prisms that differ by {words} (facts and tuning table are of "
               "this version's own solution)")
    pivot = 0.0 if spec.family.value in _PIVOT_FAMILIES else None
    traced = sizing.finish_system(spec, drafts, facts=system.facts, tuning=system.tuning,
                                  warnings=(*system.warnings, warning), pivot_z_mm=pivot)
    prisms = tuple(replace(p, vertices_mm=q.vertices_mm, height_mm=q.height_mm, pose=q.pose)
                   for p, q in zip(traced.prisms, locked, strict=True))
    return replace(traced, prisms=prisms)


def lock_yaml(spec: Spec, system: System) -> str:
    """The ``lock:`` section for a solved system, as YAML text (ends with a newline)."""
    from prismfab import __version__

    digests = inputs_digest(spec)
    out = ["lock:", f"  prismfab_version: \"{__version__}\"", f"  family: {system.family}",
           "  inputs:"]
    out += [f"    {k}: \"{digests[k]}\"" for k in ("beam", "design", "fabrication", "materials")]
    out.append("  prisms:")
    for p in system.prisms:
        verts = ", ".join(f"[{_f(x)}, {_f(y)}]" for x, y in p.vertices_mm)
        rows = ", ".join("[" + ", ".join(_f(v) for v in row) + "]" for row in p.pose.rotation)
        out += [f"    - name: {p.name}", f"      material: \"{p.material}\"",
                f"      height_mm: {_f(p.height_mm)}", f"      vertices_mm: [{verts}]",
                f"      rotation: [{rows}]",
                "      translation_mm: [" + ", ".join(_f(v) for v in p.pose.translation_mm) + "]"]
    return "\n".join(out) + "\n"


def _f(value: float) -> str:
    """Shortest text that reads back as the same float (YAML 1.1 needs a '.' or an exponent)."""
    text = repr(float(value) + 0.0)
    if "e" in text and "." not in text.split("e")[0]:
        mant, exp = text.split("e")
        text = f"{mant}.0e{exp}"
    return text
