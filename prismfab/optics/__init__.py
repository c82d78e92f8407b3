"""prismfab.optics: exact 3D ray trace and measurement of prism systems.

Public API:

* ``trace(system, rays, *, max_events=16, index_of=None, reflect_at_event=None, chunk_size=...,
  predict=True) -> TraceResult``
* ``RayBundle``, ``TraceResult``
* ``sample_beam(beam, *, n_rays, wavelength_nm, seed=0) -> RayBundle``
* ``measure(system, *, back_reflection_mrad=2.0, index_of=None) -> Performance``

Without ``index_of``, materials are looked up in the shipped catalogue extended by
``system.materials_file``. Coated faces are traced with their specified reflectance: an
antireflection face reflects its ``reflectance_max_pct`` for s and p alike (the specification
limit, a conservative upper bound), a mirror its ``reflectance_min_pct`` (the rest absorbed);
uncoated faces follow Fresnel.

The functions are imported eagerly (numpy only) because the submodules ``trace`` and ``measure``
share their names: importing them here binds the package attributes to the functions.
Closed-form relations live in ``prismfab.optics.closed_forms``; prism solids in
``prismfab.optics.solid``; test builders in ``prismfab.optics.testing``.
"""

from __future__ import annotations

from prismfab.optics.trace import RayBundle, TraceResult, trace  # noqa: I001  (before measure)
from prismfab.optics.beam import sample_beam
from prismfab.optics.measure import measure

__all__ = ["RayBundle", "TraceResult", "measure", "sample_beam", "trace"]
