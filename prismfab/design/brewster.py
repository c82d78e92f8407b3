"""Brewster-cut prism at minimum deviation for p light, or a Brewster pair for dispersion control.

Single prism: at minimum deviation the internal path is symmetric (Hecht, Optics, §5.5.1, from
memory); with both faces at Brewster's angle ``theta_B = atan n`` the internal angle is
``90 deg - theta_B``, so the apex is ``A = 2 atan(1/n)`` (derived from the two relations). Both
faces stay uncoated ("UNCOATED - BREWSTER SURFACE").

Pair (``pair: true``): the second prism is the first turned by 180 deg about the midpoint of
the apex-to-apex line, placed on the dispersed chief ray so that the apex-to-apex distance is
``separation_mm``; its faces are parallel to the first prism's, so the output is parallel to
the input at every wavelength and laterally dispersed. Group-delay dispersion of one pass is
computed from the exact 2D trace: ``GDD = lambda^3 / (2 pi c^2) d^2P/d lambda^2`` with P the
optical path of the chief ray from an input plane to an output plane square to the output
(plane-wave phase by the Malus-Dupin theorem; the GDD relation is the standard one of the
prism-pair compressor literature, from memory). The thin-beam estimate quoted beside it is the
common prism-pair expression ``d^2P/d lambda^2 ~ -8 L (dn/d lambda)^2`` (apex-to-apex L, beam at
the apices, glass insertion neglected; from memory).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from prismfab.design import sizing
from prismfab.design.anamorphic_pair import triangle_for
from prismfab.design.common import PrismAngles, Section, material_of, trace_plane
from prismfab.errors import SolveError
from prismfab.model import FaceRole, Polarization, System
from prismfab.spec.types import BrewsterDesign, Spec

__all__ = ["brewster_apex_rad", "design", "optical_path_mm"]

C_M_PER_S = 299_792_458.0


def brewster_apex_rad(n: float) -> float:
    """Apex of a Brewster prism at minimum deviation, ``2 atan(1/n)``."""
    return 2.0 * math.atan(1.0 / n)


def design(spec: Spec) -> System:
    """Solve, size and assemble a Brewster prism or pair.

    For a pair the walk allowance is doubled and the pair rebuilt (up to three times) when the
    final trace shows the copy P2 too small for the dispersed beam.

    Raises:
        SolveError: the pair separation is too short for the prisms.
        DesignCheckError: the beam does not fit even after enlarging.
    """
    from prismfab.errors import DesignCheckError

    for attempt in range(4):
        try:
            return _design(spec, 2.0 ** attempt)
        except DesignCheckError:
            if not getattr(spec.design, "pair", False) or attempt == 3:
                raise
    raise AssertionError("unreachable")


def _design(spec: Spec, walk_factor: float) -> System:
    d = spec.design
    assert isinstance(d, BrewsterDesign)
    mat = material_of(spec, d.material, path="design.material")
    wl0 = spec.beam.wavelength_nm
    n = float(mat.n(wl0))
    theta_b = math.atan(n)
    pa = PrismAngles(-theta_b, brewster_apex_rad(n), 1)
    idx = lambda wl: float(mat.n(wl))  # noqa: E731
    e = np.zeros(2)

    def trace(verts: np.ndarray, roles: tuple) -> list:
        return sizing.trace_groups([sizing.Placed(verts, roles, idx, e)], groups, sequential=True)

    sizing_spec = spec
    if d.pair:
        # P1 and P2 are the same part, so P1 is sized for the beam as P2 sees it too: after
        # the separation L the dispersed, tilted beam has walked by L (dispersion x half band
        # + alignment tilt); that walk is added to the decentre allowance (common practice).
        half_band = max(abs(w - wl0) for w in spec.beam.band_nm)
        a = brewster_apex_rad(n)
        ddn = 2 * math.sin(a / 2) / math.sqrt(1 - (n * math.sin(a / 2)) ** 2)
        walk = d.separation_mm * (ddn * abs(float(mat.dn_dlambda_per_um(wl0))) * half_band * 1e-3
                                  + 2 * spec.beam.alignment.tilt_mrad * 1e-3)
        # the walk is one-sided and the margin scales it as well: reserve (1 + margin) x walk
        walk *= (1.0 + spec.fabrication.clear_aperture_margin) * walk_factor
        al = replace(spec.beam.alignment, decenter_mm=spec.beam.alignment.decenter_mm + walk)
        sizing_spec = replace(spec, beam=replace(spec.beam, alignment=al))
    groups = sizing.beam_groups(sizing_spec, start_z_mm=-1.0e3, pivot_z_mm=0.0)
    t = sizing.size_triangle(sizing_spec, make=lambda s: triangle_for(pa, e, s, "bisector"),
                             trace=trace, section=0, path="design")
    notes = tuple("Brewster surface" if r.transmits else nt for r, nt in zip(t.roles, t.notes,
                                                                                 strict=True))
    p1 = sizing.Draft("P1", mat.key, idx, t.vertices, t.roles, notes, e)
    facts = [("apex angle", math.degrees(pa.apex_rad), "deg"),
             ("Brewster angle", math.degrees(theta_b), "deg"),
             ("minimum deviation", math.degrees(2 * theta_b - pa.apex_rad), "deg")]
    warnings = []
    if spec.beam.polarization is not Polarization.P:
        rs = ((n * n - 1) / (n * n + 1)) ** 2
        warnings.append(f"Brewster faces pass p light only: s light loses {100 * rs:.1f} % per "
                        "face (Fresnel equations); the reflected beams need a beam dump")
    drafts = [p1]
    if d.pair:
        p2, facts2 = _second(spec, d, p1, mat, t)
        drafts.append(p2)
        facts += facts2
    return sizing.finish_system(spec, drafts, facts=facts, warnings=warnings, pivot_z_mm=0.0)


def _second(spec: Spec, d: BrewsterDesign, p1: sizing.Draft, mat, t: sizing.SizedTriangle):
    wl0 = spec.beam.wavelength_nm
    sec1 = p1.placed().section(0, wl0)
    chief = trace_plane([sec1], (-1e3, 0.0), 0.0)
    x1, u = chief.points[-2], chief.direction
    apex1 = p1.vertices[_apex_index(p1.vertices, t)]
    half = d.separation_mm / 2.0
    # midpoint m = x1 + t u on the chief ray with |m - apex1| = L/2 (far root)
    w = x1 - apex1
    bq, cq = float(w @ u), float(w @ w) - half * half
    disc = bq * bq - cq
    if disc < 0 or -bq + math.sqrt(disc) <= 0:
        raise SolveError("design.separation_mm", f"an apex-to-apex distance of "
                         f"{d.separation_mm:g} mm is shorter than the prisms allow",
                         reachable=f"more than {2 * float(np.linalg.norm(w)):.1f} mm")
    mid = x1 + (-bq + math.sqrt(disc)) * u
    verts2 = 2.0 * mid - p1.vertices
    if _overlap(p1.vertices, verts2):
        raise SolveError("design.separation_mm", f"at {d.separation_mm:g} mm the prisms overlap",
                         reachable="a larger separation")
    # Turned by 180 deg, P2 takes the beam in through the image of P1's exit face and lets it
    # out through the image of P1's entry face: the two roles swap.
    swap = {FaceRole.ENTRY: FaceRole.EXIT, FaceRole.EXIT: FaceRole.ENTRY}
    roles2 = tuple(swap.get(r, r) for r in p1.roles)
    p2 = sizing.Draft("P2", mat.key, p1.index, verts2, roles2, p1.notes, 2.0 * mid - p1.pivot)
    gdd = _gdd_fs2(spec, [p1, p2])
    lam = wl0 * 1e-9
    dn = float(mat.dn_dlambda_per_um(wl0)) * 1e6  # per m
    estimate = lam ** 3 / (2 * math.pi * C_M_PER_S ** 2) * (-8.0 * d.separation_mm * 1e-3 * dn ** 2)
    facts = [("apex-to-apex distance", d.separation_mm, "mm"),
             ("group-delay dispersion, one pass (traced)", gdd, "fs^2"),
             ("group-delay dispersion, thin-beam estimate -8 L (dn/dlambda)^2", estimate * 1e30,
              "fs^2")]
    return p2, facts


def _overlap(a: np.ndarray, b: np.ndarray) -> bool:
    from prismfab.design.common import polygons_overlap

    return polygons_overlap(a, b, gap_mm=0.5)


def _apex_index(verts: np.ndarray, t: sizing.SizedTriangle) -> int:
    """Vertex of the apex: the one between the two transmitting faces."""
    n = len(verts)
    for i in range(n):
        if t.roles[i - 1].transmits and t.roles[i].transmits:
            return i
    return max(range(n), key=lambda i: 0)


def optical_path_mm(sections: list[Section], *, start_z_mm: float, end_z_mm: float) -> float:
    """Optical path of the axial ray from the plane z = start to the plane z = end (mm)."""
    path = trace_plane(sections, (start_z_mm, 0.0), 0.0)
    pts = path.points[:-1]
    total, inside = 0.0, None
    for k in range(1, len(pts)):
        seg = float(np.linalg.norm(pts[k] - pts[k - 1]))
        total += seg * (sections[inside].index if inside is not None else 1.0)
        h = path.hits[k - 1]
        inside = h.section if inside is None else None
    dz = path.direction[0]
    total += (end_z_mm - pts[-1][0]) / dz
    return total


def _gdd_fs2(spec: Spec, drafts: list[sizing.Draft]) -> float:
    """One-pass GDD from the traced optical path, central second difference (h = 1 nm)."""
    wl0, h = spec.beam.wavelength_nm, 1.0
    z0 = sizing.start_z_mm(drafts)
    z1 = max(float(d.vertices[:, 0].max()) for d in drafts) + 10.0
    p = [optical_path_mm([dr.placed().section(0, wl) for dr in drafts], start_z_mm=z0,
                         end_z_mm=z1) for wl in (wl0 - h, wl0, wl0 + h)]
    d2 = (p[0] - 2 * p[1] + p[2]) * 1e-3 / (h * 1e-9) ** 2  # 1/m
    lam = wl0 * 1e-9
    return lam ** 3 / (2 * math.pi * C_M_PER_S ** 2) * d2 * 1e30
