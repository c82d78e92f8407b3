"""Vectorised exact 3D ray trace through a system of convex prisms.

Rays live in air (index 1, the reference medium of the material indices) until they enter a
prism; inside, the next face is the nearest exit plane of the convex solid. At every face:
vector Snell refraction with Fresnel amplitudes (ENTRY, EXIT, ENTRY_EXIT faces; total internal
reflection beyond the critical angle, reported as an event), total internal reflection (TIR
faces; if it fails the ray leaks out and stops), mirror reflection (MIRROR faces), absorption
(GROUND faces and the two end faces). The field is carried per ray as a Jones pair ``(a, b)`` in
a basis ``(u, d x u)`` that is re-expressed in each face's s/p basis, so polarisation is exact
for skew rays; amplitudes are power-normalised, so ``|a|^2 + |b|^2`` is the carried power.

Rays are processed in chunks (cache-sized numpy rows); the loops are over chunks, events and
prisms, never over rays. At each event the chunk's next face is predicted and every ray's hit
verified, with a full search only for rays that fail; both routes give bit-identical results
(see ``_engine``). Coated faces are traced with their specified reflectance (see
``_kernel.face_reflectance``).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from prismfab.model import Polarization, System
from prismfab.optics import _kernel as K
from prismfab.optics._engine import Predictor, run_chunk
from prismfab.optics._state import Out, Pool, Rays
from prismfab.optics.solid import ConvexSolid, solid_of

__all__ = [
    "STATUS_ABSORBED",
    "STATUS_EXITED",
    "STATUS_LEAKED",
    "STATUS_TRAPPED",
    "IndexFunction",
    "RayBundle",
    "TraceResult",
    "catalogue_index",
    "default_index_of",
    "trace",
]

IndexFunction = Callable[[str, NDArray[np.float64]], "ArrayLike"]
"""``index_of(material_key, wavelengths_nm) -> n`` (refractive index relative to air)."""

STATUS_EXITED = 0  # left into air with nothing further in its way
STATUS_ABSORBED = 1  # stopped on a ground face or an end face
STATUS_LEAKED = 2  # a TIR face did not reflect totally
STATUS_TRAPPED = 3  # still bouncing after max_events

EVENT_NONE = K.EVENT_NONE
EVENT_REFRACT = K.EVENT_REFRACT
EVENT_TIR = K.EVENT_TIR
EVENT_MIRROR = K.EVENT_MIRROR
EVENT_ABSORB = K.EVENT_ABSORB
EVENT_LEAK = K.EVENT_LEAK
EVENT_PARTIAL = K.EVENT_PARTIAL

F64 = NDArray[np.float64]

CHUNK_SIZE = 32768
"""Default rays per chunk: the working rows of a chunk stay in the core's cache."""

RECORD_MODES = ("full", "final")
"""``trace(record=...)``: the event history of every ray, or only the final state of each ray."""


def default_index_of(material: str, wavelengths_nm: F64) -> ArrayLike:
    """Index from the shipped material catalogue (``prismfab.materials.get(key).n``)."""
    from prismfab import materials

    return materials.get(material).n(wavelengths_nm)  # type: ignore[no-any-return]


def catalogue_index(materials_file: str = "") -> IndexFunction:
    """``index_of`` that looks materials up in the shipped catalogue extended by ``materials_file``.

    Args:
        materials_file: a user catalogue file (``System.materials_file``), or "" for none.
    """
    if not materials_file:
        return default_index_of

    def index_of(material: str, wavelengths_nm: F64) -> ArrayLike:
        from prismfab import materials

        return materials.get(material, catalogue_file=materials_file).n(wavelengths_nm)  # type: ignore[no-any-return]

    return index_of


def _frozen(a: NDArray[np.generic]) -> NDArray[np.generic]:
    a.setflags(write=False)
    return a


def polarization_basis(directions: F64) -> F64:
    """Unit vectors ``u`` (N, 3) perpendicular to each direction and in the x-z plane.

    ``u = unit(y x d)``; for the default beam along +z, ``u = +x`` (the p direction) and
    ``d x u = +y`` (the s direction). Rays along y fall back to ``unit(x x d)``.
    """
    d = np.asarray(directions, float)
    u = np.stack([d[:, 2], np.zeros(len(d)), -d[:, 0]], axis=1)
    norm = np.linalg.norm(u, axis=1)
    bad = norm < 1e-12
    if bad.any():
        u[bad] = np.stack([np.zeros(bad.sum()), -d[bad, 2], d[bad, 1]], axis=1)
        norm[bad] = np.linalg.norm(u[bad], axis=1)
    return u / norm[:, None]


@dataclass(frozen=True, slots=True)
class RayBundle:
    """Rays to trace, in the system frame. Arrays are read-only.

    Args:
        origins: start points, shape (N, 3), mm.
        directions: unit directions, shape (N, 3).
        wavelengths_nm: vacuum wavelength of each ray, shape (N,), nm.
        fields: unit complex electric-field vectors, shape (N, 3), perpendicular to the
            directions; None for unpolarised light (traced as two orthogonal states and averaged).
        weights: relative power of each ray, shape (N,) (carried through, not used by the trace).
    """

    origins: F64
    directions: F64
    wavelengths_nm: F64
    fields: NDArray[np.complex128] | None
    weights: F64

    @classmethod
    def create(
        cls, origins: ArrayLike, directions: ArrayLike, wavelengths_nm: ArrayLike, *,
        polarization: Polarization | ArrayLike | None = Polarization.P,
        weights: ArrayLike | None = None,
    ) -> RayBundle:
        """Build a bundle, normalising directions and broadcasting scalars.

        Args:
            origins, directions: (N, 3) or (3,) arrays, system frame (mm; any length).
            wavelengths_nm: scalar or (N,), nm.
            polarization: ``Polarization.P`` (field in the x-z plane of incidence),
                ``Polarization.S`` (field along the out-of-plane axis), ``UNPOLARIZED`` or None,
                or explicit complex field vectors (N, 3).
            weights: scalar or (N,); default 1.

        Raises:
            ValueError: shapes disagree or a direction is zero.
        """
        o = np.atleast_2d(np.asarray(origins, float))
        d = np.atleast_2d(np.asarray(directions, float))
        n = max(len(o), len(d), np.size(wavelengths_nm))
        o = np.array(np.broadcast_to(o, (n, 3)))
        norm = np.linalg.norm(d, axis=1, keepdims=True)
        if np.any(norm == 0.0):
            raise ValueError("RayBundle.directions: a direction is zero; give each ray a non-zero vector")
        d = np.array(np.broadcast_to(d / norm, (n, 3)))
        wl = np.array(np.broadcast_to(np.asarray(wavelengths_nm, float), (n,)))
        w = np.ones(n) if weights is None else np.array(np.broadcast_to(np.asarray(weights, float), (n,)))
        fields: NDArray[np.complex128] | None
        if polarization is None or polarization is Polarization.UNPOLARIZED:
            fields = None
        elif isinstance(polarization, Polarization):
            u = polarization_basis(d)
            fields = (u if polarization is Polarization.P else np.cross(d, u)).astype(complex)
        else:
            e = np.array(np.broadcast_to(np.asarray(polarization, complex), (n, 3)))
            e -= np.sum(e * d, axis=1, keepdims=True) * d
            fields = e / np.linalg.norm(e, axis=1, keepdims=True)
        return cls(o, d, wl, fields, w)

    def __post_init__(self) -> None:
        n = self.origins.shape[0]
        if self.origins.shape != (n, 3) or self.directions.shape != (n, 3) or \
                self.wavelengths_nm.shape != (n,) or self.weights.shape != (n,):
            raise ValueError("RayBundle: origins/directions must be (N, 3) and wavelengths_nm/weights (N,)")
        if self.fields is not None and self.fields.shape != (n, 3):
            raise ValueError("RayBundle.fields must be (N, 3) complex or None (unpolarised)")
        for a in (self.origins, self.directions, self.wavelengths_nm, self.weights, self.fields):
            if a is not None:
                a.setflags(write=False)

    @property
    def n_rays(self) -> int:
        """Number of rays."""
        return int(self.origins.shape[0])


@dataclass(frozen=True, slots=True)
class TraceResult:
    """Where every ray ended and what it met. Arrays are read-only.

    Args:
        solids: the prisms as traced (system-frame planes), in ``system.prisms`` order.
        origins: last point of each ray (its last face hit, or its start), (N, 3), mm.
        directions: final unit directions (after the last event), (N, 3).
        status: ``STATUS_*`` code per ray, (N,).
        power: power fraction carried at the end (transmitted power for exited rays), (N,).
        fields: final unit-less field vectors (N, 3) scaled by the amplitude; None if unpolarised.
        opl_mm: optical path length from the origin to the last point, (N,), mm.
        n_events: events recorded per ray, (N,).
        weights: the input weights, (N,).
        event_arrays: per event k, (prism, face, kind, points (3, N), cos_incidence) arrays of
            length N; prism = -1 where a ray had no event k. Use the ``event_*`` properties.
            Empty when traced with ``record="final"`` (the ``event_*`` properties are then
            (N, 0)); ``n_events`` and ``interactions`` are kept in both modes.
        record: the result mode the trace ran in, ``"full"`` or ``"final"``.
    """

    solids: tuple[ConvexSolid, ...]
    origins: F64
    directions: F64
    status: NDArray[np.int8]
    power: F64
    fields: NDArray[np.complex128] | None
    opl_mm: F64
    n_events: NDArray[np.int16]
    weights: F64
    event_arrays: tuple[tuple[NDArray[np.int16], NDArray[np.int16], NDArray[np.int8], F64, F64], ...]
    record: str = "full"

    @property
    def event_prism(self) -> NDArray[np.int16]:
        """Prism index of each event, (N, E); -1 for no event."""
        return self._stack(0)

    @property
    def event_face(self) -> NDArray[np.int16]:
        """Face index of each event, (N, E) (side faces first, then BOTTOM, TOP); -1 for none."""
        return self._stack(1)

    @property
    def event_kind(self) -> NDArray[np.int8]:
        """``EVENT_*`` code of each event, (N, E)."""
        return self._stack(2)

    @property
    def event_points(self) -> F64:
        """Hit points, (N, E, 3), system frame, mm (zeros where no event)."""
        n = self.origins.shape[0]
        if not self.event_arrays:
            return np.zeros((n, 0, 3))
        return np.stack([e[3].T for e in self.event_arrays], axis=1)

    @property
    def event_aoi_rad(self) -> F64:
        """Angle of incidence at each event, on the incoming side, (N, E), rad."""
        return np.arccos(np.clip(self._stack(4), -1.0, 1.0))

    def _stack(self, i: int) -> NDArray[np.generic]:
        n = self.origins.shape[0]
        if not self.event_arrays:
            return np.zeros((n, 0))
        return np.stack([e[i] for e in self.event_arrays], axis=1)

    @property
    def exited(self) -> NDArray[np.bool_]:
        """True for rays that left the system into air."""
        return self.status == STATUS_EXITED

    @property
    def interactions(self) -> int:
        """Total number of ray-face interactions traced."""
        return int(self.n_events.sum())


def trace(
    system: System, rays: RayBundle, *, max_events: int = 16, index_of: IndexFunction | None = None,
    reflect_at_event: ArrayLike | None = None, chunk_size: int = CHUNK_SIZE, predict: bool = True,
    record: str = "full",
) -> TraceResult:
    """Trace a ray bundle through the prisms of ``system``.

    Args:
        system: prisms at their poses (system frame).
        rays: the rays, system frame.
        max_events: face interactions allowed per ray; a ray still inside after that is TRAPPED.
        index_of: ``index_of(material_key, wavelengths_nm) -> n``; default: the shipped material
            catalogue extended by ``system.materials_file``.
        reflect_at_event: optional (N,) event numbers (0-based): at that event a ray meeting a
            refracting face takes the partial reflection (Fresnel, or the coating's reflectance)
            instead of the transmission (ghost tracing); -1 for none. An (N, K) array gives up
            to K such events per ray (higher-order ghosts).
        chunk_size: rays per numpy block (memory/cache trade-off only; results do not depend on it).
        predict: False sends every ray through the full next-face search (a check of the
            prediction; the results are bit-identical either way).
        record: ``"full"`` keeps the event history of every ray (prism, face, kind, hit point
            and angle of incidence per event: what measurement, ghost and sizing code read);
            ``"final"`` keeps only the final state (points, directions, status, transmitted
            power, fields, optical path, event count). The physics is the same in both modes
            (next-face search, Snell, total internal reflection, absorption, Fresnel or coating
            amplitudes with the s/p basis rotated per face), and so are the final arrays, bit for
            bit; ``"final"`` works in chunk-sized buffers reused from chunk to chunk, so its
            memory does not grow with the number of events.

    Returns:
        The final state of every ray and (``record="full"``) its event history.

    Raises:
        ValueError: ``chunk_size`` < 1 or an unknown ``record``.
    """
    if chunk_size < 1:
        raise ValueError(f"trace: chunk_size must be >= 1, got {chunk_size}")
    if record not in RECORD_MODES:
        raise ValueError(f"trace: record must be one of {RECORD_MODES}, got {record!r}")
    index_of = catalogue_index(system.materials_file) if index_of is None else index_of
    solids = tuple(solid_of(p) for p in system.prisms)
    n = rays.n_rays
    out = Out(n, rays.fields is not None)
    reflect = None
    if reflect_at_event is not None:
        given = np.asarray(reflect_at_event, np.int64)
        if given.ndim == 2:
            if given.shape[0] != n:
                raise ValueError(f"trace: reflect_at_event has {given.shape[0]} rows for {n} rays")
            reflect = given
        else:
            reflect = np.broadcast_to(given, (n,))
    if n and solids:
        tab = K.build_tables(solids, system.prisms)
        wl = rays.wavelengths_nm
        inverse: NDArray[np.int64] | None = None
        if wl.min() == wl.max():
            uniq = wl[:1]
        else:
            uniq, inverse = np.unique(wl, return_inverse=True)
        ntab = np.array([np.broadcast_to(np.asarray(index_of(s.material, uniq), float), uniq.shape)
                         for s in solids])
        predictor = Predictor(enabled=predict)
        pool = Pool(min(n, chunk_size))
        light = record == "final"
        local = Out(min(n, chunk_size), rays.fields is not None, history=False) if light else None
        for start in range(0, n, chunk_size):
            sl = slice(start, min(n, start + chunk_size))
            nglass = ntab
            if inverse is not None:
                inv = inverse[sl]
                nglass = ntab[:, inv[:1]] if inv.min() == inv.max() else ntab[:, inv]
            chunk = Rays.start(rays.origins, rays.directions, rays.fields, sl, nglass,
                               None if reflect is None else reflect[sl], pool, local=light)
            if local is not None:
                local.bind(out, start, sl.stop - start)
            else:
                out.begin_chunk(start, sl.stop)
            run_chunk(tab, chunk, out if local is None else local, max_events, predictor)
        out.close()
    elif n:
        Rays.start(rays.origins, rays.directions, rays.fields, slice(0, n), np.ones((0, 1)),
                   None).finish(out, None, STATUS_EXITED, 0)
    return TraceResult(
        solids=solids, origins=_frozen(out.o.T), directions=_frozen(out.d.T),
        status=_frozen(out.status), power=_frozen(out.power),
        fields=None if out.fields is None else _frozen(out.fields.T), opl_mm=_frozen(out.opl),
        n_events=_frozen(out.n_events), weights=rays.weights,
        event_arrays=tuple(tuple(_frozen(a) for a in e) for e in out.events),  # type: ignore[misc]
        record=record,
    )
