"""What one face does to a group of rays that all meet it from the same side.

Internal module. Every ray of a group sits on the same face of the same prism and comes from the
same medium, so the face normal, role, coating and (for a one-wavelength chunk) both indices are
scalars: each array pass is a plain row operation. Per-ray differences that remain (total
internal reflection at a refracting face, a forced partial reflection for ghost tracing, TIR lost
at a reflecting face) are handled with masks only when they occur.

Field bookkeeping: a Jones pair (a, b) in the basis (u, d x u) is re-expressed in the face's
(s, p) basis, ``s = unit(N x d)``, multiplied by the power-normalised amplitudes (tau_s, tau_p),
and carried on with ``u = s`` (which is perpendicular to the new direction too).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from prismfab.optics._kernel import (
    EVENT_ABSORB,
    EVENT_LEAK,
    EVENT_MIRROR,
    EVENT_PARTIAL,
    EVENT_REFRACT,
    EVENT_TIR,
    ROLE_ABSORB,
    ROLE_MIRROR,
    ROLE_REFRACT,
    ROLE_TIR,
    Tables,
)
from prismfab.optics._state import EventArrays, Rays

F64 = NDArray[np.float64]
Scalar = float | F64

STATUS_CONTINUE = -1
STATUS_ABSORBED = 1
STATUS_LEAKED = 2


def _cross_const(na: tuple[float, float, float], d: F64, out: F64, tmp: F64) -> F64:
    """``na x d`` for one constant vector and (3, n) rows, skipping zero components."""
    n0, n1, n2 = na
    for i, (ca, ia, cb, ib) in enumerate(((n1, 2, n2, 1), (n2, 0, n0, 2), (n0, 1, n1, 0))):
        # component i = ca * d[ia] - cb * d[ib]
        if ca != 0.0 and cb != 0.0:
            np.multiply(d[ia], ca, out=out[i])
            out[i] -= np.multiply(d[ib], cb, out=tmp)
        elif ca != 0.0:
            np.multiply(d[ia], ca, out=out[i])
        elif cb != 0.0:
            np.multiply(d[ib], -cb, out=out[i])
        else:
            out[i] = 0.0
    return out


OBLIQUE = 1e-2
"""Smallest sin(incidence) of a group for the short form of the basis-rotation sine."""


def _dot_const(na: tuple[float, float, float], x: F64, out: F64, tmp: F64) -> F64:
    """``na . x`` for one constant vector and (3, n) rows, skipping zero components."""
    first = True
    for i in range(3):
        if na[i] == 0.0:
            continue
        if first:
            np.multiply(x[i], na[i], out=out)
            first = False
        else:
            out += np.multiply(x[i], na[i], out=tmp)
    if first:
        out.fill(0.0)
    return out


def _keep_basis(r: Rays, ts: Scalar, tp: Scalar) -> None:
    """``rotate`` when no ray has a plane of incidence: s = u (cos 1, sin 0), as per ray."""
    pool, n = r.pool, r.n
    jones = []
    for m, (a, b) in enumerate(r.jones):
        if not (isinstance(ts, float) and ts == 1.0):
            a = np.multiply(a, ts, out=pool.fresh(f"a{m}", a, n=n, dtype=np.result_type(a, ts)))
        if not (isinstance(tp, float) and tp == 1.0):
            b = np.multiply(b, tp, out=pool.fresh(f"b{m}", b, n=n, dtype=np.result_type(b, tp)))
        jones.append((a, b))
    r.jones = jones


DEGENERATE = 1e-12
"""|N x d| below which a ray counts as meeting the face at normal incidence (the basis is kept)."""

FAST_SIN2 = 1e-2
"""Smallest sin^2(incidence) for which |N x d| is taken as sqrt(sin^2) (good to ~1e-14 there)."""


def rotate(r: Rays, na: tuple[float, float, float], ts: Scalar, tp: Scalar, sin2: F64) -> None:
    """Re-express every Jones pair in the face's (s, p) basis and apply (tau_s, tau_p).

    Must be called with the incoming direction still in ``r.d``; ``sin2`` = 1 - (N . d)^2 per
    ray. At normal incidence (``N x d`` vanishes) any s works and the current basis is kept.
    Every number is a function of the ray alone, whatever group it is traced in: well off the
    normal ``|N x d| = sqrt(sin2)``, nearer to it the norm of the cross product.
    """
    d, u, pool, n = r.d, r.u, r.pool, r.n
    tmp = pool.get("tmp", n=n)
    s = _cross_const(na, d, pool.fresh("u", u, 3, n), tmp)
    inv = pool.get("inv", n=n)
    if sin2.min() >= FAST_SIN2:
        np.sqrt(sin2, out=inv)
        np.divide(1.0, inv, out=inv)
        s *= inv
        cos_a = _dot_rows(u, s, pool.get("cos", n=n), tmp)
        # w = -sin(a) = (u . na) / |na x d| for u, s perpendicular to the unit d
        w = _dot_const(na, u, pool.get("w", n=n), tmp)
        w *= inv
    else:
        cos_a, w = _near_normal(r, na, s, inv, sin2)
        if cos_a is None:  # every ray at normal incidence
            _keep_basis(r, ts, tp)
            return
    jones = []
    for m, (a, b) in enumerate(r.jones):
        cplx = np.iscomplexobj(a) or np.iscomplexobj(b) or np.iscomplexobj(ts) or np.iscomplexobj(tp)
        dt = np.complex128 if cplx else np.float64
        es = np.multiply(a, cos_a, out=pool.fresh(f"a{m}", a, n=n, dtype=dt))
        es -= b * w if cplx else np.multiply(b, w, out=tmp)  # a cos + b sin
        ep = np.multiply(b, cos_a, out=pool.fresh(f"b{m}", b, n=n, dtype=dt))
        ep += a * w if cplx else np.multiply(a, w, out=tmp)  # b cos - a sin
        if not (isinstance(ts, float) and ts == 1.0):
            es *= ts
        if not (isinstance(tp, float) and tp == 1.0):
            ep *= tp
        jones.append((es, ep))
    r.jones, r.u = jones, s


def _near_normal(r: Rays, na: tuple[float, float, float], s: F64, inv: F64,
                 sin2: F64) -> tuple[F64 | None, F64]:
    """(cos a, -sin a) of a group with rays near or at normal incidence; s = unit(na x d) in place.

    Returns (None, w) when every ray is at normal incidence (the basis is kept). Rays at normal
    incidence keep s = u (cos 1, sin 0).
    """
    u, pool, n = r.u, r.pool, r.n
    tmp = pool.get("tmp", n=n)
    norm = _dot_rows(s, s, pool.get("norm", n=n), tmp)
    np.sqrt(norm, out=norm)
    if sin2.max() >= FAST_SIN2:  # the rays well off the normal take the same norm as in ``rotate``
        far = sin2 >= FAST_SIN2
        np.sqrt(sin2, out=tmp, where=far)
        np.copyto(norm, tmp, where=far)
    w = pool.get("w", n=n)
    if norm.max() < DEGENERATE:
        return None, w
    degenerate = norm < DEGENERATE
    any_degenerate = bool(degenerate.any())
    if any_degenerate:
        np.copyto(norm, 1.0, where=degenerate)
    np.divide(1.0, norm, out=inv)
    s *= inv
    if any_degenerate:
        np.copyto(s, u, where=degenerate)
    cos_a = _dot_rows(u, s, pool.get("cos", n=n), tmp)
    if any_degenerate:
        np.copyto(cos_a, 1.0, where=degenerate)
    # w = -sin a in the short form; where the incidence is nearly normal, s carries rounding
    # along d of order 1e-16 / |na x d|, so (cos a, sin a) is rescaled to unit length there: the
    # rotation stays orthonormal (power is kept) and its angle is as good as s itself
    _dot_const(na, u, w, tmp)
    w *= inv
    if any_degenerate:
        np.copyto(w, 0.0, where=degenerate)
    oblique = norm >= OBLIQUE
    if not oblique.all():
        scale = np.multiply(cos_a, cos_a, out=pool.get("scale", n=n))
        scale += np.multiply(w, w, out=tmp)
        np.sqrt(scale, out=scale)
        np.copyto(scale, 1.0, where=oblique)
        cos_a /= scale
        w /= scale
    return cos_a, w


def _dot_rows(x: F64, y: F64, out: F64, tmp: F64) -> F64:
    """Row-wise ``x . y`` of (3, n) arrays into ``out``."""
    np.multiply(x[0], y[0], out=out)
    out += np.multiply(x[1], y[1], out=tmp)
    out += np.multiply(x[2], y[2], out=tmp)
    return out


def _fresnel(c: F64, ct: F64, n1: Scalar, n2: Scalar, r: Rays) -> tuple[F64, F64]:
    """Power-normalised transmission amplitudes (tau_s, tau_p), ``sqrt(n2 ct / n1 c) t``."""
    pool, n = r.pool, r.n
    q1 = c if _is_one(n1) else np.multiply(c, n1, out=pool.get("q1", n=n))
    q2 = ct if _is_one(n2) else np.multiply(ct, n2, out=pool.get("q2", n=n))
    p1 = c if _is_one(n2) else np.multiply(c, n2, out=pool.get("p1", n=n))
    p2 = ct if _is_one(n1) else np.multiply(ct, n1, out=pool.get("p2", n=n))
    root = np.multiply(q1, q2, out=pool.get("root", n=n))
    np.sqrt(root, out=root)
    root *= 2.0
    # one division for both: g = root / ((q1 + q2)(p1 + p2)), ts = g (p1 + p2), tp = g (q1 + q2)
    sum_s = np.add(q1, q2, out=pool.get("sum_s", n=n))
    sum_p = np.add(p1, p2, out=pool.get("sum_p", n=n))
    g = np.multiply(sum_s, sum_p, out=pool.get("g", n=n))
    np.divide(root, g, out=g)
    ts = np.multiply(g, sum_p, out=pool.get("ts", n=n))
    tp = np.multiply(g, sum_s, out=pool.get("tp", n=n))
    return ts, tp


def _is_one(x: Scalar) -> bool:
    return isinstance(x, float) and x == 1.0


def record(ev: EventArrays, ids: slice | NDArray[np.int64], p: int, f: int, kind: int | NDArray[np.int64],
            c: F64) -> None:
    ev[0][ids], ev[1][ids], ev[2][ids] = p, f, kind
    if not isinstance(ids, slice):  # else c is already the event row
        ev[4][ids] = c


def interact(tab: Tables, r: Rays, ev: EventArrays, k: int, p: int, f: int, dn: F64,
             n1: Scalar, n2: Scalar, *, entering: bool) -> NDArray[np.int8] | None:
    """Apply face ``f`` of prism ``p`` at event ``k`` to all rays of ``r`` (all on that face).

    ``r.o`` already holds the hit points (recorded by the caller) and ``dn`` = normal . d.
    ``n1`` is the index on the incoming side, ``n2`` on the far side (scalars or rows);
    ``entering``: the rays come from air.

    Returns:
        Per-ray status (``STATUS_CONTINUE`` for rays that go on), or None when all go on.
    """
    g = int(tab.face_base[p]) + f
    nv = tab.g_normals[g]
    sign = 1.0 if entering else -1.0
    na = (float(nv[0]) * sign + 0.0, float(nv[1]) * sign + 0.0, float(nv[2]) * sign + 0.0)
    pool, n = r.pool, r.n
    c = ev[4][r.ids] if isinstance(r.ids, slice) else pool.get("c", n=n)
    if entering:  # cosine of incidence against the normal facing the ray
        np.negative(dn, out=c)
    else:
        np.copyto(c, dn)
    role = int(tab.g_roles[g])
    ids = r.ids
    if role == ROLE_ABSORB:
        record(ev, ids, p, f, EVENT_ABSORB, c)
        return np.full(r.n, STATUS_ABSORBED, np.int8)
    refl = float(tab.g_reflectance[g])
    sin2 = np.multiply(c, c, out=pool.get("sin2", n=n))
    np.subtract(1.0, sin2, out=sin2)
    if role == ROLE_MIRROR or (role == ROLE_TIR and not math.isnan(refl)):
        record(ev, ids, p, f, EVENT_MIRROR, c)
        amp = math.sqrt(refl)
        rotate(r, na, -amp, amp, sin2)
        r.d = _reflect(r.d, c, na)
        return None
    eta = n1 / n2
    kk = np.multiply(sin2, eta * eta, out=pool.get("kk", n=n))
    np.subtract(1.0, kk, out=kk)
    tir = bool(kk.min() < 0.0) if kk.size else False
    partial = None
    if r.reflect_at is not None and role == ROLE_REFRACT:
        partial = r.reflect_at == k
        if partial.ndim == 2:  # several forced reflections per ray
            partial = partial.any(axis=1)
        if not partial.any():
            partial = None
    if role == ROLE_REFRACT and not tir and partial is None:
        return _refract_all(r, ev, p, f, c, kk, sin2, na, eta, n1, n2, refl, entering)
    return _mixed(r, ev, p, f, role, c, kk, sin2, na, eta, n1, n2, refl, partial, entering)


def _reflect(d: F64, c: F64, na: tuple[float, float, float]) -> F64:
    """``d + 2 c na`` (mirror reflection)."""
    out = d.copy()
    c2 = 2.0 * c
    for i in range(3):
        if na[i] != 0.0:
            out[i] += c2 * na[i]
    return out


def _refract_all(r: Rays, ev: EventArrays, p: int, f: int, c: F64, kk: F64, sin2: F64,
                 na: tuple[float, float, float], eta: Scalar, n1: Scalar, n2: Scalar, refl: float,
                 entering: bool) -> None:
    """Every ray refracts (the common case)."""
    record(ev, r.ids, p, f, EVENT_REFRACT, c)
    pool, n = r.pool, r.n
    ct = np.sqrt(kk, out=kk)
    if math.isnan(refl):
        ts, tp = _fresnel(c, ct, n1, n2, r)
        rotate(r, na, ts, tp, sin2)
    else:
        amp = math.sqrt(1.0 - refl)
        rotate(r, na, amp, amp, sin2)
    gam = np.multiply(c, eta, out=pool.get("gam", n=n))
    gam -= ct
    d = r.d
    new = pool.fresh("d", d, 3, n)
    for i in range(3):
        np.multiply(d[i], eta, out=new[i])
        if na[i] != 0.0:
            new[i] += np.multiply(gam, na[i], out=ct)
    r.d = new
    r.crossed(p, entering=entering)
    return None


def _mixed(r: Rays, ev: EventArrays, p: int, f: int, role: int, c: F64, kk: F64, sin2: F64,
           na: tuple[float, float, float], eta: Scalar, n1: Scalar, n2: Scalar, refl: float,
           partial: NDArray[np.bool_] | None, entering: bool) -> NDArray[np.int8] | None:
    """Some rays reflect (TIR, forced partial reflection) or leak (TIR face)."""
    tir = kk < 0.0
    ct = np.sqrt(np.abs(kk))
    part = np.zeros(r.n, bool) if partial is None or role != ROLE_REFRACT else partial & ~tir
    coated = not math.isnan(refl)
    q1, q2, p1, p2 = n1 * c, n2 * ct, n2 * c, n1 * ct
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        root = 2.0 * np.sqrt(q1 * q2)
        sum_s, sum_p = q1 + q2, p1 + p2
        g = root / (sum_s * sum_p)  # as in _fresnel, so a ray gets the same numbers in any group
        ts = np.where(tir, 0.0, math.sqrt(1.0 - refl) if coated else g * sum_p)
        tp = np.where(tir, 0.0, math.sqrt(1.0 - refl) if coated else g * sum_s)
        rs_part = -math.sqrt(refl) if coated else (q1 - q2) / (q1 + q2)
        rp_part = math.sqrt(refl) if coated else (p1 - p2) / (p1 + p2)
        if tir.any():  # complex only when a phase appears
            rs_tir = (q1 - 1j * q2) / (q1 + 1j * q2)
            rp_tir = (p1 - 1j * p2) / (p1 + 1j * p2)
        else:
            rs_tir = rp_tir = 0.0
    d = r.d
    gam = eta * c - ct
    refracted = np.stack([eta * d[i] + gam * na[i] if na[i] != 0.0 else eta * d[i] for i in range(3)])
    reflected = _reflect(d, c, na)
    status: NDArray[np.int8] | None = None
    if role == ROLE_TIR:
        reflect = tir
        kind = np.where(tir, EVENT_TIR, EVENT_LEAK)
        leak = ~tir
        if leak.any():
            status = np.where(leak, STATUS_LEAKED, STATUS_CONTINUE).astype(np.int8)
    else:  # ROLE_REFRACT
        reflect = tir | part
        kind = np.where(tir, EVENT_TIR, np.where(part, EVENT_PARTIAL, EVENT_REFRACT))
    ts_all = np.where(tir, rs_tir, np.where(part, rs_part, ts))
    tp_all = np.where(tir, rp_tir, np.where(part, rp_part, tp))
    record(ev, r.ids, p, f, kind, c)
    rotate(r, na, ts_all, tp_all, sin2)
    r.d = np.where(reflect, reflected, refracted)
    if role == ROLE_REFRACT:
        crossed = ~reflect
        r.medium = np.where(crossed, p if entering else -1, r.medium)
        r.last = np.where(crossed, -1 if entering else p, r.last)
        r.uniform = None
    return status
