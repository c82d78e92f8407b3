"""Working state of the live rays of one chunk, and the result arrays of a whole trace.

Internal module. Ray state is component-major (``(3, n)`` rows), so every component is one
contiguous row. A chunk's hit points are written straight into the event arrays of the result
and the chunk's ``o`` is a view of them while the chunk is unbroken (``ids`` a slice), so an
event costs no copy of the points.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from prismfab.optics import _lane

F64 = NDArray[np.float64]
I64 = NDArray[np.int64]
Jones = list[tuple[NDArray[np.generic], NDArray[np.generic]]]
EventArrays = tuple[NDArray[np.int16], NDArray[np.int16], NDArray[np.int8], F64, F64]


class Out:
    """Result arrays of a whole trace (or of one chunk), filled chunk by chunk.

    ``history=False`` (the ``record="final"`` mode): the event arrays are scratch rows that
    the engine writes hit points and cosines into and nobody reads; they are kept (never popped)
    so one chunk-sized ``Out`` serves every chunk without allocating again, and its final-state
    arrays are views into the whole result (see ``bind``).
    """

    def __init__(self, n: int, polarized: bool, *, history: bool = True) -> None:
        self.n = n
        self.history = history
        self.o = np.zeros((3, n))
        self.d = np.zeros((3, n))
        self.status = np.zeros(n, np.int8)
        self.power = np.zeros(n)
        self.fields = np.zeros((3, n), complex) if polarized else None
        self.opl = np.zeros(n)
        self.n_events = np.zeros(n, np.int16)
        self.events: list[EventArrays] = []
        self._ready: list[int] = []  # per event: rays below this index hold a record or the default
        self._chunk = (0, n)

    def begin_chunk(self, start: int, stop: int) -> None:
        """Rays ``start..stop`` are traced next (see ``event``)."""
        self._chunk = (start, stop)

    def event(self, k: int, *, unbroken: bool = False) -> EventArrays:
        """The arrays of event ``k`` (prism -1, face -1, kind 0, zero point and cosine = no event).

        Arrays are created on first use without filling; the no-event values are written lazily,
        chunk by chunk, just before the chunk writes its own records (``close`` does the rest).
        ``unbroken``: the caller writes event ``k`` of every ray of the current chunk itself, so
        only the rays before the chunk need the no-event values.
        """
        while len(self.events) <= k:
            n = self.n
            small = np.empty(5 * n, np.uint8)  # prism, face, kind in one block (large pages apply)
            self.events.append((
                small[:2 * n].view(np.int16), small[2 * n:4 * n].view(np.int16), small[4 * n:].view(np.int8),
                np.empty((3, n)), np.empty(n),
            ))
            self._ready.append(0)
        ev = self.events[k]
        if self.history:
            start, stop = self._chunk
            upto = start if unbroken else stop
            if self._ready[k] < upto:
                clear_event(ev, slice(self._ready[k], upto))
            self._ready[k] = max(self._ready[k], stop)
        return ev

    def drop_event(self) -> None:
        """Forget the last event arrays (created by a chunk none of whose rays had that event)."""
        self.events.pop()
        self._ready.pop()

    def close(self) -> None:
        """Write the no-event values of every ray no chunk has written yet."""
        if self.history:
            for k, ev in enumerate(self.events):
                if self._ready[k] < self.n:
                    clear_event(ev, slice(self._ready[k], self.n))
                    self._ready[k] = self.n

    def bind(self, dest: Out, start: int, count: int) -> None:
        """Make the final-state arrays views of rays ``start..start+count`` of ``dest``.

        The chunk's rays (numbered from 0) then write their final state straight into the
        result of the whole trace, while the event arrays stay this object's own scratch rows.
        """
        sl = slice(start, start + count)
        self.o, self.d, self.opl = dest.o[:, sl], dest.d[:, sl], dest.opl[sl]
        self.status, self.power, self.n_events = dest.status[sl], dest.power[sl], dest.n_events[sl]
        self.fields = None if dest.fields is None else dest.fields[:, sl]


def clear_event(ev: EventArrays, ids: slice | I64) -> None:
    """The record of rays that had no such event: prism and face -1, kind 0, zeros."""
    ev[0][ids], ev[1][ids], ev[2][ids], ev[4][ids] = -1, -1, 0, 0.0
    ev[3][:, ids] = 0.0


def basis_rows(d: F64, out: F64 | None = None) -> F64:
    """``unit(y x d)`` per ray for (3, n) directions; rays along y use ``unit(x x d)``."""
    u = np.empty_like(d) if out is None else out
    u[0] = d[2]
    u[1] = 0.0
    np.negative(d[0], out=u[2])
    norm = d[2] * d[2]
    norm += d[0] * d[0]
    np.sqrt(norm, out=norm)
    bad = norm < 1e-12
    if bad.any():
        u[0, bad], u[1, bad], u[2, bad] = 0.0, -d[2, bad], d[1, bad]
        norm[bad] = np.hypot(d[2, bad], d[1, bad])
    u /= norm
    return u


class Rays:
    """Live rays of one chunk (or a gathered group of them).

    Attributes:
        ids: positions in the whole bundle (a slice while the chunk is unbroken).
        o, d, u: points, unit directions, polarisation basis vectors (3, n); the field of Jones
            pair (a, b) is ``a u + b (d x u)``.
        jones: one (a, b) pair per traced polarisation state (two for unpolarised light).
        medium: -1 in air, else the prism index; last: the prism just left (-1 none).
        opl: optical path so far, mm.
        nglass: (P, 1) indices of every prism when the chunk has one wavelength, else (P, n).
        reflect_at: event number of the forced partial reflection per ray ((n,), or (n, K) for
            several), or None.
        uniform: (medium, last) when every ray is known to share them, else None (unknown).
    """

    __slots__ = ("d", "ids", "jones", "last", "medium", "nglass", "o", "opl", "pool", "reflect_at", "u",
                 "uniform")

    def __init__(self, *, ids: slice | I64, o: F64, d: F64, u: F64, jones: Jones, medium: I64,
                 last: I64, opl: F64, nglass: F64, reflect_at: I64 | None, pool: Pool | None = None,
                 uniform: tuple[int, int] | None = None) -> None:
        self.ids, self.o, self.d, self.u, self.jones = ids, o, d, u, jones
        self.medium, self.last, self.opl, self.nglass, self.reflect_at = medium, last, opl, nglass, reflect_at
        self.pool = Pool(o.shape[1]) if pool is None else pool
        self.uniform = uniform

    @classmethod
    def start(cls, origins: F64, directions: F64, fields: NDArray[np.complex128] | None, sl: slice,
              nglass: F64, reflect_at: I64 | None, pool: Pool | None = None, *, local: bool = False) -> Rays:
        """State of bundle rows ``sl`` before their first event (``pool``: work rows to reuse).

        ``local``: number the rays from 0 (their results go to a chunk-sized ``Out``).
        """
        n = sl.stop - sl.start
        pool = Pool(n) if pool is None else pool
        o = pool.get("o", 3, n)
        d = pool.fresh("d", None, 3, n)
        u = pool.fresh("u", None, 3, n)
        e = None if fields is None else fields[sl]
        jones = _start_jones(origins[sl], directions[sl], e, o, d, u, pool)
        medium = pool.get("medium", n=n, dtype=np.int64)
        medium.fill(-1)
        last = pool.get("last", n=n, dtype=np.int64)
        last.fill(-1)
        opl = pool.get("opl", n=n)
        opl.fill(0.0)
        ids = slice(0, n) if local else sl
        return cls(ids=ids, o=o, d=d, u=u, jones=jones, medium=medium, last=last, opl=opl,
                   nglass=nglass, reflect_at=reflect_at, pool=pool, uniform=(-1, -1))

    def known_uniform(self) -> tuple[int, int] | None:
        """(medium, last) when all rays share them (cached in ``uniform``), else None."""
        if self.uniform is None and self.n and self.medium.min() == self.medium.max() \
                and self.last.min() == self.last.max():
            self.uniform = (int(self.medium[0]), int(self.last[0]))
        return self.uniform

    def crossed(self, prism: int, *, entering: bool) -> None:
        """Every ray has just crossed a face of ``prism``: into it, or out of it into air."""
        if entering:
            self.medium.fill(prism)
            self.last.fill(-1)
            self.uniform = (prism, -1)
        else:
            self.medium.fill(-1)
            self.last.fill(prism)
            self.uniform = (-1, prism)

    @property
    def n(self) -> int:
        """Number of live rays."""
        return int(self.o.shape[1])

    def global_ids(self, idx: I64 | NDArray[np.bool_] | None = None) -> slice | I64:
        """Bundle positions of all rays (None) or of the selected ones."""
        if idx is None:
            return self.ids
        ids = np.arange(self.ids.start, self.ids.stop) if isinstance(self.ids, slice) else self.ids
        return ids[idx]

    def take(self, idx: I64 | NDArray[np.bool_]) -> Rays:
        """A copy of the selected rays (index array or boolean mask)."""
        return Rays(
            ids=self.global_ids(idx), o=self.o[:, idx], d=self.d[:, idx], u=self.u[:, idx],
            jones=[(a[idx], b[idx]) for a, b in self.jones], medium=self.medium[idx],
            last=self.last[idx], opl=self.opl[idx],
            nglass=self.nglass if self.nglass.shape[1] == 1 else self.nglass[:, idx],
            reflect_at=None if self.reflect_at is None else self.reflect_at[idx], uniform=self.uniform,
        )

    def put(self, idx: I64, sub: Rays) -> None:
        """Write the state of ``sub`` (taken at ``idx``) back into these rays."""
        self.o[:, idx], self.d[:, idx], self.u[:, idx] = sub.o, sub.d, sub.u
        self.medium[idx], self.last[idx], self.opl[idx] = sub.medium, sub.last, sub.opl
        if sub.uniform != self.uniform:
            self.uniform = None
        jones = []
        for (a, b), (sa, sb) in zip(self.jones, sub.jones, strict=True):
            if np.iscomplexobj(sa) and not np.iscomplexobj(a):
                a, b = a.astype(complex), b.astype(complex)
            a[idx], b[idx] = sa, sb
            jones.append((a, b))
        self.jones = jones

    def keep(self, mask: NDArray[np.bool_]) -> None:
        """Drop the rays where ``mask`` is False."""
        sub = self.take(mask)
        for name in self.__slots__:
            setattr(self, name, getattr(sub, name))

    def power(self, sel: slice | NDArray[np.bool_] | I64 = slice(None)) -> F64:
        """Carried power of the selected rays (mean over the polarisation states)."""
        total = None
        for a, b in self.jones:
            if np.iscomplexobj(a) or np.iscomplexobj(b):
                p = np.abs(a[sel]) ** 2 + np.abs(b[sel]) ** 2
            else:
                p = a[sel] * a[sel] + b[sel] * b[sel]
            total = p if total is None else total + p
        assert total is not None
        return total if len(self.jones) == 1 else total / len(self.jones)

    def finish(self, out: Out, sel: NDArray[np.bool_] | None, status: int, n_events: int,
               d: F64 | None = None) -> None:
        """Write the final state of the selected rays (None = all) into ``out``."""
        s: slice | NDArray[np.bool_] = slice(None) if sel is None else sel
        ids = self.global_ids(sel)
        d = self.d if d is None else d
        out.status[ids] = status
        out.n_events[ids] = n_events
        real = len(self.jones) == 1 and not any(np.iscomplexobj(x) for x in self.jones[0])
        whole = sel is None and isinstance(ids, slice) and real and out.fields is not None
        if whole and self._finish_lane(out, ids, d):  # type: ignore[arg-type]
            return
        out.o[:, ids] = self.o[:, s]
        out.d[:, ids] = d[:, s]
        out.opl[ids] = self.opl[s]
        if whole:
            self._finish_linear(out, ids, d)  # type: ignore[arg-type]
            return
        out.power[ids] = self.power(s)
        if out.fields is not None:
            a, b = self.jones[0]
            u, dd = self.u[:, s], d[:, s]
            v = _cross_rows(dd, u)
            if np.iscomplexobj(a) or np.iscomplexobj(b) or not isinstance(ids, slice):
                out.fields[:, ids] = a[s] * u + b[s] * v
            else:  # write the real part in place (the imaginary part stays zero)
                target = out.fields[:, ids].real
                for i in range(3):
                    np.multiply(a, u[i], out=target[i])
                    target[i] += b * v[i]

    def _finish_lane(self, out: Out, ids: slice, d: F64) -> bool:
        """``_finish_linear`` with the points, directions and path, in one compiled pass.

        False (nothing written) when the lane is off or cannot take the rows.
        """
        (a, b), u = self.jones[0], self.u
        if not (_lane.available() and all(_lane.block_ok(x) for x in (self.o, d, u))
                and all(_lane.row_ok(x) for x in (a, b, self.opl))):
            return False
        assert out.fields is not None
        _lane.finish(self.o, d, u, a, b, self.opl, out.o[:, ids], out.d[:, ids], out.opl[ids],
                     out.power[ids], out.fields[:, ids])
        return True

    def _finish_linear(self, out: Out, ids: slice, d: F64) -> None:
        """Power and field of all rays with one real Jones pair, straight into ``out``.

        The same arithmetic as the general case (``a a + b b``; ``a u + b (d x u)`` with the
        cross product taken component by component), in work rows instead of temporaries.
        """
        (a, b), u, n = self.jones[0], self.u, self.n
        assert out.fields is not None
        tmp, tmp2 = self.pool.get("tmp", n=n), self.pool.get("tmp2", n=n)
        power = out.power[ids]
        np.multiply(a, a, out=power)
        power += np.multiply(b, b, out=tmp)
        field = self.pool.get("field", 3, n)
        for i, (j, k) in enumerate(((1, 2), (2, 0), (0, 1))):
            np.multiply(d[j], u[k], out=tmp)
            tmp -= np.multiply(d[k], u[j], out=tmp2)
            tmp *= b
            np.multiply(a, u[i], out=field[i])
            field[i] += tmp
        out.fields[:, ids] = field


def _start_jones(origins: F64, directions: F64, e: NDArray[np.complex128] | None, o: F64, d: F64,
                 u: F64, pool: Pool) -> Jones:
    """Fill component rows ``o``, ``d`` and the basis ``u`` of bundle rows; their Jones pairs.

    Unpolarised (``e`` None): two orthogonal states in the basis ``unit(y x d)``. Real fields: the
    field's own direction is the basis, ``(|e|, 0)`` (compiled in one pass where the lane is
    built). Fields with a phase, or zero: projected on ``unit(y x d)`` and ``d x u``.
    """
    jones: Jones = []
    if e is not None and _lane.available() and _lane_start(origins, directions, e, o, d, u, jones, pool):
        return jones
    np.copyto(o, origins.T)
    np.copyto(d, directions.T)
    n = o.shape[1]
    if e is None:
        basis_rows(d, u)
        for m in range(2):
            jones.append((pool.fresh(f"a{m}", None, n=n), pool.fresh(f"b{m}", None, n=n)))
            jones[m][0].fill(1.0 - m)
            jones[m][1].fill(float(m))
    elif _has_phase(e) or not _linear_start(e, u, jones, pool):
        basis_rows(d, u)
        v = _cross_rows(d, u)
        a = e[:, 0] * u[0] + e[:, 1] * u[1] + e[:, 2] * u[2]
        b = e[:, 0] * v[0] + e[:, 1] * v[1] + e[:, 2] * v[2]
        jones.append((a, b))
    return jones


def _lane_start(origins: F64, directions: F64, e: NDArray[np.complex128], o: F64, d: F64, u: F64,
                jones: Jones, pool: Pool) -> bool:
    """The compiled start of a chunk with real fields (same numbers as ``_linear_start``).

    True when done (``jones`` holds the pair). False when the lane cannot take the rows, or a
    field has a phase or is zero; ``o`` and ``d`` may then be filled already, which is harmless.
    """
    if not (origins.flags.c_contiguous and directions.flags.c_contiguous and e.flags.c_contiguous
            and origins.dtype == directions.dtype == np.float64 and e.dtype == np.complex128):
        return False
    n = o.shape[1]
    a, b = pool.fresh("a0", None, n=n), pool.fresh("b0", None, n=n)
    if not _lane.start(origins, directions, e, o, d, u, a, b):
        return False
    jones.append((a, b))
    return True


def _has_phase(e: NDArray[np.complex128]) -> bool:
    """True when a field of ``e`` (n, 3) has a non-zero imaginary part (-0.0 counts: a cheap,
    safe test on the bit patterns, which reads strided memory faster than a float test)."""
    if not (e.flags.c_contiguous and e.dtype == np.complex128):
        return bool(e.imag.any())
    return bool(e.view(np.uint64)[:, 1::2].max(initial=0) != 0)


def _linear_start(e: NDArray[np.complex128], u: F64, jones: Jones, pool: Pool) -> bool:
    """Basis and Jones pair of real fields ``e`` (n, 3): ``u = e / |e|``, ``(a, b) = (|e|, 0)``.

    The fields must be perpendicular to their rays (as ``RayBundle`` holds them). False (and
    nothing appended) when a field is zero, which has no direction of its own.
    """
    n = u.shape[1]
    np.copyto(u, e.real.T)
    a = np.multiply(u[0], u[0], out=pool.fresh("a0", None, n=n))
    tmp = pool.get("tmp", n=n)
    a += np.multiply(u[1], u[1], out=tmp)
    a += np.multiply(u[2], u[2], out=tmp)
    np.sqrt(a, out=a)
    if not a.min() > 0.0:
        return False
    u /= a
    b = pool.fresh("b0", None, n=n)
    b.fill(0.0)
    jones.append((a, b))
    return True


def _cross_rows(a: F64, b: F64) -> F64:
    """Row-wise ``a x b`` of (3, n) arrays."""
    out = np.empty_like(a)
    np.multiply(a[1], b[2], out=out[0])
    out[0] -= a[2] * b[1]
    np.multiply(a[2], b[0], out=out[1])
    out[1] -= a[0] * b[2]
    np.multiply(a[0], b[1], out=out[2])
    out[2] -= a[1] * b[0]
    return out

class Pool:
    """Reusable work rows of one chunk size, so hot array passes write into cached memory.

    ``get(name, shape)`` returns the same buffer on every call; ``fresh(name, shape, current)``
    returns one of two buffers under ``name``, never the one passed as ``current`` (for state
    that is read while its successor is written). Rows of another size get plain new arrays.
    """

    def __init__(self, n: int) -> None:
        self.n = n
        self._bufs: dict[tuple[str, int], NDArray[np.generic]] = {}

    def get(self, name: str, rows: int = 0, n: int = 0, dtype: type = np.float64) -> NDArray[np.generic]:
        """Buffer ``name`` of shape (n,) or (rows, n)."""
        shape = (rows, n) if rows else (n,)
        if n != self.n:
            return np.empty(shape, dtype)
        key = (name, 0)
        buf = self._bufs.get(key)
        if buf is None or buf.shape != shape or buf.dtype != dtype:
            buf = self._bufs[key] = np.empty(shape, dtype)
        return buf

    def fresh(self, name: str, current: object, rows: int = 0, n: int = 0,
              dtype: type = np.float64) -> NDArray[np.generic]:
        """One of two buffers ``name``, not the object ``current``."""
        shape = (rows, n) if rows else (n,)
        if n != self.n:
            return np.empty(shape, dtype)
        for slot in (0, 1):
            buf = self._bufs.get((name, slot))
            if buf is None or buf.shape != shape or buf.dtype != dtype:
                buf = self._bufs[(name, slot)] = np.empty(shape, dtype)
            if buf is not current:
                return buf
        raise AssertionError("unreachable")
