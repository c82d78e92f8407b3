"""Tracer throughput and memory: a two-prism anamorphic pair, 1e6 rays at each of 3 wavelengths.

Measures ray-face interactions per second of ``prismfab.optics.trace`` (search for the next
face, vector refraction, Fresnel amplitudes with the s/p basis rotated per face, event history)
against a floor: a bare numpy kernel that knows the face sequence in advance and does only the
plane intersection and the Snell arithmetic, on the same rays in the same chunk size.
Peak memory of one 1e6-ray trace is taken with tracemalloc (numpy reports its buffers there).
"""

from __future__ import annotations

import math
import time
import tracemalloc

import numpy as np

from prismfab.model import Polarization
from prismfab.optics import closed_forms as cf
from prismfab.optics.beam import sample_beam
from prismfab.optics.solid import solid_of
from prismfab.optics.testing import prism_chain
from prismfab.optics.trace import RayBundle, trace

N_RAYS = 1_000_000
WAVELENGTHS_NM = (630.0, 632.8, 640.0)
CHUNK = 32768
GOAL_RATE = 1e7
GOAL_RATIO = 3.0
GOAL_MEMORY_MB = 1024.0


def _index(material: str, wavelengths_nm: np.ndarray) -> np.ndarray:
    lam_um = np.asarray(wavelengths_nm, float) * 1e-3  # a Cauchy-type glass, invented for the bench
    return 1.5 + 0.0042 / lam_um**2


def _system():  # type: ignore[no-untyped-def]
    n = float(_index("", np.array([632.8]))[0])
    phi, apex, _ = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=n)
    return prism_chain(apex_rad=[apex, apex], incidence_rad=[phi, phi], senses=[1, -1],
                       index_of=_index, diameter_mm=(1.0, 3.0), polarization=Polarization.P)


def _floor(system, rays: RayBundle, faces: list[tuple[int, int]], chunk: int) -> int:  # type: ignore[no-untyped-def]
    """Plane intersection + vector Snell only, along a known face sequence. Returns interactions."""
    solids = [solid_of(p) for p in system.prisms]
    n_glass = _index("", rays.wavelengths_nm[:1])[0]
    n = rays.n_rays
    for start in range(0, n, chunk):
        o = np.array(rays.origins[start:start + chunk].T, order="C")
        d = np.array(rays.directions[start:start + chunk].T, order="C")
        inside = False
        for p, f in faces:
            nv = solids[p].normals[f]
            off = solids[p].offsets_mm[f]
            dn = nv[0] * d[0] + nv[1] * d[1] + nv[2] * d[2]
            t = (off - (nv[0] * o[0] + nv[1] * o[1] + nv[2] * o[2])) / dn
            o += t * d
            na = -nv if inside else nv
            c = -dn if not inside else dn
            eta = n_glass if inside else 1.0 / n_glass
            k = 1.0 - eta * eta * (1.0 - c * c)
            d *= eta
            d += (eta * c - np.sqrt(k)) * na[:, None]
            inside = not inside
    return n * len(faces)


def _timed(fn):  # type: ignore[no-untyped-def]
    start = time.perf_counter()
    out = fn()
    return out, time.perf_counter() - start


def run() -> list[dict[str, object]]:
    """Throughput of the tracer and of the floor kernel, and peak memory."""
    system = _system()
    bundles = [sample_beam(system.beam, n_rays=N_RAYS, wavelength_nm=w, seed=i)
               for i, w in enumerate(WAVELENGTHS_NM)]
    chief = trace(system, RayBundle.create((0, 0, 0), (0, 0, 1), 632.8), index_of=_index)
    faces = [(int(p), int(f)) for p, f in zip(chief.event_prism[0], chief.event_face[0], strict=True)]
    trace(system, bundles[0], index_of=_index, chunk_size=CHUNK)  # warm-up
    t_trace, t_floor, interactions = 0.0, 0.0, 0
    for b in bundles:
        res, dt = _timed(lambda b=b: trace(system, b, index_of=_index, chunk_size=CHUNK))
        t_trace += dt
        interactions += res.interactions
        count, df = _timed(lambda b=b: _floor(system, b, faces, CHUNK))
        t_floor += df
    rate, floor_rate = interactions / t_trace, interactions / t_floor
    del bundles, res
    tracemalloc.start()  # the input bundle counts too
    bundle = sample_beam(system.beam, n_rays=N_RAYS, wavelength_nm=WAVELENGTHS_NM[1], seed=7)
    trace(system, bundle, index_of=_index, chunk_size=CHUNK)
    peak_mb = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    return [
        {"name": "trace interactions/s (2 prisms, 1e6 rays x 3 wavelengths)", "value": rate,
         "unit": "1/s", "floor": floor_rate, "ratio": floor_rate / rate,
         "goal": f">= {GOAL_RATE:.0e}/s and ratio <= {GOAL_RATIO:g}"},
        {"name": "trace wall time, 3e6 rays", "value": t_trace, "unit": "s"},
        {"name": "trace peak memory, 1e6 rays", "value": peak_mb, "unit": "MiB",
         "goal": f"< {GOAL_MEMORY_MB:g}"},
    ]
