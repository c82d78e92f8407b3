"""Single anamorphic prism with the output on the input axis (``output: collinear``).

Geometry (an anamorphic relative of the Dove prism): the beam enters a steep entry face at
``phi1`` (width x ``k1``), is turned back towards the axis by total internal reflection on the
base T, and leaves a *tilted* exit face that refracts it back parallel to the input
(width x ``k2 < 1``), so ``M = k1 k2`` (Duarte, Tunable Lasers Handbook, ch. 2). Inside the
glass the beam rises at ``turn`` towards the exit; the exit face refracts it by exactly
``turn`` (internal incidence ``psi2``, external ``phi2``, ``phi2 - psi2 = turn``, Snell). The
reflection turns it by ``dev1 + turn`` (``dev1 = phi1 - psi1``), so the base lies along the
bisector ``(turn - dev1) / 2`` and is met at ``90 deg - (dev1 + turn)/2``.

Why a tilted exit: with a normal exit the last internal segment lies on the axis, and its start
point on the base puts the entry point outside the base's half plane for every geometry (the
section would not be convex). With a tilted exit the entry point E and the exit point X both lie
on the axis and the section is the triangle E-side / X-side / base.

Placement (the solved entry height): the entry point E is the chief ray's crossing of the entry
face, ``s`` mm below the apex A (entry face meets exit face). X is where the exit face crosses the
axis, the reflection point is where the ray from E at ``-dev1`` meets the ray into X at ``turn``,
and the base passes through it. Every length scales with ``s`` about E, so the design is one
number: the smallest ``s`` whose faces hold their clear apertures (sizing.py rules), rounded so
the base is a multiple of 0.1 mm.

The internal exit turn is ``INLINE_TURN_DEG`` (common practice for a compact part: a smaller
turn makes the prism long, a larger one costs magnification at the exit); when the target needs
an entry beyond the incidence limit the turn is lowered down to ``MIN_TURN_DEG``. ``M < 1`` uses
the expander of ``1/M`` backwards (rotated by 180 deg, entry and exit swapped).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from prismfab.design import sizing
from prismfab.design.common import (
    edge_normal,
    line_intersection,
    polygon_from_lines,
    trace_plane,
    unit,
)
from prismfab.errors import DesignCheckError, SolveError
from prismfab.model import FaceRole

__all__ = [
    "INLINE_TURN_DEG",
    "InlineAngles",
    "entry_for_k",
    "exit_k",
    "exit_psi_for_turn",
    "inline_angles",
    "inline_reach",
    "size_scaled",
]

INLINE_TURN_DEG = 12.0
"""Default internal exit turn of the collinear prism (common practice: compact, exit < 35 deg)."""
MIN_TURN_DEG = 3.0
"""Smallest internal exit turn tried before giving up (the prism grows as 1/tan(turn))."""
SHARP_CORNER_DEG = sizing.APEX_FLAT_BELOW_DEG


def exit_k(n: float, psi2_rad: float) -> float:
    """Width ratio ``cos phi2 / cos psi2`` of a glass-to-air exit at internal incidence psi2."""
    return math.cos(math.asin(n * math.sin(psi2_rad))) / math.cos(psi2_rad)


def exit_psi_for_turn(n: float, turn_rad: float) -> float:
    """Internal incidence psi2 at which an exit refraction turns the ray by ``turn_rad``.

    ``asin(n sin psi2) - psi2`` grows monotonically from 0 to ``pi/2 - critical``; bisection.
    """
    lo, hi = 0.0, math.asin(1.0 / n)
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if math.asin(min(1.0, n * math.sin(mid))) - mid < turn_rad else (lo, mid)
    return 0.5 * (lo + hi)


def entry_for_k(n: float, k1: float) -> float:
    """Entry incidence phi1 (rad) whose width ratio ``cos psi1 / cos phi1`` is ``k1 >= 1``."""
    lo, hi = 0.0, math.radians(89.999)
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        k = math.cos(math.asin(math.sin(mid) / n)) / math.cos(mid)
        lo, hi = (mid, hi) if k < k1 else (lo, mid)
    return 0.5 * (lo + hi)


@dataclass(frozen=True, slots=True)
class InlineAngles:
    """Chief-ray angles of the collinear expander (rad): entry, internal turns, exit."""

    phi1: float
    psi1: float
    turn: float
    psi2: float

    @property
    def dev1(self) -> float:
        """Turn of the entry refraction (the internal ray runs at ``-dev1``)."""
        return self.phi1 - self.psi1

    @property
    def phi2(self) -> float:
        """External exit angle."""
        return self.psi2 + self.turn

    @property
    def tir_incidence(self) -> float:
        """Incidence on the base."""
        return math.pi / 2 - (self.dev1 + self.turn) / 2


def inline_angles(m: float, n: float, turn_rad: float) -> InlineAngles | None:
    """Angles of the collinear expander of magnification ``m > 1`` (None if k1 < 1 needed)."""
    psi2 = exit_psi_for_turn(n, turn_rad)
    k1 = m / exit_k(n, psi2)
    if k1 <= 1.0:
        return None
    phi1 = entry_for_k(n, k1)
    return InlineAngles(phi1, math.asin(math.sin(phi1) / n), turn_rad, psi2)


def inline_reach(n: float, max_incidence_deg: float) -> float:
    """Largest expansion of the collinear prism: entry at the limit, exit turn ``MIN_TURN_DEG``."""
    phi = math.radians(max_incidence_deg)
    k1 = math.cos(math.asin(math.sin(phi) / n)) / math.cos(phi)
    return k1 * exit_k(n, exit_psi_for_turn(n, math.radians(MIN_TURN_DEG)))


def choose_angles(m: float, n: float, max_incidence_deg: float) -> InlineAngles | None:
    """The default turn, lowered in 0.5 deg steps until the entry stays under the limit."""
    turn = INLINE_TURN_DEG
    while turn >= MIN_TURN_DEG - 1e-9:
        a = inline_angles(m, n, math.radians(turn))
        if a is not None and math.degrees(a.phi1) <= max_incidence_deg:
            return a
        turn -= 0.5
    return None


# --------------------------------------------------------------------------- section


def expander_section(a: InlineAngles, s_mm: float, flat_mm: float
                     ) -> tuple[np.ndarray, tuple[FaceRole, ...], tuple[str, ...], np.ndarray]:
    """Section (plane coordinates, CCW) of the expander with E at the origin.

    Returns:
        (vertices, roles, notes, exit point X on the axis).
    """
    e = np.zeros(2)
    n_entry = unit(math.pi - a.phi1)  # outward: against the inward normal at -phi1
    u_entry = np.array([math.sin(a.phi1), math.cos(a.phi1)])  # along the face, up to the apex
    apex = e + s_mm * u_entry
    n_exit = unit(a.phi2)  # outward normal of the exit face
    u_exit = np.array([-n_exit[1], n_exit[0]])
    x_pt = line_intersection(apex, u_exit, e, np.array([1.0, 0.0]))
    p_r = line_intersection(e, unit(-a.dev1), x_pt, unit(a.turn))
    mid = (a.turn - a.dev1) / 2.0
    n_base = unit(mid - math.pi / 2)
    lines = [(p_r, n_base, FaceRole.TIR, "internal reflection"),
             (x_pt, n_exit, FaceRole.EXIT, "tilted exit"),
             (apex, n_entry, FaceRole.ENTRY, "")]
    verts, roles, notes = _with_flats(lines, flat_mm)
    return verts, roles, notes, x_pt


def _with_flats(lines: list, flat_mm: float) -> tuple[np.ndarray, tuple, tuple]:
    """Polygon of the face lines, with a ground flat on every corner sharper than 30 deg."""
    verts = polygon_from_lines([ln[0] for ln in lines], [ln[1] for ln in lines])
    if flat_mm <= 0:
        return verts, tuple(ln[2] for ln in lines), tuple(ln[3] for ln in lines)
    out = []
    for i, ln in enumerate(lines):
        v = verts[i]  # corner between face i-1 and face i
        ni, nj = ln[1], lines[i - 1][1]
        angle = math.pi - math.acos(max(-1.0, min(1.0, float(ni @ nj))))
        if math.degrees(angle) < SHARP_CORNER_DEG:
            bis = -(ni + nj) / np.linalg.norm(ni + nj)  # into the glass
            depth = flat_mm / (2.0 * math.tan(angle / 2.0))
            out.append((v + depth * bis, -bis, FaceRole.GROUND, "apex flat"))
        out.append(ln)
    verts = polygon_from_lines([ln[0] for ln in out], [ln[1] for ln in out])
    return verts, tuple(ln[2] for ln in out), tuple(ln[3] for ln in out)


def reversed_section(verts: np.ndarray, roles: tuple, x_pt: np.ndarray) -> tuple[np.ndarray, tuple]:
    """The expander turned by 180 deg about the axis point between E and X, entry/exit swapped.

    The old exit point X becomes the entry point at the origin and E the exit point at X.
    """
    swap = {FaceRole.ENTRY: FaceRole.EXIT, FaceRole.EXIT: FaceRole.ENTRY}
    return x_pt - verts, tuple(swap.get(r, r) for r in roles)


# --------------------------------------------------------------------------- sizing


def face_shortfall_mm(spec, verts: np.ndarray, roles: tuple, traced: list, section: int
                      ) -> float | None:
    """Worst shortfall (mm, > 0 = too small) of any optical face's clear aperture plus its
    borders and bevel legs (sizing.py rules); None when a ray misses a face or is blocked."""
    fab = spec.fabrication
    n = len(verts)
    for _g, paths in traced:
        for p in paths:
            if not p.complete:
                return None
    worst = -math.inf
    for i, role in enumerate(roles):
        if not role.is_optical:
            continue
        fps = sizing.footprints(traced, section, i, lambda h: h.along_mm)
        if not fps or not sizing._reached(traced, section, i):
            return None
        lo, hi = sizing.clear_aperture(fps, fab.clear_aperture_margin)
        border = sizing.border_mm(hi - lo, fab.grade)
        length = float(np.linalg.norm(verts[(i + 1) % n] - verts[i]))
        leg0 = sizing.bevel_leg_mm(fab.bevel_mm, _interior(verts, i))
        leg1 = sizing.bevel_leg_mm(fab.bevel_mm, _interior(verts, (i + 1) % n))
        worst = max(worst, border + leg0 - lo, hi + border + leg1 - length)
    return worst


def _interior(verts: np.ndarray, i: int) -> float:
    a, b = edge_normal(verts, i - 1), edge_normal(verts, i)
    return math.pi - math.acos(max(-1.0, min(1.0, float(a @ b))))


def size_scaled(spec, *, make: Callable[[float], tuple[np.ndarray, tuple]],
                trace: Callable[[np.ndarray, tuple], list], section: int,
                defining_face: int, path: str = "design") -> float:
    """Smallest scale ``s`` at which the section ``make(s)`` holds the beam, then rounded.

    The section grows with ``s`` about the chief entry point (the beam stays put), so the
    shortfall falls with ``s``: grow by 1.5x until it holds, bisect to 0.2 %, then round ``s``
    so the defining face (whose length is affine in ``s``) is a multiple of 0.1 mm and no face
    is under ``min_face_mm``.

    Raises:
        DesignCheckError: no size holds the beam, or a face beyond ``max_face_mm``.
    """
    def ok(s_mm: float) -> bool:
        v, r = make(s_mm)
        short = face_shortfall_mm(spec, v, r, trace(v, r), section)
        return short is not None and short <= 1e-9

    s_bad, s = 0.0, max(spec.beam.diameter_in_plane_mm, 1.0)
    while not ok(s):
        s_bad, s = s, 1.5 * s
        if s > 1e5:
            raise DesignCheckError(path, "the beam cannot be kept on the faces of the prism")
    while s - s_bad > max(0.002 * s, 1e-3):
        mid = 0.5 * (s + s_bad)
        s_bad, s = (s_bad, mid) if ok(mid) else (mid, s)
    s = _rounded(make, s, defining_face, spec.fabrication.min_face_mm)
    lengths = _lengths(make(s)[0])
    if max(lengths) > spec.fabrication.max_face_mm + 1e-9:
        raise DesignCheckError(
            "fabrication.max_face_mm",
            f"a face of {max(lengths):.1f} mm is needed, above the limit of "
            f"{spec.fabrication.max_face_mm:g} mm",
            reachable="raise fabrication.max_face_mm, or reduce the beam size or the magnification")
    return s


def _lengths(verts: np.ndarray) -> list[float]:
    return [float(np.linalg.norm(verts[(i + 1) % len(verts)] - verts[i])) for i in range(len(verts))]


def _rounded(make: Callable, s: float, face: int, min_face_mm: float) -> float:
    """``s`` raised so face ``face`` is a whole number of 0.1 mm and every face >= min_face."""
    l0, l1 = _lengths(make(s)[0]), _lengths(make(2.0 * s)[0])
    slope = (l1[face] - l0[face]) / s
    short = [(b - a) / s for a, b in zip(l0, l1, strict=True)]
    need = max([s] + [s + (min_face_mm - a) / k for a, k in zip(l0, short, strict=True)
                      if k > 1e-12 and a < min_face_mm])
    target = sizing.round_up(l0[face] + slope * (need - s))
    return s + (target - l0[face]) / slope


def chief_offset_mm(verts: np.ndarray, roles: tuple, n: float) -> float:
    """Lateral offset of the traced output chief ray from the axis (plane trace, mm)."""
    from prismfab.design.common import Section

    path = trace_plane([Section(verts, roles, n)], (-1e3, 0.0), 0.0)
    if not path.complete:
        raise SolveError("design.output", "the chief ray does not pass the collinear prism")
    p, d = path.points[-1], path.direction
    return float(p[1] - d[1] / d[0] * p[0]) if abs(d[0]) > 0 else math.inf
