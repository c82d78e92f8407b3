"""Fold and wedge solvers against published relations (critical angle, thin prism, reflecting
prisms). The source is named beside each check."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from prismfab.design import _reflecting as rf
from prismfab.design import fold, wedge
from prismfab.design.sizing import Draft
from prismfab.model import FaceRole, Pose
from prismfab.optics.closed_forms import thin_prism_deviation_tilted
from prismfab.optics.trace import STATUS_EXITED, RayBundle, trace
from prismfab.spec.types import (
    Alignment,
    BeamSpec,
    Fabrication,
    Family,
    FoldDesign,
    FoldType,
    Project,
    Spec,
    WedgeDesign,
)

D_LINE_NM = 587.5618


def line_spec(design, family: Family, *, wavelength_nm: float = D_LINE_NM,
              tolerance_arcsec: float | None = None) -> Spec:
    """One spectral line, no divergence, no alignment tilt: the bare optics of the part."""
    beam = BeamSpec(wavelength_nm, (wavelength_nm, wavelength_nm), 2.0, 2.0,
                    alignment=Alignment(decenter_mm=0.1, tilt_mrad=0.0))
    return Spec(project=Project("ref", "R-1"), beam=beam, design=design, family=family,
                fabrication=Fabrication(angle_tolerance_arcsec=tolerance_arcsec))


def fact(system, prefix: str) -> float:
    return next(v for n, v, _u in system.facts if n.startswith(prefix))


# right-angle prism margins, computed: internal margin 45 deg - asin(1/n) and external field
# tolerance asin(n sin margin) at the d line (indices from the materials' Sellmeier papers),
# with the critical angle theta_c = asin(n2/n1) (Heckbert's derivation in Glassner (ed.),
# An Introduction to Ray Tracing, 1989).
MARGINS = [
    ("fused silica", 1.7130, 2.4988),
    ("517642", 3.7548, 5.7006),
    ("calcium fluoride", 0.7793, 1.1175),
    ("sapphire (o)", 10.5591, 18.9060),
]


@pytest.mark.parametrize("material, internal_deg, external_deg", MARGINS)
def test_right_angle_tir_margins_table(material, internal_deg, external_deg):
    """The right-angle fold's TIR margin and field tolerance match the computed values."""
    system = fold.design(line_spec(FoldDesign(material, FoldType.RIGHT_ANGLE), Family.FOLD))
    # computed margins above (4 decimals; facts rounded to 4 decimals)
    assert fact(system, "TIR margin P1 face B at") == pytest.approx(internal_deg, abs=1.5e-4)
    assert fact(system, "input tilt in air before TIR is lost at P1 face B") == pytest.approx(
        external_deg, abs=1.5e-4)
    assert system.prisms[0].faces[1].role is FaceRole.TIR


def test_right_angle_in_magnesium_fluoride_needs_a_mirror():
    """MgF2 (o), n = 1.377744 < sqrt 2: no TIR at 45 deg, a mirror coating is needed."""
    system = fold.design(line_spec(FoldDesign("magnesium fluoride (o)", FoldType.RIGHT_ANGLE),
                                   Family.FOLD))
    # computed: asin(1/1.377744) = 46.5 deg > 45 deg, so no TIR; a mirror coating is needed
    assert system.prisms[0].faces[1].role is FaceRole.MIRROR


@pytest.mark.parametrize("n, holds", [(1.4142, False), (1.41422, True), (1.4143, True)])
def test_right_angle_tir_needs_n_above_root_two(n, holds):
    """TIR at the 45 deg hypotenuse needs n > sqrt 2 = 1.4142136 (computed, asin(1/n) < 45 deg)."""
    spec = line_spec(FoldDesign("fused silica", FoldType.RIGHT_ANGLE), Family.FOLD,
                     tolerance_arcsec=0.0)
    v = np.array([[0.0, 5.0], [0.0, -5.0], [10.0, 5.0]])  # legs 10 mm, entry at the origin
    draft = Draft("P1", "x", lambda _wl: n, v, (FaceRole.EXIT, FaceRole.TIR, FaceRole.ENTRY),
                  ("", "", ""))
    (budget,) = rf.reflections(spec, [draft.placed()])
    # with normal entry the hypotenuse sees 45 deg, so TIR needs n > sqrt 2 (geometry, computed)
    assert budget.aoi_deg == pytest.approx(45.0, abs=1e-12)
    assert budget.holds is holds


def _tilted(system, tilt_deg: float):
    t = math.radians(tilt_deg)
    beam = dataclasses.replace(system.beam, direction=(math.sin(t), 0.0, math.cos(t)))
    return dataclasses.replace(system, beam=beam)


def _output_direction(system) -> np.ndarray:
    b = system.beam
    res = trace(system, RayBundle.create(b.origin_mm, b.direction, b.wavelength_nm))
    assert res.status[0] == STATUS_EXITED
    return res.directions[0]


def test_penta_deviation_is_constant_by_exact_trace():
    """A penta prism turns the beam by 90 deg whatever the in-plane input tilt."""
    system = fold.design(line_spec(FoldDesign("517642", FoldType.PENTA), Family.FOLD))
    for tilt in (-2.0, -0.5, 0.0, 0.5, 2.0):
        s = _tilted(system, tilt)
        d_in, d_out = np.asarray(s.beam.direction), _output_direction(s)
        # Smith, Modern Optical Engineering, ch. 7 (from memory): two reflections at faces 45 deg
        # apart deviate the ray by twice that angle, 90 deg, independent of the input direction
        angle = math.degrees(math.acos(float(np.clip(d_in @ d_out, -1.0, 1.0))))
        assert angle == pytest.approx(90.0, abs=1e-7)


def test_retro_returns_antiparallel_for_tilted_input():
    """The retro (two reflections at 90 deg dihedral) returns any in-plane ray antiparallel."""
    system = fold.design(line_spec(FoldDesign("517642", FoldType.RETRO), Family.FOLD))
    for tilt in (-1.0, 0.0, 1.0):
        s = _tilted(system, tilt)
        # Smith, Modern Optical Engineering, ch. 7 (from memory): a 90 deg roof/Porro retro
        # reflects rays in its principal section back parallel to themselves
        assert float(np.asarray(s.beam.direction) @ _output_direction(s)) == pytest.approx(
            -1.0, abs=1e-12)


def _rolled(system, roll_rad: float):
    c, s = math.cos(roll_rad), math.sin(roll_rad)
    rz = np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])
    prisms = []
    for p in system.prisms:
        rot = rz @ np.array(p.pose.rotation)
        t = rz @ np.array(p.pose.translation_mm)
        pose = Pose(tuple(tuple(float(v) for v in row) for row in rot), tuple(float(v) for v in t))
        prisms.append(dataclasses.replace(p, pose=pose))
    return dataclasses.replace(system, prisms=tuple(prisms))


def _image_angle(system, phi_rad: float) -> float:
    """Azimuth of the output of an input ray 0.5 mm off axis at azimuth phi, about the output
    chief ray, on a plane downstream."""
    b = system.beam
    o = np.array([[0.0, 0.0, b.origin_mm[2]],
                  [0.5 * math.cos(phi_rad), 0.5 * math.sin(phi_rad), b.origin_mm[2]]])
    res = trace(system, RayBundle.create(o, b.direction, b.wavelength_nm))
    z = 200.0
    pts = [res.origins[i] + (z - res.origins[i][2]) / res.directions[i][2] * res.directions[i]
           for i in range(2)]
    d = pts[1] - pts[0]
    return math.atan2(d[1], d[0])


def test_dove_rotates_the_image_at_twice_the_roll():
    """Rolling the dove about the axis by r turns the image by 2 r (exact 3D trace)."""
    system = fold.design(line_spec(FoldDesign("517642", FoldType.DOVE), Family.FOLD))
    for phi in (0.3, 1.2):
        base = _image_angle(system, phi)
        for roll_deg in (10.0, 30.0):
            turned = _image_angle(_rolled(system, math.radians(roll_deg)), phi)
            # Smith, Modern Optical Engineering, ch. 7 (from memory): a Dove prism rotated about
            # its axis rotates the image through twice the angle
            diff = math.degrees(math.remainder(turned - base, 2 * math.pi))
            assert diff == pytest.approx(2.0 * roll_deg, abs=1e-6)


@pytest.mark.parametrize("deviation_deg", [0.001, 0.01, 0.05])
def test_exact_wedge_tends_to_thin_prism(deviation_deg):
    """For small angles the exact wedge angle tends to delta / (n - 1)."""
    n = 1.5
    apex = wedge.solve_apex_rad(deviation_rad=math.radians(deviation_deg), n=n, incidence_rad=0.0)
    # Smith, Modern Optical Engineering 4th ed., section 7.3, Eq. 7.8a: delta = (n - 1) A
    # the exact value departs from it only at third order in A (relative error ~ A^2)
    assert math.degrees(apex) == pytest.approx(deviation_deg / (n - 1.0), rel=5e-6)


def test_exact_wedge_one_degree_values():
    """n = 1.5, A = 1 deg: exact deviations (computed, Snell), and Eq. 7.8b beside them."""
    a = math.radians(1.0)
    # exact 0.500095 deg computed from Snell's law; Smith Eq. 7.8a gives 0.5 deg
    assert math.degrees(wedge.chain_deviation_rad(a, 1.5, 0.0)[0]) == pytest.approx(0.500095,
                                                                                    abs=5e-7)
    for inc, exact, eq78b in ((10.0, 0.511023, 0.512692), (20.0, 0.549875, 0.550770)):
        i = math.radians(inc)
        # exact values at incidence I, computed from Snell's law
        assert math.degrees(wedge.chain_deviation_rad(a, 1.5, i)[0]) == pytest.approx(exact,
                                                                                      abs=5e-7)
        # Smith, Modern Optical Engineering, 4th ed., Eq. 7.8b, A (n - 1)[1 + I^2 (n + 1)/(2n)]
        approx = math.degrees(thin_prism_deviation_tilted(apex_rad=a, n=1.5, incidence_rad=i))
        assert approx == pytest.approx(eq78b, abs=5e-7)
        # the inverse: the solver finds A = 1 deg back from the exact deviation
        solved = wedge.solve_apex_rad(deviation_rad=math.radians(exact), n=1.5, incidence_rad=i)
        assert math.degrees(solved) == pytest.approx(1.0, abs=2e-6)


def test_solved_small_wedge_matches_thin_prism_with_catalogue_index():
    """A 0.02 deg wedge of 517642 at 1 deg incidence, solved end to end, has the thin-prism
    angle of Smith Eq. 7.8b."""
    system = wedge.design(line_spec(WedgeDesign("517642", 0.02, incidence_deg=1.0), Family.WEDGE,
                                    wavelength_nm=632.8))
    n = 1.515089  # 517642 at 632.8 nm, computed from its Sellmeier set
    i = math.radians(1.0)
    # Smith, Modern Optical Engineering 4th ed., Eq. 7.8b: delta = A (n - 1)[1 + I^2 (n + 1)/(2n)]
    thin = 0.02 / ((n - 1.0) * (1.0 + i * i * (n + 1.0) / (2.0 * n)))
    # (7.8b is even in I; the exact trace has an odd term of relative size ~ A I, here 1.5e-5)
    assert fact(system, "wedge angle") == pytest.approx(thin, rel=5e-5)
    # ... which is 2.5e-4 below the normal-incidence value of Eq. 7.8a
    assert fact(system, "wedge angle") < 0.02 / (n - 1.0) * (1.0 - 2e-4)


def test_risley_counter_rotation_follows_the_thin_prism_cosine():
    """Counter-rotating thin wedges by +/-r gives 2 delta1 cos r along one line."""
    apex = wedge.solve_apex_rad(deviation_rad=math.radians(0.2), n=1.5, incidence_rad=0.0,
                                count=2)
    for r_deg in (0.0, 30.0, 60.0, 90.0):
        r = math.radians(r_deg)
        d = wedge.risley_direction(apex, 1.5, 0.0, r, -r)
        dev = math.degrees(math.acos(float(d[2])))
        # Risley pair: each wedge deviates by delta1 = 0.1 deg (thin prism, Smith Eq. 7.8a); at
        # +/-r the two add to delta = 2 delta1 cos r (vector sum of thin-prism deviations, derived)
        assert dev == pytest.approx(0.2 * math.cos(r), abs=2e-5)
