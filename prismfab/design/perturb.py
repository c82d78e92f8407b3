"""Chief-ray re-trace through perturbed face planes, for tolerance sensitivities.

A prism is held as planes (a point and an outward unit normal per side face, system frame), so
a face can be tilted out of the principal section (pyramidal error), turned in the section
(angle error), or the whole prism moved (mount pose), and the same beam re-traced exactly with
the vector Snell law. The trace is sequential: the face order is found once on the nominal
system and then kept, so small perturbations give smooth derivatives. Every function works on
a batch axis ``B`` (cases, builds) with numpy only.

Conventions: system frame as in DEVELOPERS.md; angles in radians; lengths in mm.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from prismfab.errors import DesignCheckError
from prismfab.model import Prism, System

__all__ = [
    "Event",
    "Nominal",
    "Observation",
    "find_path",
    "observe",
    "prism_planes",
    "rotate_planes",
    "trace_path",
]

_Y = np.array([0.0, 1.0, 0.0])
_EPS_MM = 1e-9
MAX_EVENTS = 32


@dataclass(frozen=True, slots=True)
class Event:
    """One surface event of the chief ray: prism index, side-face index, and what happens."""

    prism: int
    face: int
    kind: str  # "in" (air -> glass), "out" (glass -> air), "reflect"


@dataclass(frozen=True, slots=True)
class Nominal:
    """The nominal sequential path of one system at one set of indices.

    Args:
        events: surface events in beam order.
        points_mm: chief-ray points in the system frame: start, every hit, a point 10 mm after.
        hits_mm: per event, the hit point (system frame).
    """

    events: tuple[Event, ...]
    points_mm: tuple[tuple[float, float, float], ...]
    hits_mm: tuple[tuple[float, float, float], ...]


@dataclass(frozen=True, slots=True)
class Observation:
    """What the output beam does, per batch row (arrays of shape (B,)).

    Args:
        pointing_in_rad: signed in-plane direction of the output, from the input direction,
            positive turning +z towards +x (about +y).
        pointing_out_rad: out-of-plane elevation of the output (asin of its y component).
        offset_mm: in-plane position of the output chief ray, across a reference output ray,
            at a reference plane through the reference exit point.
        magnification: in-plane width ratio out/in.
    """

    pointing_in_rad: np.ndarray
    pointing_out_rad: np.ndarray
    offset_mm: np.ndarray
    magnification: np.ndarray


def prism_planes(prism: Prism) -> tuple[np.ndarray, np.ndarray]:
    """Side-face planes of a prism in the system frame.

    Returns:
        (points, normals), each (n_faces, 3): a point on face i (its start vertex at mid-height)
        and its outward unit normal.
    """
    rot = np.array(prism.pose.rotation)
    shift = np.array(prism.pose.translation_mm)
    verts = np.array(prism.vertices_mm, dtype=float)
    nxt = np.roll(verts, -1, axis=0)
    edge = nxt - verts
    normal = np.column_stack([edge[:, 1], -edge[:, 0], np.zeros(len(verts))])
    normal /= np.linalg.norm(normal, axis=1)[:, None]
    pts = np.column_stack([verts, np.full(len(verts), prism.height_mm / 2.0)])
    return pts @ rot.T + shift, normal @ rot.T


def _end_planes(prism: Prism) -> tuple[np.ndarray, np.ndarray]:
    rot = np.array(prism.pose.rotation)
    shift = np.array(prism.pose.translation_mm)
    pts = np.array([[0.0, 0.0, 0.0], [0.0, 0.0, prism.height_mm]]) @ rot.T + shift
    nrm = np.array([[0.0, 0.0, -1.0], [0.0, 0.0, 1.0]]) @ rot.T
    return pts, nrm


def _refract(d: np.ndarray, n: np.ndarray, n1: np.ndarray, n2: np.ndarray) -> np.ndarray:
    """Vector Snell law, batched; NaN where the refraction is impossible (TIR)."""
    cos_i = np.einsum("...i,...i->...", d, n)
    sign = np.where(cos_i > 0, -1.0, 1.0)  # orient the normal against the ray
    nn = n * sign[..., None]
    c = -np.einsum("...i,...i->...", d, nn)
    eta = n1 / n2
    k = 1.0 - eta**2 * (1.0 - c**2)
    with np.errstate(invalid="ignore"):
        root = np.sqrt(k)
    return eta[..., None] * d + (eta * c - root)[..., None] * nn


def _reflect(d: np.ndarray, n: np.ndarray) -> np.ndarray:
    return d - 2.0 * np.einsum("...i,...i->...", d, n)[..., None] * n


def _snell_event(kind: str, d: np.ndarray, n: np.ndarray, n_glass: np.ndarray) -> np.ndarray:
    one = np.ones_like(n_glass)
    if kind == "in":
        return _refract(d, n, one, n_glass)
    if kind == "out":
        return _refract(d, n, n_glass, one)
    return _reflect(d, n)


def find_path(system: System, n_glass: np.ndarray) -> Nominal:
    """Find the chief ray's face sequence by a non-sequential search of the nominal system.

    Args:
        system: the solved system (prisms at their poses).
        n_glass: index of each prism at the wavelength traced, shape (n_prisms,).

    Raises:
        DesignCheckError: the chief ray meets a ground or end face, or never leaves a prism.
    """
    planes = [prism_planes(p) for p in system.prisms]
    ends = [_end_planes(p) for p in system.prisms]
    p = np.array(system.beam.origin_mm, dtype=float)
    d = np.array(system.beam.direction, dtype=float)
    d /= np.linalg.norm(d)
    events: list[Event] = []
    hits: list[np.ndarray] = []
    points = [p.copy()]
    visited: set[int] = set()
    while len(events) < MAX_EVENTS:
        k, face, t = _next_prism(planes, ends, p, d, visited)
        if k < 0:
            break
        visited.add(k)
        p = p + t * d
        events.append(Event(k, face, "in"))
        hits.append(p.copy())
        points.append(p.copy())
        d = _snell_event("in", d, planes[k][1][face], np.asarray(n_glass[k]))
        p, d = _inside(system.prisms[k], k, planes[k], ends[k], p, d, float(n_glass[k]),
                       events, hits, points)
    if not events:
        raise DesignCheckError("beam", "the chief ray misses every prism of the system")
    points.append(p + 10.0 * d)
    tup = [tuple(float(v) for v in q) for q in points]
    return Nominal(tuple(events), tuple(tup), tuple(tuple(float(v) for v in h) for h in hits))  # type: ignore[arg-type]


def _next_prism(planes, ends, p, d, visited):  # type: ignore[no-untyped-def]
    """Nearest prism the ray enters: (index, entry face, distance) or (-1, -1, 0)."""
    best = (-1, -1, np.inf)
    for k, ((pts, nrm), (epts, enrm)) in enumerate(zip(planes, ends, strict=True)):
        if k in visited:
            continue
        allp, alln = np.vstack([pts, epts]), np.vstack([nrm, enrm])
        dn = alln @ d
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.einsum("ij,ij->i", allp - p, alln) / dn
        t_in = np.max(np.where(dn < 0, t, -np.inf))
        t_out = np.min(np.where(dn > 0, t, np.inf))
        if t_in > _EPS_MM and t_in < t_out - _EPS_MM and t_in < best[2]:
            face = int(np.argmax(np.where(dn < 0, t, -np.inf)))
            if face >= len(pts):
                raise DesignCheckError("beam", f"the chief ray enters prism {k + 1} through an end face")
            best = (k, face, float(t_in))
    return best


def _inside(prism, k, planes, ends, p, d, n, events, hits, points):  # type: ignore[no-untyped-def]
    """Follow the ray inside prism k until it leaves; append events; return the exit ray."""
    allp, alln = np.vstack([planes[0], ends[0]]), np.vstack([planes[1], ends[1]])
    for _ in range(MAX_EVENTS):
        dn = alln @ d
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.einsum("ij,ij->i", allp - p, alln) / dn
        t = np.where((dn > 1e-15) & (t > _EPS_MM), t, np.inf)
        face = int(np.argmin(t))
        if face >= len(planes[0]) or not np.isfinite(t[face]):
            raise DesignCheckError("beam", f"the chief ray leaves prism {prism.name} through an end face")
        p = p + t[face] * d
        role = prism.faces[face].role
        if not role.is_optical:
            raise DesignCheckError(
                "beam", f"the chief ray meets ground face {prism.faces[face].label} of prism {prism.name}")
        out = _refract(d, alln[face], np.asarray(n), np.asarray(1.0))
        kind = "reflect" if role.reflects or not np.all(np.isfinite(out)) else "out"
        events.append(Event(k, face, kind))
        hits.append(p.copy())
        points.append(p.copy())
        d = _reflect(d, alln[face]) if kind == "reflect" else out
        if kind == "out":
            return p, d
    raise DesignCheckError("beam", f"the chief ray is trapped in prism {prism.name}")


def trace_path(
    events: tuple[Event, ...],
    points: np.ndarray,
    normals: np.ndarray,
    n_glass: np.ndarray,
    start: np.ndarray,
    direction: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Sequential exact trace of a batch of rays through a batch of perturbed systems.

    Args:
        events: the face sequence (from ``find_path``).
        points, normals: face planes, shape (B, n_prisms, n_faces_max, 3), system frame.
        n_glass: index per prism, shape (B, n_prisms).
        start, direction: input rays, shape (B, 3).

    Returns:
        (points, directions) of the output rays, (B, 3); NaN rows where a refraction failed.
    """
    p, d = start.astype(float), direction.astype(float)
    for ev in events:
        q, n = points[:, ev.prism, ev.face], normals[:, ev.prism, ev.face]
        t = np.einsum("bi,bi->b", q - p, n) / np.einsum("bi,bi->b", d, n)
        p = p + t[:, None] * d
        d = _snell_event(ev.kind, d, n, n_glass[:, ev.prism])
    return p, d


def rotate_planes(points: np.ndarray, normals: np.ndarray, axis: np.ndarray, pivot: np.ndarray,
                  angle_rad: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rotate planes about an axis through a pivot (Rodrigues), batched.

    Args:
        points, normals: (..., 3).
        axis: unit axis (..., 3) broadcastable; pivot: (..., 3); angle_rad: (...,).
    """
    def rot(v: np.ndarray) -> np.ndarray:
        c, s = np.cos(angle_rad)[..., None], np.sin(angle_rad)[..., None]
        a = np.broadcast_to(axis, v.shape)
        dot = np.einsum("...i,...i->...", a, v)[..., None]
        return v * c + np.cross(a, v) * s + a * dot * (1.0 - c)

    return rot(points - pivot) + pivot, rot(normals)


def observe(p_chief: np.ndarray, d_chief: np.ndarray, p_side: np.ndarray, d_side: np.ndarray, *,
            ref_point: np.ndarray, ref_direction: np.ndarray, input_direction: np.ndarray,
            side_step_mm: float) -> Observation:
    """Pointing, offset and magnification of traced output rays (batched).

    Args:
        p_chief, d_chief: output chief rays (B, 3).
        p_side, d_side: output rays of an input ray moved ``side_step_mm`` in plane (B, 3).
        ref_point, ref_direction: the nominal output chief ray (3,), defines the offset plane.
        input_direction: input chief-ray direction (3,).
        side_step_mm: in-plane input separation of the two rays.
    """
    u = np.cross(_Y, ref_direction)
    u /= np.linalg.norm(u)

    def at_ref(p: np.ndarray, d: np.ndarray) -> np.ndarray:
        t = np.einsum("bi,i->b", ref_point - p, ref_direction) / (d @ ref_direction)
        return p + t[:, None] * d

    q0, q1 = at_ref(p_chief, d_chief), at_ref(p_side, d_side)
    cross_y = np.cross(np.broadcast_to(input_direction, d_chief.shape), d_chief) @ _Y
    proj_in = np.array([input_direction[0], 0.0, input_direction[2]])
    dot = d_chief[:, 0] * proj_in[0] + d_chief[:, 2] * proj_in[2]
    return Observation(
        pointing_in_rad=np.arctan2(cross_y, dot),
        pointing_out_rad=np.arcsin(np.clip(d_chief[:, 1], -1.0, 1.0)),
        offset_mm=(q0 - ref_point) @ u,
        magnification=np.abs((q1 - q0) @ u) / side_step_mm,
    )
