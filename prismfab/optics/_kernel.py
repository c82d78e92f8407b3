"""Per-event arithmetic of the tracer: next-face search and the face interaction.

Internal module. Ray state is held component-major, ``(3, n)`` arrays, so every component is a
contiguous row and numpy works on whole rows. Nothing here loops over rays; the loops are over
prisms or faces only.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from prismfab.model import CoatingType, Prism
from prismfab.optics import _lane
from prismfab.optics.solid import ROLE_CODES, ConvexSolid

F64 = NDArray[np.float64]
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


VERIFY_MARGIN_MM = 1e-6
"""A predicted hit is accepted only this far (mm) inside its face rectangle; closer to an edge the
ray takes the full search, so both routes give bit-identical results."""
_SAFE_MM = 1e-10  # smallest distance of an accepted hit from any other plane of the solid


@dataclass(frozen=True, slots=True)
class Tables:
    """Face tables of a system, built once per trace.

    Global face ``g = face_base[p] + f``. ``g_reflectance`` holds the coating model of each face:
    NaN = uncoated (Fresnel), otherwise the fixed power reflectance the face is traced with (an
    antireflection limit on a refracting face, or the reflectance floor of a mirror coating).
    ``g_rect`` per side face: (e, lo_e, hi_e, h, lo_h, hi_h) such that a point P on the face plane
    lies at least ``VERIFY_MARGIN_MM`` inside the face rectangle when ``lo_e <= e.P <= hi_e`` and
    ``lo_h <= h.P <= hi_h``; None where the geometry is too thin for a safe margin (end faces,
    slivers), which sends rays on that face to the full search.
    """

    solids: tuple[ConvexSolid, ...]
    face_base: I64  # (P,) global id of each prism's face 0
    g_normals: F64  # (G, 3)
    g_offsets: F64  # (G,)
    g_roles: I64  # (G,)
    g_reflectance: F64  # (G,) NaN = Fresnel
    g_rect: tuple[tuple[F64, float, float, F64, float, float] | None, ...]
    centres: F64  # (P, 3) bounding-sphere centres, mm
    radii: F64  # (P,) bounding-sphere radii, mm
    box_lo: F64  # (P, 3) axis-aligned bounds of each solid, mm
    box_hi: F64  # (P, 3)
    corners: tuple[F64, ...]  # (2 * sides, 3) vertices of each solid, system frame, mm
    g_behind: tuple[frozenset[int], ...]  # per face: prisms wholly behind its plane (inner side)


def face_reflectance(prism: Prism, face: int) -> float:
    """Coating model of one side face: fixed power reflectance, or NaN for uncoated Fresnel.

    * refracting face with an antireflection coating: its ``reflectance_max_pct`` for both
      polarisations at every angle (the specification limit, a conservative upper bound of what
      a coating that meets it reflects); without a stated limit the face is traced uncoated;
    * mirror face (role MIRROR, or a mirror coating on an internal-reflection face): the
      coating's ``reflectance_min_pct`` (the rest is absorbed), 100 % when no floor is stated;
    * anything else: NaN (Fresnel; total internal reflection where it occurs).
    """
    f = prism.faces[face]
    coat = f.coating
    role = ROLE_CODES[f.role.value]
    if role == ROLE_REFRACT and coat.type is CoatingType.ANTIREFLECTION and coat.reflectance_max_pct is not None:
        return float(coat.reflectance_max_pct) / 100.0
    if role == ROLE_MIRROR or (role == ROLE_TIR and coat.type is CoatingType.MIRROR):
        return 1.0 if coat.reflectance_min_pct is None else float(coat.reflectance_min_pct) / 100.0
    return float("nan")


def _rect(solid: ConvexSolid, f: int) -> tuple[F64, float, float, F64, float, float] | None:
    """Verification bounds of side face f (see ``Tables``), or None."""
    n = solid.n_sides
    v0, v1 = solid.vertices_mm[f], solid.vertices_mm[(f + 1) % n]
    length = float(np.hypot(*(v1 - v0)))
    m, h_mm = VERIFY_MARGIN_MM, solid.height_mm
    if length <= 4 * m or h_mm <= 4 * m:
        return None
    e_part = np.array([(v1[0] - v0[0]) / length, (v1[1] - v0[1]) / length, 0.0])
    # the shrunk face segment must be clearly inside every other side plane
    normals_2d = solid.normals[:n] @ solid.rotation  # back to the part frame
    for j in range(n):
        if j == f:
            continue
        nj, vj = normals_2d[j, :2], solid.vertices_mm[j]  # plane j passes through vertex j
        for a in (m, length - m):
            if float(nj @ (v0 + a * e_part[:2] - vj)) > -_SAFE_MM:
                return None
    e = solid.rotation @ e_part
    h = solid.rotation @ np.array([0.0, 0.0, 1.0])
    e0 = float(e @ (solid.rotation @ np.array([v0[0], v0[1], 0.0]) + solid.translation_mm))
    h0 = float(h @ solid.translation_mm)
    return e, e0 + m, e0 + length - m, h, h0 + m, h0 + h_mm - m


def build_tables(solids: tuple[ConvexSolid, ...], prisms: tuple[Prism, ...]) -> Tables:
    """Stack the face planes of all prisms; bounds for the quick rejections; coating models."""
    counts = np.array([s.normals.shape[0] for s in solids])
    centres, radii, lo, hi, all_corners = [], [], [], [], []
    for s in solids:
        v = np.array([[x, y, z] for x, y in s.vertices_mm for z in (0.0, s.height_mm)])
        corners = v @ s.rotation.T + s.translation_mm
        all_corners.append(corners)
        c = corners.mean(axis=0)
        centres.append(c)
        radii.append(float(np.max(np.linalg.norm(corners - c, axis=1))) * (1 + 1e-9) + 1e-6)
        lo.append(corners.min(axis=0) - 1e-6)
        hi.append(corners.max(axis=0) + 1e-6)
    refl = [face_reflectance(p, f) if f < s.n_sides else float("nan")
            for s, p in zip(solids, prisms, strict=True) for f in range(s.normals.shape[0])]
    rects = tuple(_rect(s, f) if f < s.n_sides else None for s in solids for f in range(s.normals.shape[0]))
    return Tables(
        solids=solids,
        face_base=np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(np.int64),
        g_normals=np.vstack([s.normals for s in solids]),
        g_offsets=np.concatenate([s.offsets_mm for s in solids]),
        g_roles=np.array([ROLE_CODES[r] for s in solids for r in s.roles], dtype=np.int64),
        g_reflectance=np.array(refl), g_rect=rects,
        centres=np.array(centres), radii=np.array(radii), box_lo=np.array(lo), box_hi=np.array(hi),
        corners=tuple(all_corners),
        g_behind=tuple(
            frozenset(q for q, cq in enumerate(all_corners) if float(np.max(cq @ s.normals[f])) < s.offsets_mm[f] - 1e-6)
            for s in solids for f in range(s.normals.shape[0])),
    )


def pdot(nv: F64, x: F64, out: F64 | None = None, tmp: F64 | None = None, *, view_ok: bool = False) -> F64:
    """``nv . x`` for one (3,) vector and (3, n) rows, skipping zero components (exact).

    ``out`` and ``tmp`` are optional (n,) work rows; the arithmetic is the same either way.
    ``view_ok``: for a unit axis vector the row of ``x`` itself may be returned (read only).
    """
    if view_ok:
        nz = [i for i in range(3) if nv[i] != 0.0]
        if len(nz) == 1 and nv[nz[0]] == 1.0:
            return x[nz[0]]
    first = True
    for i in range(3):
        c = float(nv[i])
        if c == 0.0:
            continue
        if first:
            out = np.multiply(x[i], c, out=out)
            first = False
        else:
            assert out is not None
            out += np.multiply(x[i], c, out=tmp)
    if first:
        if out is None:
            return np.zeros(x.shape[1])
        out[...] = 0.0
    assert out is not None
    return out


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
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
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


def entry_distance(tab: Tables, p: int, o: F64, d: F64) -> tuple[F64, I64]:
    """Distance to the entry of prism p along rays in air (inf = missed), and the entry face."""
    n = o.shape[1]
    cand = _candidates(tab, p, o, d)
    count = int(np.count_nonzero(cand))
    if count == n:
        return _slab(tab.solids[p], o, d)
    t, f = np.full(n, np.inf), np.zeros(n, np.int64)
    if count:
        idx = np.flatnonzero(cand)
        t[idx], f[idx] = _slab(tab.solids[p], o[:, idx], d[:, idx])
    return t, f


def all_leave(tab: Tables, o: F64, d: F64, skip: int = -1) -> bool:
    """True when no ray in air can meet any prism but ``skip``: a proof for the whole group.

    With ``w`` the mid direction of the group, every point ``o + t d`` (t >= 0) of every ray has
    ``w . x >= min over the group of w . o`` as long as ``w . d > 0`` for all rays; bounding both
    by the component ranges of ``o`` and ``d`` (interval arithmetic) costs one pass over them. A
    prism whose vertices all lie below that level (less a margin) cannot be met. False means
    "not proven" (the caller then runs the full search), never "some ray hits".
    """
    if _lane.available() and _lane.block_ok(o) and _lane.block_ok(d) and o.shape[1]:
        ranges = _lane.box(o, d)
        if ranges is None:
            return False
        o_lo, o_hi, d_lo, d_hi = ranges
    else:
        o_lo, o_hi, d_lo, d_hi = o.min(axis=1), o.max(axis=1), d.min(axis=1), d.max(axis=1)
    w = d_lo + d_hi
    norm = float(np.sqrt(w @ w))
    if not norm > 0.0:
        return False
    w /= norm
    if float(np.minimum(w * d_lo, w * d_hi).sum()) <= 1e-6:
        return False
    level = float(np.minimum(w * o_lo, w * o_hi).sum()) - 1e-6
    return all(q == skip or float(np.max(tab.corners[q] @ w)) < level for q in range(len(tab.solids)))


def search_air(tab: Tables, o: F64, d: F64, last: I64) -> tuple[F64, I64, I64]:
    """Nearest prism entry along rays in air: (distance mm, prism or -1, face).

    ``last`` is the prism each ray has just left (-1 none): a convex solid cannot be met again
    along the same straight line, so it is not tested. Ties go to the lower prism index.
    """
    n = o.shape[1]
    best = np.full(n, np.inf)
    prism = np.full(n, -1, np.int64)
    face = np.zeros(n, np.int64)
    uniform_last = int(last[0]) if n and last.min() == last.max() else None
    for p in range(len(tab.solids)):
        if uniform_last == p:
            continue
        t, f = entry_distance(tab, p, o, d)
        upd = t < best
        if uniform_last is None:
            upd &= last != p
        best = np.where(upd, t, best)
        np.putmask(prism, upd, p)
        np.putmask(face, upd, f)
    return np.where(prism < 0, 0.0, best), prism, face


def search_inside(solid: ConvexSolid, o: F64, d: F64) -> tuple[F64, I64]:
    """Exit plane of rays inside a convex solid: (distance mm, face)."""
    n = o.shape[1]
    best = np.full(n, np.inf)
    face = np.zeros(n, np.int64)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
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
