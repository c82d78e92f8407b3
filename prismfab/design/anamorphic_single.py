"""One prism that changes the in-plane beam width by M.

* ``output: deviated`` with ``entry_aoi_deg`` unset: normal exit, closed form of optics.md
  section 4.1 with m = M (``sin phi1 = sqrt((M^2-1)/(M^2-1/n^2))``, ``A = asin(sin phi1/n)``);
  M < 1 uses the same prism backwards (normal entry, steep exit). The base is square to the
  normal face (right-angle section).
* ``entry_aoi_deg`` set: the entry incidence is fixed and the exit face takes the rest:
  ``k2 = M/k1`` gives the internal exit incidence ``sin^2 psi2 = (1-r^2)/(n^2-r^2)``, r = M/k1
  (from ``k2 = cos phi2 / cos psi2`` and Snell), which needs ``M <= k1`` (normal exit is the most
  a given incidence can give).
* ``output: parallel``: the beam enters at phi1 (the same closed form: the entry face alone
  gives M since a reflection and a normal exit keep the width), is turned back to the input
  direction by total internal reflection on face T (which bisects the internal and the output
  directions), and leaves through a face square to the input axis.
* ``output: collinear`` is refused with the reason: with one reflection and a normal exit the
  output height scales with the entry height about the entry/reflecting-face intersection, so
  no entry height puts it on the input axis.

Entry incidence near Brewster's angle for p light costs almost nothing; the face is then left
uncoated, and the chief-ray transmission (Fresnel loss) is reported per wavelength.
"""

from __future__ import annotations

import math

import numpy as np

from prismfab.design import sizing
from prismfab.design.anamorphic_pair import MAX_INCIDENCE_DEG, max_normal_exit_m, normal_exit_incidence, triangle_for
from prismfab.design.common import PrismAngles, material_of, propagate_angles, trace_plane
from prismfab.errors import SolveError
from prismfab.model import FaceRole, System
from prismfab.spec.types import AnamorphicSingleDesign, OutputMode, Spec

__all__ = ["design", "fixed_entry_prism"]


def fixed_entry_prism(m: float, n: float, phi1_rad: float) -> PrismAngles:
    """Prism (sense +1) with entry incidence ``phi1_rad`` and magnification ``m <= k1``."""
    psi1 = math.asin(math.sin(phi1_rad) / n)
    k1 = math.cos(psi1) / math.cos(phi1_rad)
    r = m / k1
    psi2 = math.asin(math.sqrt((1.0 - r * r) / (n * n - r * r)))
    return PrismAngles(-phi1_rad, psi1 + psi2, 1)


def design(spec: Spec) -> System:
    """Solve, size and assemble one anamorphic prism.

    Raises:
        SolveError: M out of reach below the incidence limit, or an unsupported output mode.
    """
    d = spec.design
    assert isinstance(d, AnamorphicSingleDesign)
    mat = material_of(spec, d.material, path="design.material")
    wl0 = spec.beam.wavelength_nm
    n = float(mat.n(wl0))
    m = d.magnification
    mexp = max(m, 1.0 / m)
    if abs(mexp - 1.0) < 1e-3:
        raise SolveError("design.magnification", f"M = {m:g} needs no prism",
                         reachable="M below 0.999 or above 1.001")
    mmax = max_normal_exit_m(n)
    if d.output is OutputMode.COLLINEAR:
        raise SolveError(
            "design.output", "a single prism with one internal reflection and a normal exit "
            "cannot put the output on the input axis (the output height scales with the entry "
            "height about the entry/reflecting-face edge)",
            reachable="output: parallel (offset reported), or an anamorphic pair")
    if d.entry_aoi_deg is None and mexp > mmax:
        raise SolveError("design.magnification",
                         f"with {mat.name} at {wl0:g} nm a single prism reaches at most "
                         f"M = {mmax:.3f} below {MAX_INCIDENCE_DEG:g} deg incidence",
                         reachable=f"M = {1 / mmax:.3f} to {mmax:.3f}")
    if d.output is OutputMode.PARALLEL:
        if m < 1.0:
            raise SolveError("design.magnification", "output: parallel compresses nothing: the "
                             "internal-reflection prism expands the beam",
                             reachable=f"M = 1.001 to {mmax:.3f}")
        m_lo = _parallel_min_m(n)
        if m < m_lo:
            raise SolveError("design.magnification",
                             f"for output: parallel the entry face must turn the beam by at least "
                             f"{MIN_TURN_DEG:g} deg so the internal reflection is not grazing; with "
                             f"{mat.name} at {wl0:g} nm that needs M >= {m_lo:.3f}",
                             reachable=f"M = {m_lo:.3f} to {mmax:.3f}")
        return _parallel(spec, mat, n, m)
    return _deviated(spec, d, mat, n, m)


MIN_TURN_DEG = 10.0
"""Smallest refraction turn at the entry of the parallel prism (reflection at <= 85 deg)."""


def _parallel_min_m(n: float) -> float:
    """Magnification of the normal-exit entry whose turn phi1 - psi1 is ``MIN_TURN_DEG``."""
    lo, hi = 0.0, math.pi / 2
    for _ in range(60):
        phi = 0.5 * (lo + hi)
        turn = phi - math.asin(math.sin(phi) / n)
        lo, hi = (phi, hi) if turn < math.radians(MIN_TURN_DEG) else (lo, phi)
    return math.cos(math.asin(math.sin(hi) / n)) / math.cos(hi)


def _deviated(spec: Spec, d: AnamorphicSingleDesign, mat, n: float, m: float) -> System:
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
        pa = fixed_entry_prism(m, n, phi)
        closing = "bisector"
    else:
        phi1, apex = normal_exit_incidence(max(m, 1.0 / m), n)
        pa = PrismAngles(0.0, apex, 1) if compress else PrismAngles(-phi1, apex, 1)
        closing = "entry" if compress else "exit"
    idx = lambda wl: float(mat.n(wl))  # noqa: E731
    groups = sizing.beam_groups(spec, start_z_mm=-1.0e3)
    e = np.zeros(2)

    def trace(verts: np.ndarray, roles: tuple) -> list:
        return sizing.trace_groups([sizing.Placed(verts, roles, idx, e)], groups, sequential=True)

    t = sizing.size_triangle(spec, make=lambda s: triangle_for(pa, e, s, closing), trace=trace,
                             section=0, path="design")
    draft = sizing.Draft("P1", mat.key, idx, t.vertices, t.roles, t.notes, e)
    theta, mag, ev = propagate_angles(0.0, [pa], [n])
    facts = [("magnification (angle model)", mag, ""),
             ("apex angle", math.degrees(pa.apex_rad), "deg"),
             ("entry incidence", math.degrees(abs(ev[0].incidence_rad)), "deg"),
             ("exit angle", math.degrees(abs(ev[1].refraction_rad)), "deg"),
             ("deviation", math.degrees(abs(theta)), "deg"),
             ("Brewster angle", math.degrees(math.atan(n)), "deg")]
    return sizing.finish_system(spec, [draft], facts=facts)


def _parallel(spec: Spec, mat, n: float, m: float) -> System:
    phi1, _apex = normal_exit_incidence(m, n)
    psi1 = math.asin(math.sin(phi1) / n)
    dev = phi1 - psi1  # internal ray direction is -dev
    dir_e = np.array([math.sin(phi1), math.cos(phi1)])  # entry face, downstream
    dir_t = np.array([math.cos(dev / 2), -math.sin(dev / 2)])  # reflecting face
    closing = np.array([1.0, 0.0])  # exit face square to the input axis
    idx = lambda wl: float(mat.n(wl))  # noqa: E731
    e = np.zeros(2)

    def make(s: float) -> sizing.Triangle:
        return sizing.Triangle(e - s * dir_e, dir_e, dir_t, closing,
                               (FaceRole.ENTRY, FaceRole.TIR, FaceRole.EXIT),
                               ("", "internal reflection", "normal exit"))

    groups = sizing.beam_groups(spec, start_z_mm=-1.0e3)

    def trace(verts: np.ndarray, roles: tuple) -> list:
        return sizing.trace_groups([sizing.Placed(verts, roles, idx, e)], groups, sequential=True)

    t = sizing.size_triangle(spec, make=make, trace=trace, section=0, path="design")
    draft = sizing.Draft("P1", mat.key, idx, t.vertices, t.roles, t.notes, e)
    chief = trace_plane([draft.placed().section(0, spec.beam.wavelength_nm)], (-1e3, 0.0), 0.0)
    facts = [("magnification (closed form)", math.cos(psi1) / math.cos(phi1), ""),
             ("entry incidence", math.degrees(phi1), "deg"),
             ("internal reflection incidence", 90.0 - math.degrees(dev) / 2, "deg"),
             ("critical angle", math.degrees(math.asin(1 / n)), "deg"),
             ("Brewster angle", math.degrees(math.atan(n)), "deg"),
             ("lateral offset", float(chief.points[-1][1]), "mm")]
    return sizing.finish_system(spec, [draft], facts=facts)
