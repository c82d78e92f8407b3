"""The event loop of one chunk: predict the next face, verify it, interact, fall back.

Internal module. At every event the chunk's next face is predicted (the face most rays of a few
pilot rays meet, remembered from the previous chunk when it served), and every ray's hit on it
is verified: the hit point must lie at least ``VERIFY_MARGIN_MM`` inside the face rectangle, on
the correct side, and (in air) no other prism may lie near the segment. Accepted rays get exactly
the distance the full search would give (same formula, and no other plane within rounding
reach), so the route a ray takes never changes its result. Rays that fail take the full search
and are handled in groups of equal (prism, face, medium).
"""

from __future__ import annotations

import math
from collections import Counter

import numpy as np
from numpy.typing import NDArray

from prismfab.optics import _kernel as K
from prismfab.optics import _lane
from prismfab.optics._face import (
    DEGENERATE,
    FAST_SIN2,
    OBLIQUE,
    STATUS_ABSORBED,
    STATUS_CONTINUE,
    STATUS_LEAKED,
    interact,
    record,
)
from prismfab.optics._kernel import EVENT_REFRACT
from prismfab.optics._state import EventArrays, Out, Rays, clear_event

F64 = NDArray[np.float64]
I64 = NDArray[np.int64]

STATUS_EXITED = 0
STATUS_TRAPPED = 3
_PILOTS = 7

Key = tuple[int, int, int, int]  # (medium, last, prism, face)


class Predictor:
    """Remembers, per event number, the (medium, last, prism, face) that served the last chunk."""

    def __init__(self, enabled: bool = True) -> None:
        self.enabled = enabled
        self.memory: dict[int, Key | None] = {}
        self.lane: dict[tuple[Key, float, float], tuple[F64, F64] | None] = {}  # compiled-lane rows


def search(tab: K.Tables, r: Rays, o: F64 | None = None, d: F64 | None = None) -> tuple[F64, I64, I64]:
    """Full next-face search of every ray: (distance mm, prism or -1, face)."""
    o = r.o if o is None else o
    d = r.d if d is None else d
    n = o.shape[1]
    counts = np.bincount(r.medium + 1, minlength=len(tab.solids) + 1)
    if counts[0] == n:
        return K.search_air(tab, o, d, r.last)
    for p in range(len(tab.solids)):
        if counts[p + 1] == n:
            t, f = K.search_inside(tab.solids[p], o, d)
            return t, np.full(n, p, np.int64), f
    t, prism, face = np.zeros(n), np.full(n, -1, np.int64), np.zeros(n, np.int64)
    for m in np.flatnonzero(counts):
        idx = np.flatnonzero(r.medium == m - 1)
        if m == 0:
            t[idx], prism[idx], face[idx] = K.search_air(tab, o[:, idx], d[:, idx], r.last[idx])
        else:
            t[idx], face[idx] = K.search_inside(tab.solids[m - 1], o[:, idx], d[:, idx])
            prism[idx] = m - 1
    return t, prism, face


def _pilot(tab: K.Tables, r: Rays) -> Key | None:
    """The (medium, last, prism, face) most of a few evenly spread rays meet next."""
    idx = np.unique(np.linspace(0, r.n - 1, min(r.n, _PILOTS)).astype(np.int64))
    sub = r.take(idx)
    _, prism, face = search(tab, sub)
    votes = Counter((int(m), int(l), int(p), int(f))
                    for m, l, p, f in zip(sub.medium, sub.last, prism, face, strict=True) if p >= 0)
    return votes.most_common(1)[0][0] if votes else None


def _index(r: Rays, medium: int) -> float | F64:
    """Index of ``medium`` (-1 = air) for the rays of ``r``: a float for one-wavelength chunks."""
    if medium < 0:
        return 1.0
    row = r.nglass[medium]
    return float(row[0]) if r.nglass.shape[1] == 1 else row


def _verify(tab: K.Tables, r: Rays, key: Key, target: F64) -> tuple[NDArray[np.bool_] | None, F64, F64]:
    """Predicted hits on face ``key``: (accepted mask or None = all, normal . d, distance).

    The hit points go into ``target``. The whole group is tested first with a few reductions
    (direction, distance and the face rectangle over the extreme values); only a group that
    fails that test is checked ray by ray.
    """
    m, last, p, f = key
    g = int(tab.face_base[p]) + f
    solid = tab.solids[p]
    nv = solid.normals[f]
    o, d, pool, n = r.o, r.d, r.pool, r.n
    tmp = pool.get("tmp", n=n)
    rect = tab.g_rect[g]
    assert rect is not None
    e, lo_e, hi_e, h, lo_h, hi_h = rect
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        dn = K.pdot(nv, d, pool.get("dn", n=n), tmp)
        t = K.pdot(nv, o, pool.get("t", n=n), tmp)
        np.subtract(solid.offsets_mm[f], t, out=t)
        t /= dn
        if m >= 0:
            np.maximum(t, 0.0, out=t)
        for i in range(3):
            np.multiply(t, d[i], out=target[i])
            target[i] += o[i]
        xs = [K.pdot(vec, target, pool.get(f"x{j}", n=n), tmp, view_ok=True) for j, vec in enumerate((e, h))]
        ok: NDArray[np.bool_] | None = None
        if not (dn.max() < 0.0 and t.min() > K.EPS_MM if m < 0 else dn.min() > 0.0) or not all(
                x.min() >= lo and x.max() <= hi for x, lo, hi in zip(xs, (lo_e, lo_h), (hi_e, hi_h), strict=True)):
            ok = pool.get("ok", n=n, dtype=np.bool_)
            test = pool.get("test", n=n, dtype=np.bool_)
            if m < 0:
                np.less(dn, 0.0, out=ok)
                ok &= np.greater(t, K.EPS_MM, out=test)
            else:
                np.greater(dn, 0.0, out=ok)
            for x, lo, hi in zip(xs, (lo_e, lo_h), (hi_e, hi_h), strict=True):
                ok &= np.greater_equal(x, lo, out=test)
                ok &= np.less_equal(x, hi, out=test)
    same = r.known_uniform()
    if same is None or same[0] != m or (m < 0 and same[1] != last):
        ok = (r.medium == m) if ok is None else (ok & (r.medium == m))
        if m < 0:
            ok &= r.last == last
    if m < 0:
        ok = _clear_of_other_prisms(tab, r, p, f, last, t, target, ok)
    return ok, dn, t


def _clear_of_other_prisms(tab: K.Tables, r: Rays, p: int, f: int, last: int, t: F64, hit: F64,
                           ok: NDArray[np.bool_] | None) -> NDArray[np.bool_] | None:
    """``ok`` (None = all) cleared where another prism could be met before the predicted hit.

    The rays reach face ``f`` of prism ``p`` from the outer side of its plane, so a prism that
    lies wholly on the inner side (``g_behind``) cannot be met on the way.
    """
    behind = tab.g_behind[int(tab.face_base[p]) + f]
    others = [q for q in range(len(tab.solids)) if q not in (p, last) and q not in behind]
    if not others or (ok is not None and not ok.any()):
        return ok
    lo = np.minimum(r.o.min(axis=1), hit.min(axis=1))
    hi = np.maximum(r.o.max(axis=1), hit.max(axis=1))
    for q in others:
        if np.all(hi >= tab.box_lo[q]) and np.all(lo <= tab.box_hi[q]):
            t_q, _ = K.entry_distance(tab, q, r.o, r.d)
            clear = (t_q > t) | ((t_q == t) & (q > p))
            ok = clear if ok is None else ok & clear
    return ok


def run_chunk(tab: K.Tables, r: Rays, out: Out, max_events: int, predictor: Predictor) -> None:
    """Trace the live rays of one chunk to the end."""
    for k in range(max_events + 1):
        if r.n == 0:
            return
        if not _event(tab, r, out, k, max_events, predictor):
            return


def _event(tab: K.Tables, r: Rays, out: Out, k: int, max_events: int, predictor: Predictor) -> bool:
    """One event of every live ray; False when the chunk is done."""
    key = None
    if predictor.enabled:
        key = predictor.memory[k] if k in predictor.memory else _pilot(tab, r)
        if key is None:
            predictor.memory[k] = None  # the rays leave: the full search is the check
    if key is not None and tab.g_rect[int(tab.face_base[key[2]]) + key[3]] is None:
        key = None
    if key is None and predictor.enabled:
        same = r.known_uniform()
        if same is not None and same[0] < 0 and K.all_leave(tab, r.o, r.d, same[1]):
            r.finish(out, None, STATUS_EXITED, k)  # what the full search would find, proven at once
            return False
    n = r.n
    ev: EventArrays | None = None
    hit = None
    created = len(out.events) <= k
    if key is not None:
        if k < max_events:
            ev = out.event(k, unbroken=isinstance(r.ids, slice))
            hit = ev[3][:, r.ids] if isinstance(r.ids, slice) else np.empty((3, n))
        else:
            hit = np.empty((3, n))
        lane = _lane_inputs(tab, r, key, k, predictor.lane) if ev is not None else None
        if lane is not None:  # verify and interact in one pass; unverified rays left untouched
            assert ev is not None
            if isinstance(r.ids, slice):
                cos_in, rec = ev[4][r.ids], (ev[0][r.ids], ev[1][r.ids], ev[2][r.ids])
            else:  # work rows; the record is written below
                pool = r.pool
                cos_in = pool.get("c", n=n)
                rec = (pool.get("rec_p", n=n, dtype=np.int16), pool.get("rec_f", n=n, dtype=np.int16),
                       pool.get("rec_k", n=n, dtype=np.int8))
            ok = _run_lane(r, lane, hit, cos_in, rec)
        else:
            ok, dn, t = _verify(tab, r, key, hit)
        n_ok = n if ok is None else int(np.count_nonzero(ok))
        if n_ok * 2 >= n:
            predictor.memory[k] = key
        else:
            predictor.memory.pop(k, None)
        ex = np.flatnonzero(~ok) if ok is not None and n_ok < n else np.zeros(0, np.int64)
        if len(ex) and lane is None:  # harmless stand-ins (normal incidence at the start) until overwritten
            t[ex] = 0.0
            dn[ex] = -1.0 if key[0] < 0 else 1.0
            hit[:, ex] = r.o[:, ex]
    else:
        n_ok, ex, lane = 0, np.arange(n), None
    if len(ex):
        t_ex, prism_ex, face_ex = search(tab, r if len(ex) == n else r.take(ex))
    else:
        t_ex, prism_ex, face_ex = np.zeros(0), ex, ex
    gone = ex[prism_ex < 0]
    if len(gone):
        r.finish(out, None if len(gone) == n else _mask(n, gone), STATUS_EXITED, k)
    if len(gone) == n or k == max_events:
        if len(gone) < n:
            r.finish(out, ~_mask(n, gone), STATUS_TRAPPED, k)
        if ev is not None and out.history:
            if created:
                out.drop_event()
            else:  # the predicted hits went into the record: undo them
                clear_event(ev, r.global_ids())
        return False
    if ev is None:
        ev = out.event(k)
    hits = prism_ex >= 0
    ex_hit, t_ex, prism_ex, face_ex = ex[hits], t_ex[hits], prism_ex[hits], face_ex[hits]
    sub = r.take(ex_hit) if len(ex_hit) else None
    status: NDArray[np.int8] | None = None
    if key is not None and n_ok:
        assert hit is not None
        m, _, p, f = key
        n1 = _index(r, m)
        r.o = hit
        if not isinstance(r.ids, slice):
            ev[3][:, r.ids] = hit
        if lane is not None:  # done in the lane: the record and the medium remain
            if not isinstance(r.ids, slice):
                record(ev, r.ids, p, f, EVENT_REFRACT, cos_in)
            r.crossed(p, entering=m < 0)
        else:
            r.opl += t if isinstance(n1, float) and n1 == 1.0 else np.multiply(t, n1, out=r.pool.get("tmp", n=n))
            status = interact(tab, r, ev, k, p, f, dn, n1, _index(r, p) if m < 0 else 1.0, entering=m < 0)
    else:
        r.o = hit if hit is not None else (ev[3][:, r.ids] if isinstance(r.ids, slice) else np.empty((3, n)))
    if key is not None and len(gone):
        clear_event(ev, r.global_ids(gone))
    if sub is not None:
        status = _exceptions(tab, r, sub, ex_hit, t_ex, prism_ex, face_ex, ev, k, status)
    if status is not None and len(gone):
        status[gone] = STATUS_CONTINUE
    drop = None if status is None else status != STATUS_CONTINUE
    for code in (STATUS_ABSORBED, STATUS_LEAKED):
        if status is not None and (sel := status == code).any():
            r.finish(out, sel, code, k + 1)
    if len(gone):
        drop = _mask(n, gone) if drop is None else drop | _mask(n, gone)
    if drop is not None and drop.any():
        r.keep(~drop)
    return True


def _lane_inputs(tab: K.Tables, r: Rays, key: Key, k: int,
                 cache: dict[tuple[Key, float, float], tuple[F64, F64] | None]) -> tuple[F64, F64] | None:
    """(face, optics) rows for the compiled lane, or None when this event is not for it.

    The lane takes a refracting face met by one-wavelength rays with real fields, from a known
    medium, with no forced reflection at this event and (in air) no other prism to clear. The
    rows of a face depend only on the key and the two indices (``cache``).
    """
    if not _lane.available() or r.n == 0 or r.nglass.shape[1] != 1 or not 1 <= len(r.jones) <= 2:
        return None
    m, last, p, f = key
    if r.reflect_at is not None and bool((r.reflect_at == k).any()):
        return None
    same = r.known_uniform()
    if same is None or same[0] != m or (m < 0 and same[1] != last):
        return None
    rows = [r.opl] + [x for pair in r.jones for x in pair]
    if not (all(_lane.row_ok(x, writeable=True) for x in rows) and _lane.block_ok(r.o)
            and _lane.block_ok(r.d, writeable=True) and _lane.block_ok(r.u, writeable=True)):
        return None
    n1 = _index(r, m)
    n2 = _index(r, p) if m < 0 else 1.0
    assert isinstance(n1, float) and isinstance(n2, float)
    if (key, n1, n2) not in cache:
        cache[(key, n1, n2)] = _lane_rows(tab, key, n1, n2)
    return cache[(key, n1, n2)]


def _lane_rows(tab: K.Tables, key: Key, n1: float, n2: float) -> tuple[F64, F64] | None:
    """The lane's face and optics rows of face ``key`` (see ``_lanec.c``), None if not for it."""
    m, last, p, f = key
    g = int(tab.face_base[p]) + f
    if int(tab.g_roles[g]) != K.ROLE_REFRACT:
        return None
    if m < 0 and any(q not in (p, last) and q not in tab.g_behind[g] for q in range(len(tab.solids))):
        return None
    rect = tab.g_rect[g]
    assert rect is not None
    e, lo_e, hi_e, h, lo_h, hi_h = rect
    solid = tab.solids[p]
    face = np.array([*solid.normals[f], solid.offsets_mm[f], *e, lo_e, hi_e, *h, lo_h, hi_h], float)
    refl = float(tab.g_reflectance[g])
    amp = -1.0 if math.isnan(refl) else math.sqrt(1.0 - refl)
    optics = np.array([1.0 if m < 0 else 0.0, n1, n2, n1 / n2, amp, K.EPS_MM, FAST_SIN2, OBLIQUE,
                       DEGENERATE, p, f, EVENT_REFRACT], float)
    return face, optics


def _run_lane(r: Rays, lane: tuple[F64, F64], hit: F64, cos_in: F64,
              rec: tuple[NDArray[np.int16], NDArray[np.int16], NDArray[np.int8]]) -> NDArray[np.bool_] | None:
    """Run the compiled lane on all rays of ``r`` (done rays updated in place, flagged rays left
    as they were); the mask of the rays done, or None when all are."""
    flag = r.pool.get("flag", n=r.n, dtype=np.uint8)
    flagged = _lane.refract(lane[0], lane[1], r.o, r.d, r.u, r.jones, r.opl, hit, cos_in, flag, rec)
    return None if flagged == 0 else flag == _lane.FLAG_DONE


def _mask(n: int, idx: I64) -> NDArray[np.bool_]:
    m = np.zeros(n, bool)
    m[idx] = True
    return m


def _exceptions(tab: K.Tables, r: Rays, sub: Rays, ex: I64, t: F64, prism: I64, face: I64,
                ev: EventArrays, k: int, status: NDArray[np.int8] | None) -> NDArray[np.int8] | None:
    """Interact the rays that took the full search, in groups of one (prism, face, medium)."""
    keys = np.stack([prism, face, sub.medium])
    uniq, inverse = np.unique(keys, axis=1, return_inverse=True)
    inverse = inverse.ravel()
    for j in range(uniq.shape[1]):
        sel = np.flatnonzero(inverse == j)
        grp = sub.take(sel)
        tg = t[sel]
        p, f = int(uniq[0, j]), int(uniq[1, j])
        nv = tab.solids[p].normals[f]
        dn = K.pdot(nv, grp.d)
        grp.o = grp.o + tg * grp.d
        ev[3][:, grp.ids] = grp.o
        n1 = _index(grp, int(grp.medium[0]))
        grp.opl += n1 * tg
        entering = int(grp.medium[0]) < 0
        st = interact(tab, grp, ev, k, p, f, dn, n1, _index(grp, p) if entering else 1.0, entering=entering)
        r.put(ex[sel], grp)
        if st is not None:
            if status is None:
                status = np.full(r.n, STATUS_CONTINUE, np.int8)
            status[ex[sel]] = st
        elif status is not None:
            status[ex[sel]] = STATUS_CONTINUE
    return status
