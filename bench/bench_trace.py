"""Tracer throughput and memory: a two-prism anamorphic pair, 1e6 rays at each of 3 wavelengths.

Measures ray-face interactions per second of ``prismfab.optics.trace`` (next-face prediction
and verification, vector refraction, Fresnel amplitudes with the s/p basis rotated per face,
optical path, event history) against a floor: a bare numpy kernel that knows the face sequence
in advance and, for each face crossed, does only the ray-plane distance, the hit point and the
vector Snell refraction, on the same rays in the same chunk size as the tracer. The floor is
written as tightly as numpy allows (component rows, preallocated work rows with ``out=``, zero
normal components skipped). It does no search, no TIR test, no amplitudes, no polarisation, no
optical path and writes no event history. The tracer runs as installed: with its compiled lane
where it was built (see DEVELOPERS.md, "The tracer's two lanes"), else numpy only
(``PRISMFAB_NUMPY_ONLY=1`` forces that); the ``lane`` row says which.
Both result modes of ``trace`` are measured on the same rays and each gets its own row with the
floor and the ratio: ``record="full"`` (the event history of every ray, as measurement, ghost and
sizing code use it; the previous result is kept alive while the next trace runs, as a caller
holding results would) and ``record="final"`` (final state only: the same next-face search,
Snell, TIR, absorption, Fresnel amplitudes and basis rotation, optical path; no history).
Every kernel is timed over all three bundles in each of ``ROUNDS`` interleaved rounds and its
best round counts (the usual guard against a busy machine), tracer and floors alike. In later
rounds the allocator hands out the memory of results already dropped, as in a program that
traces again and again; the first round, where every result array is freshly mapped memory,
is reported as well for the full mode. Peak
memory of one 1e6-ray trace in each mode is taken with tracemalloc (numpy reports its buffers
there).

A third, informative row times a "physics floor": the floor kernel plus the arithmetic the
tracer cannot leave out - Fresnel amplitudes, the s/p basis rotation of a linear field, the
optical path, the whole-group check of the hit rectangle, and the final field and power - still
on the known face sequence, with no search, no exception handling and no event record. Its
ratio to the floor is what the required physics costs in numpy on this machine: a bound for any
numpy-only tracer, which the compiled lane passes.
"""

from __future__ import annotations

import math
import time
import tracemalloc

import numpy as np

from prismfab.model import Polarization
from prismfab.optics import _lane
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
ROUNDS = 3


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


def _move_to_plane(solid, f: int, o: np.ndarray, d: np.ndarray, dn_: np.ndarray, t_: np.ndarray,  # type: ignore[no-untyped-def]
                   tmp_: np.ndarray) -> list[tuple[int, float]]:
    """Rows o (3, n) moved in place to plane f along d; dn_ = n.d, t_ = distance. Returns the
    non-zero normal components (index, value)."""
    nv = solid.normals[f]
    comps = [(i, float(nv[i])) for i in range(3) if nv[i] != 0.0]
    # distance to the plane: t = (offset - n.o) / (n.d)
    np.multiply(d[comps[0][0]], comps[0][1], out=dn_)
    np.multiply(o[comps[0][0]], comps[0][1], out=t_)
    for i, c in comps[1:]:
        dn_ += np.multiply(d[i], c, out=tmp_)
        t_ += np.multiply(o[i], c, out=tmp_)
    np.subtract(solid.offsets_mm[f], t_, out=t_)
    t_ /= dn_
    for i in range(3):  # hit point
        o[i] += np.multiply(t_, d[i], out=tmp_)
    return comps


def _floor_chunk(solids, faces, n_glass: float, o: np.ndarray, d: np.ndarray,  # type: ignore[no-untyped-def]
                 work: np.ndarray) -> None:
    """Move rows o, d (3, n) in place through ``faces`` (the glass entered on every other face)."""
    dn_, t_, tmp_, k_ = work
    inside = False
    for p, f in faces:
        comps = _move_to_plane(solids[p], f, o, d, dn_, t_, tmp_)
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


def _physics_floor(system, rays: RayBundle, faces: list[tuple[int, int]], chunk: int) -> int:  # type: ignore[no-untyped-def]
    """The floor plus Fresnel, basis rotation, path, rectangle check and final field. Interactions."""
    solids = [solid_of(p) for p in system.prisms]
    n_glass = float(_index("", rays.wavelengths_nm[:1])[0])
    n = rays.n_rays
    m = min(n, chunk)
    rows = np.empty((15, m))
    vecs = np.empty((4, 3, m))
    power, fields, opl = np.zeros(n), np.zeros((3, n), complex), np.zeros(n)
    for start in range(0, n, chunk):
        k = min(n, start + chunk) - start
        work, (o, d, u, s) = rows[:, :k], vecs[:, :, :k]
        np.copyto(o, rays.origins[start:start + k].T)
        np.copyto(d, rays.directions[start:start + k].T)
        assert rays.fields is not None
        np.copyto(u, rays.fields[start:start + k].real.T)
        a, b = work[13], work[14]
        a.fill(1.0)
        b.fill(0.0)
        u, s = _physics_chunk(solids, faces, n_glass, o, d, u, s, a, b, work[:13], opl[start:start + k])
        _field_out(d, u, a, b, work[:2], power[start:start + k], fields[:, start:start + k])
    return n * len(faces)


def _physics_chunk(solids, faces, n_glass: float, o, d, u, s, a, b, work, opl):  # type: ignore[no-untyped-def]
    """Rows (3, n) o, d, u and the Jones pair a, b through ``faces``; returns (u, spare)."""
    dn_, t_, tmp_, c_, s2_, ct_, q2_, root_, ts_, tp_, inv_, cos_, w_ = work
    inside = False
    with np.errstate(divide="ignore", invalid="ignore"):
        for p, f in faces:
            comps = _move_to_plane(solids[p], f, o, d, dn_, t_, tmp_)
            _ = (o[1].min(), o[1].max(), o[0].min(), o[0].max(), dn_.max(), t_.min())  # rectangle check
            opl += np.multiply(t_, n_glass, out=tmp_) if inside else t_
            sign = -1.0 if inside else 1.0
            na = [(i, cn * sign) for i, cn in comps]
            eta = n_glass if inside else 1.0 / n_glass
            n1, n2 = (n_glass, 1.0) if inside else (1.0, n_glass)
            np.multiply(dn_, -sign, out=c_)
            np.multiply(c_, c_, out=s2_)
            np.subtract(1.0, s2_, out=s2_)
            np.multiply(s2_, eta * eta, out=ct_)
            np.subtract(1.0, ct_, out=ct_)
            np.sqrt(ct_, out=ct_)
            # power-normalised Fresnel amplitudes
            q1 = np.multiply(c_, n1, out=tmp_) if inside else c_
            np.multiply(ct_, n2, out=q2_)
            np.multiply(q1, q2_, out=root_)
            np.sqrt(root_, out=root_)
            root_ *= 2.0
            np.add(q1, q2_, out=ts_)
            np.divide(root_, ts_, out=ts_)
            np.multiply(c_, n2, out=tp_)
            tp_ += np.multiply(ct_, n1, out=tmp_) if inside else ct_
            np.divide(root_, tp_, out=tp_)
            if s2_.max() == 0.0:  # every ray at normal incidence: the basis is kept
                a *= ts_
                b *= tp_
                _snell(d, c_, ct_, eta, na, tmp_, root_)
                inside = not inside
                continue
            # s = (na x d) / sin(incidence); cos = u . s; w = (u . na) / sin
            nx = dict(na)
            n0, n1_, n2_ = nx.get(0, 0.0), nx.get(1, 0.0), nx.get(2, 0.0)
            np.multiply(d[1], -n2_, out=s[0])
            np.multiply(d[0], n2_, out=s[1])
            s[1] -= np.multiply(d[2], n0, out=tmp_)
            np.multiply(d[1], n0, out=s[2])
            np.sqrt(s2_, out=inv_)  # (rays near normal incidence take the short form: a lower bound)
            np.divide(1.0, inv_, out=inv_)
            s *= inv_
            np.multiply(u[0], s[0], out=cos_)
            cos_ += np.multiply(u[1], s[1], out=tmp_)
            cos_ += np.multiply(u[2], s[2], out=tmp_)
            np.multiply(u[0], n0, out=w_)
            w_ += np.multiply(u[2], n2_, out=tmp_)
            w_ *= inv_
            np.multiply(a, cos_, out=root_)
            root_ -= np.multiply(b, w_, out=tmp_)
            b *= cos_
            b += np.multiply(a, w_, out=tmp_)
            np.multiply(root_, ts_, out=a)
            b *= tp_
            u, s = s, u
            _snell(d, c_, ct_, eta, na, tmp_, root_)
            inside = not inside
    return u, s


def _snell(d, c, ct, eta: float, na, tmp, tmp2) -> None:  # type: ignore[no-untyped-def]
    """Vector Snell in place: d' = eta d + (eta c - ct) na."""
    np.multiply(c, eta, out=tmp)
    tmp -= ct
    d *= eta
    for i, cn in na:
        d[i] += np.multiply(tmp, cn, out=tmp2)


def _field_out(d, u, a, b, work, power, fields) -> None:  # type: ignore[no-untyped-def]
    """Power a^2 + b^2 and field a u + b (d x u) of every ray."""
    tmp, tmp2 = work
    np.multiply(a, a, out=power)
    power += np.multiply(b, b, out=tmp)
    for i, (j, k) in enumerate(((1, 2), (2, 0), (0, 1))):
        np.multiply(d[j], u[k], out=tmp)
        tmp -= np.multiply(d[k], u[j], out=tmp2)
        tmp *= b
        fields[i] = np.multiply(a, u[i], out=tmp2) + tmp


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
    best = {"full": math.inf, "final": math.inf, "floor": math.inf, "physics": math.inf}
    counts = {"full": 0, "final": 0, "floor": 0, "physics": 0}
    kept = None  # the previous full result stays alive, as in a caller that holds its results
    first: dict[str, float] = {}
    for _ in range(ROUNDS):  # each round: every kernel over all three bundles; the best round counts
        spent = dict.fromkeys(best, 0.0)
        counts = dict.fromkeys(best, 0)
        for b in bundles:
            res, dt = _timed(lambda b=b: trace(system, b, index_of=_index, chunk_size=CHUNK))
            spent["full"] += dt
            counts["full"] += res.interactions
            kept = res
            light, dt = _timed(lambda b=b: trace(system, b, index_of=_index, chunk_size=CHUNK, record="final"))
            spent["final"] += dt
            counts["final"] += light.interactions
            del light
            for name, kernel in (("floor", _floor), ("physics", _physics_floor)):
                count, dt = _timed(lambda b=b, kernel=kernel: kernel(system, b, faces, CHUNK))
                spent[name] += dt
                counts[name] += count
        best = {k: min(best[k], spent[k]) for k in best}
        first = first or dict(spent)
    if counts["final"] != counts["full"]:
        raise RuntimeError(f"bench_trace: record='final' counted {counts['final']} interactions, "
                           f"'full' {counts['full']}")
    rate = {k: counts[k] / best[k] for k in best}
    floor_rate = rate["floor"]
    t_full, t_final = best["full"], best["final"]
    del bundles, res, kept
    return [
        _rate_row("full", rate["full"], floor_rate),
        _rate_row("final", rate["final"], floor_rate),
        {"name": "physics floor interactions/s (floor + Fresnel, s/p rotation, path, field; known faces)",
         "value": rate["physics"], "unit": "1/s", "floor": floor_rate, "ratio": floor_rate / rate["physics"],
         "goal": "informative: the ratio the required physics alone costs in numpy"},
        {"name": "trace interactions/s, record=full, first round (all memory freshly mapped)",
         "value": counts["full"] / first["full"], "unit": "1/s", "floor": counts["floor"] / first["floor"],
         "ratio": (counts["floor"] / first["floor"]) / (counts["full"] / first["full"]), "goal": "informative"},
        {"name": "trace lane (1 = compiled lane in use, 0 = numpy only)", "value": float(_lane.available()),
         "unit": ""},
        {"name": "trace wall time, 3e6 rays, record=full (best round)", "value": t_full, "unit": "s"},
        {"name": "trace wall time, 3e6 rays, record=final (best round)", "value": t_final, "unit": "s"},
        {"name": "trace peak memory, 1e6 rays, record=full", "value": _peak_mb(system, "full"),
         "unit": "MiB", "goal": f"< {GOAL_MEMORY_MB:g}"},
        {"name": "trace peak memory, 1e6 rays, record=final", "value": _peak_mb(system, "final"),
         "unit": "MiB", "goal": f"< {GOAL_MEMORY_MB:g}"},
    ]
