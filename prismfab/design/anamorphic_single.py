"""One prism that changes the in-plane beam width by M.

* ``output: deviated`` with ``entry_aoi_deg`` unset: the exit face (the entry face when M < 1,
  the prism used backwards) is the *normal face*, tilted by ``exit_tilt_deg`` off normal against
  feedback into the laser (common practice); the steep face then takes
  ``k1 = M / k2(tilt)`` (face ratios of Duarte, Tunable Lasers Handbook, ch. 2; with no tilt
  this is the closed form, derived from Snell's law,
  ``sin phi1 = sqrt((M^2-1)/(M^2-1/n^2))``, ``A = asin(sin phi1/n)``). The base is square to
  the normal face.
* ``entry_aoi_deg`` set: the entry incidence is fixed and the exit face takes the rest:
  ``k2 = M/k1`` gives the internal exit incidence ``sin^2 psi2 = (1-r^2)/(n^2-r^2)``, r = M/k1
  (from ``k2 = cos phi2 / cos psi2`` and Snell), which needs ``M <= k1``.
* ``output: parallel`` (M > 1): the beam enters at phi1, is turned back towards the input
  direction by total internal reflection on face T and leaves the exit face tilted by
  ``exit_tilt_deg``; the exit refraction turns it by the last few tenths of a degree, so T
  bisects the internal direction ``-dev1`` and the rising direction ``turn`` that the exit
  bends back to the input direction; ``M = k1 k2``. M < 1 uses the collinear prism backwards.
* ``output: collinear``: see ``prismfab.design._single_inline`` (entry face, base T, tilted exit;
  the entry height on the prism is solved so the output lies on the input axis).

Entry incidence near Brewster's angle for p light costs almost nothing; the face is then left
uncoated, and the chief-ray transmission (Fresnel loss) is reported per wavelength.
"""

from __future__ import annotations

import math

import numpy as np

from prismfab.design import _single_inline as inline
from prismfab.design import sizing
from prismfab.design.anamorphic_pair import MAX_INCIDENCE_DEG, triangle_for
from prismfab.design.common import PrismAngles, material_of, propagate_angles, trace_plane, unit
from prismfab.errors import SolveError
from prismfab.model import FaceRole, System
from prismfab.spec.types import AnamorphicSingleDesign, OutputMode, Spec

__all__ = ["MIN_TURN_DEG", "design", "fixed_entry_prism", "normal_face_prism", "parallel_angles"]

MIN_TURN_DEG = 10.0
"""Smallest turn by the base reflection of the parallel prism (reflection at <= 85 deg)."""


def fixed_entry_prism(m: float, n: float, phi1_rad: float) -> PrismAngles:
    """Prism (sense +1) with entry incidence ``phi1_rad`` and magnification ``m <= k1``."""
    psi1 = math.asin(math.sin(phi1_rad) / n)
    k1 = math.cos(psi1) / math.cos(phi1_rad)
    r = m / k1
    psi2 = math.asin(math.sqrt((1.0 - r * r) / (n * n - r * r)))
    return PrismAngles(-phi1_rad, psi1 + psi2, 1)


def normal_face_prism(m: float, n: float, tilt_rad: float) -> PrismAngles | None:
    """Two-face prism of magnification m whose normal face is tilted by ``tilt_rad``.

    M > 1: exit at internal incidence ``tilt`` (``k2 = exit_k``), entry from ``k1 = M/k2``.
    M < 1: entry at external incidence ``tilt`` (``k1 = cos psi1/cos tilt``), steep exit with
    ``k2 = M/k1``. Returns None when the magnification needs no or grazing refraction.
    """
    if m > 1.0:
        k1 = m / inline.exit_k(n, tilt_rad)
        if k1 <= 1.0:
            return None
        phi1 = inline.entry_for_k(n, k1)
        return PrismAngles(-phi1, math.asin(math.sin(phi1) / n) + tilt_rad, 1)
    psi1 = math.asin(math.sin(tilt_rad) / n)
    k2 = m * math.cos(tilt_rad) / math.cos(psi1)
    # reversed expander: the exit at internal incidence psi2 has cos(phi2)/cos(psi2) = k2
    phi2 = inline.entry_for_k(n, 1.0 / k2)  # external steep angle: same relation reversed
    psi2 = math.asin(math.sin(phi2) / n)
    return PrismAngles(-tilt_rad, psi1 + psi2, 1)


def parallel_angles(m: float, n: float, tilt_rad: float) -> inline.InlineAngles | None:
    """Angles of the parallel prism: exit internal incidence ``tilt``, turn from Snell."""
    turn = math.asin(n * math.sin(tilt_rad)) - tilt_rad
    k1 = m / inline.exit_k(n, tilt_rad)
    if k1 <= 1.0:
        return None
    phi1 = inline.entry_for_k(n, k1)
    return inline.InlineAngles(phi1, math.asin(math.sin(phi1) / n), turn, tilt_rad)


def _k1_max(n: float) -> float:
    phi = math.radians(MAX_INCIDENCE_DEG)
    return math.cos(math.asin(math.sin(phi) / n)) / math.cos(phi)


def design(spec: Spec) -> System:
    """Solve, size and assemble one anamorphic prism.

    Raises:
        SolveError: M out of reach below the incidence limit (the message gives the range).
    """
    d = spec.design
    assert isinstance(d, AnamorphicSingleDesign)
    mat = material_of(spec, d.material, path="design.material")
    wl0 = spec.beam.wavelength_nm
    n = float(mat.n(wl0))
    m = d.magnification
    if abs(max(m, 1.0 / m) - 1.0) < 1e-3:
        raise SolveError("design.magnification", f"M = {m:g} needs no prism",
                         reachable="M below 0.999 or above 1.001")
    tilt = math.radians(d.exit_tilt_deg)
    if d.output is OutputMode.COLLINEAR or (d.output is OutputMode.PARALLEL and m < 1.0):
        return _collinear(spec, d, mat, n, m)
    if d.output is OutputMode.PARALLEL:
        return _parallel(spec, d, mat, n, m, tilt)
    return _deviated(spec, d, mat, n, m, tilt)


def _reach_error(mat, wl0: float, mmax: float, what: str) -> SolveError:
    return SolveError("design.magnification",
                      f"with {mat.name} at {wl0:g} nm a single {what} prism reaches at most "
                      f"M = {mmax:.3f} below {MAX_INCIDENCE_DEG:g} deg incidence",
                      reachable=f"M = {1 / mmax:.3f} to {mmax:.3f}")


def _deviated(spec: Spec, d: AnamorphicSingleDesign, mat, n: float, m: float,
              tilt: float) -> System:
    wl0 = spec.beam.wavelength_nm
    compress = m < 1.0
    if d.entry_aoi_deg is not None:
        phi = math.radians(d.entry_aoi_deg)
        psi1 = math.asin(math.sin(phi) / n)
        k1 = math.cos(psi1) / math.cos(phi)
        if m > k1 * (1 + 1e-12) or m < 1e-3:
            raise SolveError("design.magnification",
                             f"at {d.entry_aoi_deg:g} deg entry incidence a {mat.name} prism "
                             f"reaches at most M = {k1:.3f} (normal exit)",
                             reachable=f"M up to {k1:.3f}, or a larger design.entry_aoi_deg")
        pa, closing = fixed_entry_prism(m, n, phi), "bisector"
    else:
        mmax = _k1_max(n) * inline.exit_k(n, tilt)
        if max(m, 1.0 / m) > mmax:
            raise _reach_error(mat, wl0, mmax, "two-face")
        pa = normal_face_prism(m, n, tilt)
        if pa is None:
            raise SolveError("design.exit_tilt_deg", f"a {d.exit_tilt_deg:g} deg tilt of the "
                             f"normal face alone changes the width by more than M = {m:g} asks",
                             reachable="a smaller design.exit_tilt_deg or a larger |M - 1|")
        closing = "entry" if compress else "exit"
    theta, mag, ev = propagate_angles(0.0, [pa], [n])
    if abs(mag / m - 1.0) > 1e-9:
        raise SolveError("design.magnification", f"the angle solution gives M = {mag:.9f}, "
                         f"not {m:g}", reachable="report this spec: the closed form failed")
    idx = lambda wl: float(mat.n(wl))  # noqa: E731
    groups = sizing.beam_groups(spec, start_z_mm=-1.0e3, pivot_z_mm=0.0)
    e = np.zeros(2)

    def trace(verts: np.ndarray, roles: tuple) -> list:
        return sizing.trace_groups([sizing.Placed(verts, roles, idx, e)], groups, sequential=True)

    t = sizing.size_triangle(spec, make=lambda s: triangle_for(pa, e, s, closing), trace=trace,
                             section=0, path="design")
    draft = sizing.Draft("P1", mat.key, idx, t.vertices, t.roles, t.notes, e)
    facts = [("magnification (angle model)", mag, ""),
             ("apex angle", math.degrees(pa.apex_rad), "deg"),
             ("entry incidence", math.degrees(abs(ev[0].incidence_rad)), "deg"),
             ("exit internal incidence", math.degrees(abs(ev[1].incidence_rad)), "deg"),
             ("exit angle", math.degrees(abs(ev[1].refraction_rad)), "deg"),
             ("deviation", math.degrees(abs(theta)), "deg"),
             ("Brewster angle", math.degrees(math.atan(n)), "deg")]
    if d.entry_aoi_deg is None:
        facts.append(("normal-face tilt (anti-feedback)", d.exit_tilt_deg, "deg"))
    return sizing.finish_system(spec, [draft], facts=facts, pivot_z_mm=0.0)


def _min_parallel_m(n: float, tilt: float) -> float:
    """Smallest M whose base reflection turns the beam by at least ``MIN_TURN_DEG``."""
    lo, hi = 1.0 + 1e-9, _k1_max(n)
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        a = parallel_angles(mid, n, tilt)
        small = a is None or math.degrees(a.dev1 + a.turn) < MIN_TURN_DEG
        lo, hi = (mid, hi) if small else (lo, mid)
    return hi


def _parallel(spec: Spec, d: AnamorphicSingleDesign, mat, n: float, m: float,
              tilt: float) -> System:
    wl0 = spec.beam.wavelength_nm
    mmax = _k1_max(n) * inline.exit_k(n, tilt)
    m_lo = _min_parallel_m(n, tilt)
    if m > mmax:
        raise _reach_error(mat, wl0, mmax, "parallel-output")
    if m < m_lo:
        raise SolveError("design.magnification",
                         f"for output: parallel the base reflection must turn the beam by at "
                         f"least {MIN_TURN_DEG:g} deg so it is not grazing; with {mat.name} at "
                         f"{wl0:g} nm that needs M >= {m_lo:.3f}",
                         reachable=f"M = {m_lo:.3f} to {mmax:.3f}, or output: collinear")
    a = parallel_angles(m, n, tilt)
    assert a is not None
    dir_e = np.array([math.sin(a.phi1), math.cos(a.phi1)])  # entry face, downstream
    mid = (a.turn - a.dev1) / 2.0
    dir_t = unit(mid)  # reflecting face, from the entry/base edge
    exit_normal = unit(a.phi2)
    idx = lambda wl: float(mat.n(wl))  # noqa: E731
    e = np.zeros(2)

    def make(s: float) -> sizing.Triangle:
        return sizing.Triangle(e - s * dir_e, dir_e, dir_t, exit_normal,
                               (FaceRole.ENTRY, FaceRole.TIR, FaceRole.EXIT),
                               ("", "internal reflection", "tilted exit"))

    groups = sizing.beam_groups(spec, start_z_mm=-1.0e3, pivot_z_mm=0.0)

    def trace(verts: np.ndarray, roles: tuple) -> list:
        return sizing.trace_groups([sizing.Placed(verts, roles, idx, e)], groups, sequential=True)

    t = sizing.size_triangle(spec, make=make, trace=trace, section=0, path="design")
    draft = sizing.Draft("P1", mat.key, idx, t.vertices, t.roles, t.notes, e)
    chief = trace_plane([draft.placed().section(0, wl0)], (-1e3, 0.0), 0.0)
    facts = _inline_facts(a, n) + [
        ("exit face tilt (anti-feedback)", d.exit_tilt_deg, "deg"),
        ("lateral offset", float(chief.points[-1][1]), "mm")]
    return sizing.finish_system(spec, [draft], facts=facts, pivot_z_mm=0.0)


def _inline_facts(a: inline.InlineAngles, n: float) -> list[tuple[str, float, str]]:
    k1, k2 = math.cos(a.psi1) / math.cos(a.phi1), inline.exit_k(n, a.psi2)
    return [("magnification (angle model)", k1 * k2, ""),
            ("entry incidence", math.degrees(a.phi1), "deg"),
            ("entry width ratio k1", k1, ""),
            ("internal reflection incidence", math.degrees(a.tir_incidence), "deg"),
            ("critical angle", math.degrees(math.asin(1 / n)), "deg"),
            ("exit internal incidence", math.degrees(a.psi2), "deg"),
            ("exit angle", math.degrees(a.phi2), "deg"),
            ("exit width ratio k2", k2, ""),
            ("Brewster angle", math.degrees(math.atan(n)), "deg")]


def _collinear(spec: Spec, d: AnamorphicSingleDesign, mat, n: float, m: float) -> System:
    wl0 = spec.beam.wavelength_nm
    compress = m < 1.0
    mexp = 1.0 / m if compress else m
    a = inline.choose_angles(mexp, n, MAX_INCIDENCE_DEG)
    if a is None:
        mmax = inline.inline_reach(n, MAX_INCIDENCE_DEG)
        raise _reach_error(mat, wl0, mmax, "collinear")
    idx = lambda wl: float(mat.n(wl))  # noqa: E731
    flat = sizing.round_up(sizing.apex_flat_width_mm(spec.fabrication.bevel_mm))

    def make(s: float) -> tuple[np.ndarray, tuple]:
        v, r, _notes, x_pt = inline.expander_section(a, s, flat)
        return inline.reversed_section(v, r, x_pt) if compress else (v, r)

    groups = sizing.beam_groups(spec, start_z_mm=-1.0e3, pivot_z_mm=0.0)
    e = np.zeros(2)

    def trace(verts: np.ndarray, roles: tuple) -> list:
        return sizing.trace_groups([sizing.Placed(verts, roles, idx, e)], groups, sequential=True)

    base = inline.expander_section(a, 1.0, flat)[1].index(FaceRole.TIR)
    s = inline.size_scaled(spec, make=make, trace=trace, section=0, defining_face=base)
    verts, roles = make(s)
    notes = inline.expander_section(a, s, flat)[2]
    if compress:
        notes = tuple("tilted entry" if nt == "tilted exit" else nt for nt in notes)
    draft = sizing.Draft("P1", mat.key, idx, verts, roles, notes, e)
    facts = _inline_facts(a, n)
    if compress:
        facts = [("magnification (angle model)", 1.0 / facts[0][1], ""),
                 ("used backwards: expander of magnification", facts[0][1], "")] + facts[1:]
    facts += [("internal exit turn", math.degrees(a.turn), "deg"),
              ("entry point below the apex, along the entry face", s, "mm"),
              ("lateral offset (plane trace)", inline.chief_offset_mm(verts, roles, n), "mm")]
    return sizing.finish_system(spec, [draft], facts=facts, pivot_z_mm=0.0)
