"""Sizing of a triangular prism: beam placement clear of the apex, closing face, apex flat.

``size_triangle`` moves a ``Triangle`` along the beam until both apex faces hold their clear
apertures with border, bevel leg and (for a sharp apex no light crosses) a ground apex flat,
then places the closing face so faces 1 and 2 reach past their apertures, rounded to 0.1 mm
and within the spec's face-length limits.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from prismfab.design._face_rules import (
    APEX_FLAT_BELOW_DEG,
    apex_flat_width_mm,
    bevel_leg_mm,
    border_mm,
    round_up,
)
from prismfab.design._footprint import _reached, clear_aperture, footprints
from prismfab.design._plane import edge_normal, polygon_from_lines
from prismfab.errors import DesignCheckError
from prismfab.model import FaceRole
from prismfab.spec.types import Spec

__all__ = ["SizedTriangle", "Triangle", "face_normal", "size_triangle"]

_FAR_MM = 1.0e4


@dataclass(frozen=True, slots=True)
class Triangle:
    """A prism bounded by two faces meeting at an apex and a closing face.

    Args:
        apex: apex position at distance 1 of the entry-point parameter (see ``size_triangle``).
        dir1: unit direction from the apex along face 1 (the face the beam enters).
        dir2: unit direction from the apex along face 2.
        closing_normal: outward unit normal of the closing face (away from the apex).
        roles: (face 1, face 2, closing face) roles.
        notes: (face 1, face 2, closing face) notes.
    """

    apex: np.ndarray
    dir1: np.ndarray
    dir2: np.ndarray
    closing_normal: np.ndarray
    roles: tuple[FaceRole, FaceRole, FaceRole]
    notes: tuple[str, str, str] = ("", "", "")

    @property
    def apex_rad(self) -> float:
        """Interior apex angle."""
        return math.acos(max(-1.0, min(1.0, float(self.dir1 @ self.dir2))))

    def polygon(self, closing_mm: float, flat_mm: float = 0.0
                ) -> tuple[np.ndarray, tuple[FaceRole, ...], tuple[str, ...], int]:
        """Section (CCW, closing face first) for a closing-face distance from the apex.

        Returns:
            (vertices, roles, notes, index of the apex vertex or of the flat's first vertex).
        """
        a = self.apex
        bis = self.dir1 + self.dir2
        bis /= np.linalg.norm(bis)
        lines = [  # (point, outward normal, role, note)
            (a, _outward(self.dir1, bis), self.roles[0], self.notes[0]),
            (a, _outward(self.dir2, bis), self.roles[1], self.notes[1]),
            (a + closing_mm * self.closing_normal, self.closing_normal, self.roles[2],
             self.notes[2]),
        ]
        if flat_mm > 0:
            depth = flat_mm / (2.0 * math.tan(self.apex_rad / 2.0))
            lines.append((a + depth * bis, -bis, FaceRole.GROUND, "apex flat"))
        lines.sort(key=lambda ln: math.atan2(ln[1][1], ln[1][0]))
        k = next(i for i, ln in enumerate(lines) if ln[1] is self.closing_normal)
        lines = lines[k:] + lines[:k]
        verts = polygon_from_lines([ln[0] for ln in lines], [ln[1] for ln in lines])
        apex_i = min(range(len(verts)), key=lambda i: float(np.linalg.norm(verts[i] - a)))
        return verts, tuple(ln[2] for ln in lines), tuple(ln[3] for ln in lines), apex_i


def _outward(direction: np.ndarray, bisector: np.ndarray) -> np.ndarray:
    n = np.array([direction[1], -direction[0]])
    return n if float(n @ bisector) < 0 else -n


@dataclass(frozen=True, slots=True)
class SizedTriangle:
    """Result of ``size_triangle``."""

    vertices: np.ndarray
    roles: tuple[FaceRole, ...]
    notes: tuple[str, ...]
    entry_offset_mm: float  # distance of the chief entry point from the apex along face 1
    closing_mm: float
    flat_mm: float


def size_triangle(
    spec: Spec,
    *,
    make: Callable[[float], Triangle],
    trace: Callable[[np.ndarray, tuple[FaceRole, ...]], list],
    section: int,
    light_at_apex: bool = False,
    path: str = "design",
) -> SizedTriangle:
    """Place the beam on a triangle and size it from the traced footprints.

    Args:
        spec: the spec (margin, grade, bevel, face limits).
        make: ``make(s)`` gives the triangle whose chief entry point lies ``s`` mm from the apex
            along face 1 (the beam stays put, the prism moves).
        trace: ``trace(vertices, roles)`` traces every condition with this prism (index
            ``section``) in place and returns ``trace_groups`` output.
        section: index of this prism among the traced sections.
        light_at_apex: True if the family needs light at the apex (no flat, no clearance).
        path: spec field named in errors.

    Raises:
        DesignCheckError: the beam cannot be kept on the faces, or a face exceeds ``max_face_mm``.
    """
    fab = spec.fabrication
    margin, grade, bevel = fab.clear_aperture_margin, fab.grade, fab.bevel_mm
    s = max(spec.beam.diameter_in_plane_mm, 1.0)
    tri = make(s)
    alpha = tri.apex_rad
    flat = 0.0
    if not light_at_apex and math.degrees(alpha) < APEX_FLAT_BELOW_DEG:
        flat = round_up(apex_flat_width_mm(bevel))
    cut = flat / (2.0 * math.sin(alpha / 2.0)) if flat else 0.0
    leg_apex = bevel_leg_mm(bevel, math.pi / 2 + alpha / 2 if flat else alpha)

    def apertures(s_mm: float) -> tuple[list, bool]:
        t = make(s_mm)
        verts, roles, _notes, _ = t.polygon(_FAR_MM, 0.0)
        traced = trace(verts, roles)
        cas, complete = [], True
        for k in (0, 1):
            fi = _face_of(verts, t, k)
            d = t.dir1 if k == 0 else t.dir2
            ax, ay, dx, dy = float(t.apex[0]), float(t.apex[1]), float(d[0]), float(d[1])
            fps = footprints(traced, section, fi,
                             lambda h, ax=ax, ay=ay, dx=dx, dy=dy:
                             (float(h.point[0]) - ax) * dx + (float(h.point[1]) - ay) * dy)
            complete &= _reached(traced, section, fi)
            cas.append(clear_aperture(fps, margin) if fps else None)
        return cas, complete

    def shortfall(cas_: list) -> list[float]:
        needs_ = []
        for lo, hi in cas_:
            clear = 0.0 if light_at_apex else cut + leg_apex + border_mm(hi - lo, grade)
            needs_.append(clear - lo)
        return needs_

    prev: tuple[float, list] | None = None
    s_bad = 0.0  # largest entry offset seen that does not hold the beam
    for _ in range(60):
        cas, complete = apertures(s)
        if not complete:  # part of the beam misses a face: move it away from the apex
            s_bad, s, prev = s, 1.5 * s + 0.5, None
            if s > 100.0 * max(spec.beam.diameter_in_plane_mm, 1.0):
                raise DesignCheckError(path, "part of the beam misses a face however far it is "
                                       "kept from the apex (the prisms are too close or too "
                                       "small for the beam)")
            continue
        needs = shortfall(cas)
        if max(needs) <= 1e-7:
            s, cas = _shrink(s_bad, s, cas, apertures, shortfall)
            break
        s_bad = s
        # the footprints move linearly with s: step by the slope seen so far (secant)
        step = max(needs) * 1.02
        if prev is not None and s != prev[0]:
            slopes = [(p_need - n_) / (s - prev[0]) for p_need, n_ in zip(prev[1], needs,
                                                                          strict=True)]
            step = max((n_ / sl for n_, sl in zip(needs, slopes, strict=True) if sl > 1e-6),
                       default=step) * 1.001 + 1e-6
        prev = (s, needs)
        s += max(step, 1e-6)
    else:
        raise DesignCheckError(path, "the beam cannot be kept on the faces clear of the apex")
    tri = make(s)
    # closing distance: faces 1 and 2 must reach past their clear apertures
    closing = 0.0
    for k, ca in enumerate(cas):
        d = tri.dir1 if k == 0 else tri.dir2
        lo, hi = ca
        corner = _corner_angle(tri, d)
        far = hi + border_mm(hi - lo, grade) + bevel_leg_mm(bevel, corner)
        closing = max(closing, far * float(d @ tri.closing_normal))
    closing = _round_closing(tri, closing)
    for _ in range(200):
        verts, roles, notes, _ = tri.polygon(closing, flat)
        if _closing_ok(spec, tri, verts, roles, trace, section):
            break
        closing = _round_closing(tri, closing * 1.03 + 0.1)
    else:
        raise DesignCheckError(path, "the closing face cannot hold the beam")
    verts, roles, notes, _ = tri.polygon(closing, flat)
    lengths = [float(np.linalg.norm(verts[(i + 1) % len(verts)] - verts[i])) for i in range(len(verts))]
    short = [L for L, n in zip(lengths, notes, strict=True) if n != "apex flat"]
    if min(short) < fab.min_face_mm - 1e-9:
        closing = _round_closing(tri, closing * fab.min_face_mm / min(short))
        verts, roles, notes, _ = tri.polygon(closing, flat)
        lengths = [float(np.linalg.norm(verts[(i + 1) % len(verts)] - verts[i]))
                   for i in range(len(verts))]
    if max(lengths) > fab.max_face_mm + 1e-9:
        raise DesignCheckError(
            "fabrication.max_face_mm",
            f"a face of {max(lengths):.1f} mm is needed, above the limit of {fab.max_face_mm:g} mm",
            reachable="raise fabrication.max_face_mm, or reduce the beam size or the magnification")
    return SizedTriangle(verts, roles, notes, s, closing, flat)


def _shrink(s_bad: float, s_good: float, cas: list, apertures: Callable, shortfall: Callable
            ) -> tuple[float, list]:
    """Bisect back towards the smallest entry offset that holds the beam.

    The secant steps of ``size_triangle`` assume footprints that move linearly with the entry
    offset; where they do not (a condition whose rays first meet a face near the apex), a step
    can overshoot far past the smallest size, and the prism comes out needlessly large. The
    bracket [s_bad, s_good] is narrowed until it is within 0.5 % (or 0.01 mm); one trace at
    ``0.98 s_good`` first tells whether there is anything to gain (the usual, linear case).
    """
    probe = 0.98 * s_good
    if probe <= s_bad:
        return s_good, cas
    cas_probe, complete = apertures(probe)
    if not (complete and max(shortfall(cas_probe)) <= 1e-7):
        return s_good, cas
    s_good, cas = probe, cas_probe
    for _ in range(40):
        if s_good - s_bad <= max(0.005 * s_good, 0.01):
            break
        mid = 0.5 * (s_bad + s_good)
        cas_mid, complete = apertures(mid)
        if complete and max(shortfall(cas_mid)) <= 1e-7:
            s_good, cas = mid, cas_mid
        else:
            s_bad = mid
    return s_good, cas



def _face_of(verts: np.ndarray, tri: Triangle, k: int) -> int:
    """Index of triangle face k (0 = face 1, 1 = face 2) in a polygon from ``Triangle.polygon``."""
    d = tri.dir1 if k == 0 else tri.dir2
    for i in range(len(verts)):
        e = verts[(i + 1) % len(verts)] - verts[i]
        e = e / np.linalg.norm(e)
        if abs(abs(float(e @ d)) - 1.0) < 1e-9 and abs(
                _perp_dist(verts[i], tri.apex, d)) < 1e-6:
            return i
    raise ValueError("face not found")


def _perp_dist(p: np.ndarray, a: np.ndarray, d: np.ndarray) -> float:
    r = p - a
    return float(r[0] * d[1] - r[1] * d[0])


def _corner_angle(tri: Triangle, d: np.ndarray) -> float:
    """Interior angle where a face leaving the apex along ``d`` meets the closing face.

    ``asin(d . n_closing)`` is exact for an acute corner and smaller than an obtuse one, which
    only makes the reserved bevel leg longer (conservative).
    """
    return math.asin(min(1.0, abs(float(d @ tri.closing_normal))))


def _round_closing(tri: Triangle, closing: float) -> float:
    """Closing distance whose longer apex face length is a multiple of 0.1 mm."""
    c1 = float(tri.dir1 @ tri.closing_normal)
    c2 = float(tri.dir2 @ tri.closing_normal)
    # round the face perpendicular-most to the closing face (the defining leg)
    c = max(c1, c2)
    return round_up(closing / c) * c


def _closing_ok(spec: Spec, tri: Triangle, verts: np.ndarray, roles: tuple, trace: Callable,
                section: int) -> bool:
    """True when an optical closing face holds its clear aperture and no ray is blocked."""
    traced = trace(verts, roles)
    for _g, paths in traced:
        for path in paths:
            for h in path.hits:
                if h.section == section and h.event == "blocked":
                    return False
    if not roles[0].is_optical:  # closing face is face 0 (see Triangle.polygon)
        return True
    fps = footprints(traced, section, 0, lambda h: h.along_mm)
    if not fps:
        return True
    lo, hi = clear_aperture(fps, spec.fabrication.clear_aperture_margin)
    length = float(np.linalg.norm(verts[1] - verts[0]))
    b = border_mm(hi - lo, spec.fabrication.grade) + spec.fabrication.bevel_mm
    return lo >= b and hi <= length - b


def face_normal(verts: np.ndarray, index: int) -> np.ndarray:
    """Outward normal of a face (re-exported for family modules)."""
    return edge_normal(verts, index)

