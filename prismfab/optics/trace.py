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
prisms, never over rays.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from prismfab.model import Polarization, System
from prismfab.optics import _kernel as K
from prismfab.optics.solid import ConvexSolid, solid_of

__all__ = [
    "STATUS_ABSORBED",
    "STATUS_EXITED",
    "STATUS_LEAKED",
    "STATUS_TRAPPED",
    "IndexFunction",
    "RayBundle",
    "TraceResult",
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


def default_index_of(material: str, wavelengths_nm: F64) -> ArrayLike:
    """Index from the material catalogue (``prismfab.materials.get(key).n``)."""
    from prismfab import materials

    return materials.get(material).n(wavelengths_nm)  # type: ignore[no-any-return]


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


class _Out:
    """Result arrays of a whole trace, filled chunk by chunk."""

    def __init__(self, n: int, polarized: bool) -> None:
        self.n = n
        self.o = np.zeros((3, n))
        self.d = np.zeros((3, n))
        self.status = np.zeros(n, np.int8)
        self.power = np.zeros(n)
        self.fields = np.zeros((3, n), complex) if polarized else None
        self.opl = np.zeros(n)
        self.n_events = np.zeros(n, np.int16)
        self.events: list[tuple[NDArray[np.int16], NDArray[np.int16], NDArray[np.int8], F64, F64]] = []

    def event(self, k: int) -> tuple[NDArray[np.int16], NDArray[np.int16], NDArray[np.int8], F64, F64]:
        while len(self.events) <= k:
            self.events.append((
                np.full(self.n, -1, np.int16), np.full(self.n, -1, np.int16),
                np.zeros(self.n, np.int8), np.zeros((3, self.n)), np.zeros(self.n),
            ))
        return self.events[k]


class _Chunk:
    """Working state of the live rays of one chunk (component-major arrays)."""

    __slots__ = ("d", "ids", "jones", "last", "medium", "n_cur", "nglass", "o", "opl", "reflect_at", "u")

    def __init__(self, rays: RayBundle, sl: slice, nglass: F64, reflect_at: NDArray[np.int64] | None) -> None:
        self.ids: slice | NDArray[np.int64] = sl
        self.o = np.array(rays.origins[sl].T, order="C")
        self.d = np.array(rays.directions[sl].T, order="C")
        u = polarization_basis(rays.directions[sl])
        self.u = np.ascontiguousarray(u.T)
        n = self.o.shape[1]
        if rays.fields is None:
            one, zero = np.ones(n), np.zeros(n)
            self.jones = [(one, zero), (zero.copy(), one.copy())]
        else:
            e = rays.fields[sl]
            v = np.cross(rays.directions[sl], u)
            a, b = np.einsum("ij,ij->i", e, u), np.einsum("ij,ij->i", e, v)
            if not (a.imag.any() or b.imag.any()):  # real until a phase appears (TIR)
                a, b = a.real.copy(), b.real.copy()
            self.jones = [(a, b)]
        self.last = np.full(n, -1, np.int64)
        self.medium = np.full(n, -1, np.int64)
        self.n_cur = np.ones(n)
        self.opl = np.zeros(n)
        self.nglass = nglass
        self.reflect_at = reflect_at

    @property
    def n(self) -> int:
        return int(self.o.shape[1])

    def keep(self, mask: NDArray[np.bool_]) -> None:
        """Drop the rays where ``mask`` is False."""
        if isinstance(self.ids, slice):
            self.ids = np.arange(self.ids.start, self.ids.stop)
        self.ids = self.ids[mask]
        self.o, self.d, self.u = self.o[:, mask], self.d[:, mask], self.u[:, mask]
        self.jones = [(a[mask], b[mask]) for a, b in self.jones]
        self.medium, self.n_cur, self.opl = self.medium[mask], self.n_cur[mask], self.opl[mask]
        self.last = self.last[mask]
        if self.nglass.shape[1] > 1:
            self.nglass = self.nglass[:, mask]
        if self.reflect_at is not None:
            self.reflect_at = self.reflect_at[mask]

    def finish(self, out: _Out, mask: NDArray[np.bool_] | None, status: int, n_events: int,
               d: F64 | None = None) -> None:
        """Write the final state of the rays in ``mask`` (None = all)."""
        sel: slice | NDArray[np.bool_] = slice(None) if mask is None else mask
        ids = self.ids if mask is None else (
            np.arange(self.ids.start, self.ids.stop)[mask] if isinstance(self.ids, slice) else self.ids[mask])
        d = self.d if d is None else d
        out.o[:, ids] = self.o[:, sel]
        out.d[:, ids] = d[:, sel]
        out.status[ids] = status
        out.opl[ids] = self.opl[sel]
        out.n_events[ids] = n_events
        power = sum(np.abs(a[sel]) ** 2 + np.abs(b[sel]) ** 2 for a, b in self.jones) / len(self.jones)
        out.power[ids] = power
        if out.fields is not None:
            a, b = self.jones[0]
            u = self.u[:, sel]
            v = K.cross(d[:, sel], u)
            out.fields[:, ids] = a[sel] * u + b[sel] * v


def trace(
    system: System, rays: RayBundle, *, max_events: int = 16, index_of: IndexFunction | None = None,
    reflect_at_event: ArrayLike | None = None, chunk_size: int = 32768,
) -> TraceResult:
    """Trace a ray bundle through the prisms of ``system``.

    Args:
        system: prisms at their poses (system frame).
        rays: the rays, system frame.
        max_events: face interactions allowed per ray; a ray still inside after that is TRAPPED.
        index_of: ``index_of(material_key, wavelengths_nm) -> n``; default: the material catalogue.
        reflect_at_event: optional (N,) event numbers (0-based): at that event a ray meeting a
            refracting face takes the Fresnel partial reflection instead of the transmission
            (ghost tracing); -1 for none.
        chunk_size: rays per numpy block (memory/cache trade-off only; results do not depend on it).

    Returns:
        The final state of every ray and its event history.
    """
    index_of = default_index_of if index_of is None else index_of
    solids = tuple(solid_of(p) for p in system.prisms)
    n = rays.n_rays
    out = _Out(n, rays.fields is not None)
    reflect = None if reflect_at_event is None else np.broadcast_to(
        np.asarray(reflect_at_event, np.int64), (n,))
    if n and solids:
        tab = K.build_tables(solids)
        wl = rays.wavelengths_nm
        inverse: NDArray[np.int64] | None = None
        if wl.min() == wl.max():
            uniq = wl[:1]
        else:
            uniq, inverse = np.unique(wl, return_inverse=True)
        ntab = np.array([np.broadcast_to(np.asarray(index_of(s.material, uniq), float), uniq.shape)
                         for s in solids])
        for start in range(0, n, chunk_size):
            sl = slice(start, min(n, start + chunk_size))
            nglass = ntab if inverse is None else ntab[:, inverse[sl]]
            chunk = _Chunk(rays, sl, nglass, None if reflect is None else reflect[sl])
            _trace_chunk(tab, chunk, out, max_events)
    elif n:
        _Chunk(rays, slice(0, n), np.ones((0, 1)), None).finish(out, None, STATUS_EXITED, 0)
    return TraceResult(
        solids=solids, origins=_frozen(out.o.T), directions=_frozen(out.d.T),
        status=_frozen(out.status), power=_frozen(out.power),
        fields=None if out.fields is None else _frozen(out.fields.T), opl_mm=_frozen(out.opl),
        n_events=_frozen(out.n_events), weights=rays.weights,
        event_arrays=tuple(tuple(_frozen(a) for a in e) for e in out.events),  # type: ignore[misc]
    )


def _search(tab: K.Tables, c: _Chunk) -> tuple[F64, NDArray[np.int64], NDArray[np.int64]]:
    """Next face of every live ray: (distance mm, prism or -1, face)."""
    counts = np.bincount(c.medium + 1, minlength=len(tab.solids) + 1)
    if counts[0] == c.n:
        return K.search_air(tab, c.o, c.d, c.last)
    for p in range(len(tab.solids)):
        if counts[p + 1] == c.n:
            t, f = K.search_inside(tab.solids[p], c.o, c.d)
            return t, np.full(c.n, p, np.int64), f
    t, prism, face = np.zeros(c.n), np.full(c.n, -1, np.int64), np.zeros(c.n, np.int64)
    for m in np.flatnonzero(counts):
        idx = np.flatnonzero(c.medium == m - 1)
        if m == 0:
            t[idx], prism[idx], face[idx] = K.search_air(tab, c.o[:, idx], c.d[:, idx], c.last[idx])
        else:
            t[idx], face[idx] = K.search_inside(tab.solids[m - 1], c.o[:, idx], c.d[:, idx])
            prism[idx] = m - 1
    return t, prism, face


def _trace_chunk(tab: K.Tables, c: _Chunk, out: _Out, max_events: int) -> None:
    """Trace the live rays of one chunk to the end."""
    for k in range(max_events + 1):
        if c.n == 0:
            return
        t, prism, face = _search(tab, c)
        gone = prism < 0
        if gone.all():
            c.finish(out, None, STATUS_EXITED, k)
            return
        if gone.any():
            c.finish(out, gone, STATUS_EXITED, k)
            keep = ~gone
            c.keep(keep)
            t, prism, face = t[keep], prism[keep], face[keep]
            if c.n == 0:
                return
        if k == max_events:
            c.finish(out, None, STATUS_TRAPPED, k)
            return
        c.o += t * c.d
        c.opl += c.n_cur * t
        _interact(tab, c, out, k, prism, face)


def _interact(tab: K.Tables, c: _Chunk, out: _Out, k: int, prism: NDArray[np.int64],
              face: NDArray[np.int64]) -> None:
    """Apply the face at event ``k`` to every live ray (all are on their hit face)."""
    g = tab.face_base[prism] + face
    uniform = g.min() == g.max() and c.medium.min() == c.medium.max()
    if uniform:
        g0, p0 = int(g[0]), int(prism[0])
        entering = bool(c.medium[0] < 0)
        na = tab.g_normals[g0][:, None] * (1.0 if entering else -1.0)
        role: NDArray[np.int64] | int = int(tab.g_roles[g0])
        n2: F64 | float = c.nglass[p0] if entering else 1.0
    else:
        ent = c.medium < 0
        na = tab.g_normals[g].T * np.where(ent, 1.0, -1.0)
        role = tab.g_roles[g]
        glass = c.nglass[prism, 0] if c.nglass.shape[1] == 1 else c.nglass[prism, np.arange(c.n)]
        n2 = np.where(ent, glass, 1.0)
    d = c.d
    cos_i = -K.dot(d, na)
    eta = c.n_cur / n2
    kk = 1.0 - eta * eta * (1.0 - cos_i * cos_i)
    partial = None if c.reflect_at is None else c.reflect_at == k
    reflect, ts, tp, kind = K.coefficients(role, cos_i, kk, c.n_cur, n2, partial)
    ev = out.event(k)
    ev[0][c.ids], ev[1][c.ids], ev[2][c.ids] = prism, face, kind
    ev[3][:, c.ids], ev[4][c.ids] = c.o, cos_i
    if not reflect.any():
        d_new = eta * d + (eta * cos_i - np.sqrt(np.maximum(kk, 0.0))) * na
    elif reflect.all():
        d_new = d + 2.0 * cos_i * na
    else:
        d_new = np.where(reflect, d + 2.0 * cos_i * na,
                         eta * d + (eta * cos_i - np.sqrt(np.maximum(kk, 0.0))) * na)
    stop = None
    if np.ndim(kind):
        stop = (kind == EVENT_ABSORB) | (kind == EVENT_LEAK)
        if stop.any():
            absorbed = kind == EVENT_ABSORB
            c.finish(out, absorbed, STATUS_ABSORBED, k + 1)
            leaked = kind == EVENT_LEAK
            if leaked.any():
                _leak(c, out, leaked, d_new, na, ts, tp, k + 1)
        else:
            stop = None
    elif kind == EVENT_ABSORB:
        c.finish(out, None, STATUS_ABSORBED, k + 1)
        c.keep(np.zeros(c.n, bool))
        return
    s, rotated = K.rotate_jones(c.u, d, na, c.jones)
    c.jones = [(ts * es, -tp * ep) for es, ep in rotated]
    c.u = s
    c.d = d_new
    _update_medium(c, reflect, prism, n2)
    if stop is not None:
        c.keep(~stop)


def _leak(c: _Chunk, out: _Out, leaked: NDArray[np.bool_], d_new: F64, na: F64,
          ts: NDArray[np.complex128], tp: NDArray[np.complex128], n_events: int) -> None:
    """Finish rays that leave through a TIR face, carrying the transmitted field."""
    s, rotated = K.rotate_jones(c.u, c.d, na, c.jones)
    saved = c.jones, c.u
    c.jones = [(ts * es, -tp * ep) for es, ep in rotated]
    c.u = s
    c.finish(out, leaked, STATUS_LEAKED, n_events, d=d_new)
    c.jones, c.u = saved


def _update_medium(c: _Chunk, reflect: NDArray[np.bool_], prism: NDArray[np.int64], n2: F64 | float) -> None:
    """Rays that refracted change medium (air <-> prism)."""
    crossed = ~reflect
    if not crossed.any():
        return
    entering = c.medium < 0
    medium = np.where(entering, prism, -1)
    n_cur = np.where(entering, n2, 1.0)
    last = np.where(entering, -1, c.medium)
    if crossed.all():
        c.medium, c.n_cur, c.last = medium, n_cur, last
    else:
        c.medium = np.where(crossed, medium, c.medium)
        c.n_cur = np.where(crossed, n_cur, c.n_cur)
        c.last = np.where(crossed, last, c.last)
