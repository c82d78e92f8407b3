"""Per-event arithmetic of the tracer: next-face search and the face interaction.

Internal module. Ray state is held component-major, ``(3, n)`` arrays, so every component is a
contiguous row and numpy works on whole rows. Nothing here loops over rays; the loops are over
prisms or faces only.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from prismfab.optics.solid import ROLE_CODES, ConvexSolid

F64 = NDArray[np.float64]
C128 = NDArray[np.complex128]
I64 = NDArray[np.int64]

EPS_MM = 1e-9
"""A ray must travel at least this far (mm) in air before it can enter a prism."""

# role codes (see solid.ROLE_CODES)
ROLE_REFRACT, ROLE_TIR, ROLE_MIRROR, ROLE_ABSORB = 0, 1, 2, 3

# event kinds recorded per ray and event
EVENT_NONE = 0
EVENT_REFRACT = 1
EVENT_TIR = 2  # total internal reflection (at a TIR face, or at a refracting face beyond critical)
EVENT_MIRROR = 3
EVENT_ABSORB = 4  # ground face or end face
EVENT_LEAK = 5  # a TIR face that does not reflect totally: the ray leaves the glass, lost
EVENT_PARTIAL = 6  # Fresnel partial reflection taken on purpose (ghost tracing)


@dataclass(frozen=True, slots=True)
class Tables:
    """Face tables of a system, built once per trace."""

    solids: tuple[ConvexSolid, ...]
    face_base: I64  # (P,) global id of each prism's face 0
    g_normals: F64  # (G, 3)
    g_roles: I64  # (G,)
    centres: F64  # (P, 3) bounding-sphere centres, mm
    radii: F64  # (P,) bounding-sphere radii, mm


def build_tables(solids: tuple[ConvexSolid, ...]) -> Tables:
    """Stack the face planes of all prisms; bounding spheres for the quick rejection."""
    counts = np.array([s.normals.shape[0] for s in solids])
    centres, radii = [], []
    for s in solids:
        v = np.array([[x, y, z] for x, y in s.vertices_mm for z in (0.0, s.height_mm)])
        corners = v @ s.rotation.T + s.translation_mm
        c = corners.mean(axis=0)
        centres.append(c)
        radii.append(float(np.max(np.linalg.norm(corners - c, axis=1))) * (1 + 1e-9) + 1e-6)
    return Tables(
        solids=solids,
        face_base=np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(np.int64),
        g_normals=np.vstack([s.normals for s in solids]),
        g_roles=np.array([ROLE_CODES[r] for s in solids for r in s.roles], dtype=np.int64),
        centres=np.array(centres), radii=np.array(radii),
    )


def pdot(nv: F64, x: F64) -> F64:
    """``nv . x`` for one (3,) vector and (3, n) rows, skipping zero components (exact)."""
    out: F64 | None = None
    for i in range(3):
        c = float(nv[i])
        if c == 0.0:
            continue
        term = x[i] * c
        if out is None:
            out = term
        else:
            out += term
    return np.zeros(x.shape[1]) if out is None else out


def _candidates(tab: Tables, p: int, o: F64, d: F64) -> NDArray[np.bool_]:
    """Rays whose forward half-line meets the bounding sphere of prism p."""
    oc = tab.centres[p][:, None] - o
    b = dot(oc, d)
    r = tab.radii[p]
    return (dot(oc, oc) - b * b <= r * r) & (b > -r)


def _slab(solid: ConvexSolid, o: F64, d: F64) -> tuple[F64, I64]:
    """Entry distance (inf where the ray misses or starts past it) and entry face, per ray."""
    n = o.shape[1]
    t_in = np.full(n, -np.inf)
    t_out = np.full(n, np.inf)
    f_in = np.zeros(n, np.int64)
    miss = np.zeros(n, bool)
    with np.errstate(divide="ignore", invalid="ignore"):
        for j in range(solid.normals.shape[0]):
            nv = solid.normals[j]
            dn = pdot(nv, d)
            num = solid.offsets_mm[j] - pdot(nv, o)
            t = num / dn
            upd = (dn < 0.0) & (t > t_in)
            t_in = np.where(upd, t, t_in)
            np.putmask(f_in, upd, j)
            t_out = np.where((dn > 0.0) & (t < t_out), t, t_out)
            miss |= (dn == 0.0) & (num < 0.0)
    hit = (t_in > EPS_MM) & (t_in < t_out) & ~miss
    return np.where(hit, t_in, np.inf), f_in


def search_air(tab: Tables, o: F64, d: F64, last: I64) -> tuple[F64, I64, I64]:
    """Nearest prism entry along rays in air: (distance mm, prism or -1, face).

    ``last`` is the prism each ray has just left (-1 none): a convex solid cannot be met again
    along the same straight line, so it is not tested.
    """
    n = o.shape[1]
    best = np.full(n, np.inf)
    prism = np.full(n, -1, np.int64)
    face = np.zeros(n, np.int64)
    uniform_last = int(last[0]) if n and last.min() == last.max() else None
    for p, solid in enumerate(tab.solids):
        if uniform_last == p:
            continue
        cand = _candidates(tab, p, o, d)
        if uniform_last is None:
            cand &= last != p
        count = int(np.count_nonzero(cand))
        if count == 0:
            continue
        if count == n:
            t, f = _slab(solid, o, d)
            upd = t < best
        else:
            idx = np.flatnonzero(cand)
            t_sub, f_sub = _slab(solid, o[:, idx], d[:, idx])
            t, f = np.full(n, np.inf), np.zeros(n, np.int64)
            t[idx], f[idx] = t_sub, f_sub
            upd = t < best
        best = np.where(upd, t, best)
        np.putmask(prism, upd, p)
        np.putmask(face, upd, f)
    return np.where(prism < 0, 0.0, best), prism, face


def search_inside(solid: ConvexSolid, o: F64, d: F64) -> tuple[F64, I64]:
    """Exit plane of rays inside a convex solid: (distance mm, face)."""
    n = o.shape[1]
    best = np.full(n, np.inf)
    face = np.zeros(n, np.int64)
    with np.errstate(divide="ignore", invalid="ignore"):
        for j in range(solid.normals.shape[0]):
            nv = solid.normals[j]
            dn = pdot(nv, d)
            pos = dn > 0.0
            if not pos.any():
                continue
            t = (solid.offsets_mm[j] - pdot(nv, o)) / dn
            upd = pos & (t < best)
            best = np.where(upd, t, best)
            np.putmask(face, upd, j)
    np.maximum(best, 0.0, out=best)
    return best, face


def cross(a: F64, b: F64) -> F64:
    """Row-wise cross product of (3, n) arrays (either may be (3, 1))."""
    return np.stack([a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]])


def dot(a: F64, b: F64) -> F64:
    """Row-wise dot product of (3, n) arrays."""
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def rotate_jones(
    u: F64, d: F64, na: F64, jones: list[tuple[C128, C128]]
) -> tuple[F64, list[tuple[C128, C128]]]:
    """Express each Jones pair in the (s, p_in) basis of the face.

    The field is ``a u + b (d x u)``. Returns the face's s unit vector (the new basis vector for
    the outgoing ray) and, per field, ``(E.s, E.p_in)`` with ``p_in = s x d``.
    """
    s = cross(na, d)
    norm = np.sqrt(dot(s, s))
    degenerate = norm < 1e-12  # normal incidence: any s works; keep the current basis
    if degenerate.any():
        norm = np.where(degenerate, 1.0, norm)
        s = np.where(degenerate, u, s / norm)
    else:
        s /= norm
    cos_a = dot(u, s)
    sin_a = dot(d, cross(u, s))
    out = [(a * cos_a + b * sin_a, a * sin_a - b * cos_a) for a, b in jones]
    return s, out


def coefficients(
    role: I64 | int, c: F64, k: F64, n1: F64, n2: F64 | float, partial: NDArray[np.bool_] | None
) -> tuple[NDArray[np.bool_], C128 | F64, C128 | F64, I64 | int]:
    """Which rays reflect, the power-normalised (tau_s, tau_p) and the event kind.

    ``c`` is the cosine of incidence, ``k = cos^2`` of the refraction angle (negative beyond the
    critical angle). Transmitted amplitudes carry ``sqrt(n2 cos t / n1 cos i)``, so the power
    of a field is ``|a|^2 + |b|^2`` at every stage.
    """
    tir = k < 0.0
    ct = np.sqrt(np.abs(k))
    if np.ndim(role) == 0 and role == ROLE_REFRACT and not tir.any() and (partial is None or not partial.any()):
        q1, q2 = n1 * c, n2 * ct
        p1, p2 = n2 * c, n1 * ct
        root = 2.0 * np.sqrt(q1 * q2)
        return np.zeros(c.shape, bool), root / (q1 + q2), root / (p1 + p2), EVENT_REFRACT
    role = np.broadcast_to(role, c.shape)
    partial = np.zeros(c.shape, bool) if partial is None else partial
    refract = role == ROLE_REFRACT
    mirror = role == ROLE_MIRROR
    total = tir & ((role == ROLE_TIR) | refract)
    part = partial & refract & ~tir
    reflect = total | mirror | part
    q1, q2, p1, p2 = n1 * c, n2 * ct, n2 * c, n1 * ct
    with np.errstate(divide="ignore", invalid="ignore"):
        root = 2.0 * np.sqrt(q1 * q2)
        ts = np.where(tir, 0.0, root / (q1 + q2))
        tp = np.where(tir, 0.0, root / (p1 + p2))
        if total.any():  # complex only when a phase appears
            rs_tir = (q1 - 1j * q2) / (q1 + 1j * q2)
            rp_tir = (p1 - 1j * p2) / (p1 + 1j * p2)
        else:
            rs_tir = rp_tir = 0.0
        rs_part = (q1 - q2) / (q1 + q2)
        rp_part = (p1 - p2) / (p1 + p2)
    ts = np.where(total, rs_tir, np.where(part, rs_part, np.where(mirror, -1.0, ts)))
    tp = np.where(total, rp_tir, np.where(part, rp_part, np.where(mirror, 1.0, tp)))
    kind = np.full(c.shape, EVENT_REFRACT, dtype=np.int64)
    kind[total] = EVENT_TIR
    kind[mirror] = EVENT_MIRROR
    kind[part] = EVENT_PARTIAL
    kind[(role == ROLE_TIR) & ~tir] = EVENT_LEAK
    kind[role == ROLE_ABSORB] = EVENT_ABSORB
    return reflect, ts, tp, kind
