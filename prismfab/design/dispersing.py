"""Dispersing prism at minimum deviation at the design wavelength, or its Littrow half.

Exactly one target is given:

* ``apex_deg``: the apex itself.
* ``dispersion_mrad_per_nm``: angular dispersion ``|d delta/d lambda| = (d delta/dn) |dn/d lambda|``
  with, at minimum deviation, ``d delta/dn = 2 sin(A/2) / sqrt(1 - n^2 sin^2(A/2))``
  (Smith, Modern Optical Engineering, 4th ed., Eq. 7.7). It grows with A; the apex is found by
  bisection up to the apex whose entry incidence reaches 80 deg.
* ``resolving_power``: ``lambda/d lambda = b |dn/d lambda|`` with b the base length filled by the
  beam (Born and Wolf, Principles of Optics, §4.7, from memory). For a beam of width W (the
  1/e^2 in-plane diameter) crossing at minimum deviation, the path difference across it is
  ``b = W d delta/dn``, so the target is the dispersion ``R / W`` and b is reported.

Littrow (``littrow: true``): half the prism (apex A/2), the back face coated as a mirror and met
at normal incidence, so the light returns along its path; its double pass has the dispersion of
the full prism of apex A at minimum deviation.
"""

from __future__ import annotations

import math

import numpy as np

from prismfab.design import sizing
from prismfab.design.anamorphic_pair import MAX_INCIDENCE_DEG
from prismfab.design.common import PrismAngles, material_of
from prismfab.errors import SolveError
from prismfab.model import FaceRole, System
from prismfab.spec.types import DispersingDesign, Spec

__all__ = ["ddelta_dn_min_dev", "design"]


def ddelta_dn_min_dev(apex_rad: float, n: float) -> float:
    """d(deviation)/dn at minimum deviation, ``2 sin(A/2)/sqrt(1 - n^2 sin^2(A/2))``."""
    s = math.sin(apex_rad / 2.0)
    return 2.0 * s / math.sqrt(1.0 - n * n * s * s)


def _apex_for(target_rad_per_um: float, n: float, dn: float, path: str, what: str,
              scale: float) -> float:
    a_max = 2.0 * math.asin(math.sin(math.radians(MAX_INCIDENCE_DEG)) / n)
    best = ddelta_dn_min_dev(a_max, n) * abs(dn)
    if target_rad_per_um > best:
        raise SolveError(path, f"a prism of this material reaches at most {what} = "
                         f"{best * scale:.4g} at minimum deviation below {MAX_INCIDENCE_DEG:g} deg "
                         "incidence", reachable=f"{what} up to {best * scale:.4g}")
    lo, hi = 0.0, a_max
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if ddelta_dn_min_dev(mid, n) * abs(dn) < target_rad_per_um else (lo, mid)
    return 0.5 * (lo + hi)


def design(spec: Spec) -> System:
    """Solve, size and assemble a dispersing (or Littrow) prism.

    Raises:
        SolveError: the target needs more than the incidence limit allows, or the apex is too
            large for light to pass.
    """
    d = spec.design
    assert isinstance(d, DispersingDesign)
    mat = material_of(spec, d.material, path="design.material")
    wl0 = spec.beam.wavelength_nm
    n = float(mat.n(wl0))
    dn = float(mat.dn_dlambda_per_um(wl0))
    w_um = spec.beam.diameter_in_plane_mm * 1e3
    if d.apex_deg is not None:
        apex = math.radians(d.apex_deg)
        if n * math.sin(apex / 2) >= math.sin(math.radians(89.0)):
            raise SolveError("design.apex_deg", f"a {d.apex_deg:g} deg apex of {mat.name} has no "
                             "minimum-deviation path below grazing incidence",
                             reachable=f"apex below {2 * math.degrees(math.asin(1 / n)):.1f} deg")
    elif d.dispersion_mrad_per_nm is not None:
        apex = _apex_for(d.dispersion_mrad_per_nm, n, dn, "design.dispersion_mrad_per_nm",
                         "dispersion (mrad/nm)", 1.0)
    else:
        assert d.resolving_power is not None
        apex = _apex_for(d.resolving_power / w_um, n, dn, "design.resolving_power",
                         f"resolving power with a {spec.beam.diameter_in_plane_mm:g} mm beam", w_um)
    phi1 = math.asin(n * math.sin(apex / 2))
    disp = ddelta_dn_min_dev(apex, n) * abs(dn)
    idx = lambda wl: float(mat.n(wl))  # noqa: E731
    e = np.zeros(2)
    groups = sizing.beam_groups(spec, start_z_mm=-1.0e3, pivot_z_mm=0.0)

    def trace(verts: np.ndarray, roles: tuple) -> list:
        return sizing.trace_groups([sizing.Placed(verts, roles, idx, e)], groups, sequential=True)

    if d.littrow:
        pa = PrismAngles(-phi1, apex / 2.0, 1)
        make = lambda s: _littrow_triangle(pa, e, s)  # noqa: E731
    else:
        pa = PrismAngles(-phi1, apex, 1)
        from prismfab.design.anamorphic_pair import triangle_for

        make = lambda s: triangle_for(pa, e, s, "bisector")  # noqa: E731
    t = sizing.size_triangle(spec, make=make, trace=trace, section=0, path="design")
    draft = sizing.Draft("P1", mat.key, idx, t.vertices, t.roles, t.notes, e)
    facts = [("apex angle (full prism)", math.degrees(apex), "deg"),
             ("entry incidence", math.degrees(phi1), "deg"),
             ("minimum deviation", math.degrees(2 * phi1 - apex), "deg"),
             ("angular dispersion", disp, "mrad/nm"),
             ("resolving power with the 1/e^2 beam", disp * w_um, ""),
             ("base length filled by the beam", w_um * ddelta_dn_min_dev(apex, n) * 1e-3, "mm")]
    if d.littrow:
        facts.append(("Littrow prism apex", math.degrees(apex / 2), "deg"))
    return sizing.finish_system(spec, [draft], facts=facts, pivot_z_mm=0.0)


def _littrow_triangle(pa: PrismAngles, entry: np.ndarray, s: float) -> sizing.Triangle:
    b, g = pa.beta_rad, pa.exit_normal_rad
    u = np.array([-math.sin(b), math.cos(b)])
    v = np.array([math.sin(g), -math.cos(g)])
    return sizing.Triangle(entry + s * u, -u, v, v.copy(),
                           (FaceRole.ENTRY_EXIT, FaceRole.MIRROR, FaceRole.GROUND),
                           ("", "coated back face", "mounting base"))
