"""Tracer throughput and memory: a two-prism anamorphic pair, 1e6 rays at each of 3 wavelengths.

Measures ray-face interactions per second of ``prismfab.optics.trace`` (next-face prediction
and verification, vector refraction, Fresnel amplitudes with the s/p basis rotated per face,
optical path, event history) against a floor: a bare numpy kernel that knows the face sequence
in advance and, for each face crossed, does only the ray-plane distance, the hit point and the
vector Snell refraction, on the same rays in the same chunk size as the tracer. The floor is
written the way the tracer's own hot path is (component rows, preallocated work rows with
``out=``, zero normal components skipped), so the ratio measures the extra work of the tracer,
not a difference in numpy style. It does no search, no TIR test, no amplitudes, no
polarisation, no optical path and writes no event history.
Both result modes of ``trace`` are measured on the same rays and each gets its own row with the
floor and the ratio: ``record="full"`` (the event history of every ray, as measurement, ghost and
sizing code use it; the previous result is kept alive while the next trace runs, as a caller
holding results would) and ``record="final"`` (final state only: the same next-face search,
Snell, TIR, absorption, Fresnel amplitudes and basis rotation, optical path; no history).
Peak memory of one 1e6-ray trace in each mode is taken with tracemalloc (numpy reports its
buffers there).
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
from prismfab.optics.trace import CHUNK_SIZE, RayBundle, trace

N_RAYS = 1_000_000
WAVELENGTHS_NM = (630.0, 632.8, 640.0)
CHUNK = CHUNK_SIZE  # the tracer's default, used by both
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
    n_glass = float(_index("", rays.wavelengths_nm[:1])[0])
    n = rays.n_rays
    work = np.empty((4, min(n, chunk)))
    for start in range(0, n, chunk):
        o = np.array(rays.origins[start:start + chunk].T, order="C")
        d = np.array(rays.directions[start:start + chunk].T, order="C")
        _floor_chunk(solids, faces, n_glass, o, d, work[:, :o.shape[1]])
    return n * len(faces)


def _floor_chunk(solids, faces, n_glass: float, o: np.ndarray, d: np.ndarray,  # type: ignore[no-untyped-def]
                 work: np.ndarray) -> None:
    """Move rows o, d (3, n) in place through ``faces`` (the glass entered on every other face)."""
    dn_, t_, tmp_, k_ = work
    inside = False
    for p, f in faces:
        nv = solids[p].normals[f]
        comps = [(i, float(nv[i])) for i in range(3) if nv[i] != 0.0]
        # distance to the plane: t = (offset - n.o) / (n.d)
        np.multiply(d[comps[0][0]], comps[0][1], out=dn_)
        np.multiply(o[comps[0][0]], comps[0][1], out=t_)
        for i, c in comps[1:]:
            dn_ += np.multiply(d[i], c, out=tmp_)
            t_ += np.multiply(o[i], c, out=tmp_)
        np.subtract(solids[p].offsets_mm[f], t_, out=t_)
        t_ /= dn_
        for i in range(3):  # hit point
            o[i] += np.multiply(t_, d[i], out=tmp_)
        # vector Snell: d' = eta d + (eta c - sqrt(1 - eta^2 (1 - c^2))) na, na facing the ray
        sign = -1.0 if inside else 1.0
        eta = n_glass if inside else 1.0 / n_glass
        c = dn_ if inside else np.negative(dn_, out=dn_)
        np.multiply(c, c, out=k_)
        np.subtract(1.0, k_, out=k_)
        k_ *= eta * eta
        np.subtract(1.0, k_, out=k_)
        np.sqrt(k_, out=k_)
        np.multiply(c, eta, out=tmp_)
        tmp_ -= k_
        for i in range(3):
            d[i] *= eta
        for i, cn in comps:
            d[i] += np.multiply(tmp_, cn * sign, out=k_)
        inside = not inside


def _timed(fn):  # type: ignore[no-untyped-def]
    start = time.perf_counter()
    out = fn()
    return out, time.perf_counter() - start


def _peak_mb(system, record: str) -> float:  # type: ignore[no-untyped-def]
    """Peak traced memory of one 1e6-ray trace, input bundle included, MiB."""
    tracemalloc.start()
    bundle = sample_beam(system.beam, n_rays=N_RAYS, wavelength_nm=WAVELENGTHS_NM[1], seed=7)
    res = trace(system, bundle, index_of=_index, chunk_size=CHUNK, record=record)
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    del res, bundle
    return peak


def _rate_row(record: str, rate: float, floor_rate: float) -> dict[str, object]:
    what = "event history" if record == "full" else "final state only"
    return {"name": f"trace interactions/s, record={record} ({what}; 2 prisms, 1e6 rays x 3 wavelengths)",
            "value": rate, "unit": "1/s", "floor": floor_rate, "ratio": floor_rate / rate,
            "goal": f">= {GOAL_RATE:.0e}/s and ratio <= {GOAL_RATIO:g}"}


def run() -> list[dict[str, object]]:
    """Throughput of the tracer in both result modes and of the floor kernel, and peak memory."""
    system = _system()
    bundles = [sample_beam(system.beam, n_rays=N_RAYS, wavelength_nm=w, seed=i)
               for i, w in enumerate(WAVELENGTHS_NM)]
    chief = trace(system, RayBundle.create((0, 0, 0), (0, 0, 1), 632.8), index_of=_index)
    faces = [(int(p), int(f)) for p, f in zip(chief.event_prism[0], chief.event_face[0], strict=True)]
    for record in ("full", "final"):  # warm-up
        trace(system, bundles[0], index_of=_index, chunk_size=CHUNK, record=record)
    t_full, t_final, t_floor = 0.0, 0.0, 0.0
    n_full, n_final, n_floor = 0, 0, 0
    kept = None  # the previous full result stays alive, as in a caller that holds its results
    for b in bundles:
        res, dt = _timed(lambda b=b: trace(system, b, index_of=_index, chunk_size=CHUNK))
        t_full, n_full, kept = t_full + dt, n_full + res.interactions, res
        light, dt = _timed(lambda b=b: trace(system, b, index_of=_index, chunk_size=CHUNK, record="final"))
        t_final, n_final = t_final + dt, n_final + light.interactions
        del light
        count, df = _timed(lambda b=b: _floor(system, b, faces, CHUNK))
        t_floor, n_floor = t_floor + df, n_floor + count
    if n_final != n_full:
        raise RuntimeError(f"bench_trace: record='final' counted {n_final} interactions, 'full' {n_full}")
    floor_rate = n_floor / t_floor
    del bundles, res, kept
    return [
        _rate_row("full", n_full / t_full, floor_rate),
        _rate_row("final", n_final / t_final, floor_rate),
        {"name": "trace wall time, 3e6 rays, record=full", "value": t_full, "unit": "s"},
        {"name": "trace wall time, 3e6 rays, record=final", "value": t_final, "unit": "s"},
        {"name": "trace peak memory, 1e6 rays, record=full", "value": _peak_mb(system, "full"),
         "unit": "MiB", "goal": f"< {GOAL_MEMORY_MB:g}"},
        {"name": "trace peak memory, 1e6 rays, record=final", "value": _peak_mb(system, "final"),
         "unit": "MiB", "goal": f"< {GOAL_MEMORY_MB:g}"},
    ]
