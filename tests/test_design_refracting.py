"""Refracting design families: convergence, verification by the optics engine, errors."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from prismfab.design import solve
from prismfab.design.anamorphic_pair import normal_exit_incidence
from prismfab.design.common import PrismAngles, angular_dispersion, propagate_angles
from prismfab.errors import SolveError
from prismfab.spec.types import (
    AnamorphicPairDesign,
    AnamorphicSingleDesign,
    BeamSpec,
    BrewsterDesign,
    DispersingDesign,
    Family,
    OutputMode,
    Project,
    Spec,
)


def _spec(design, family, *, wl=780.0, half_band=5.0, din=1.0, dout=3.0) -> Spec:
    return Spec(project=Project(title="test", drawing_prefix="T-1"),
                beam=BeamSpec(wavelength_nm=wl, band_nm=(wl - half_band, wl + half_band),
                              diameter_in_plane_mm=din, diameter_out_of_plane_mm=dout),
                design=design, family=family)


def _measured(spec):
    from prismfab.optics.measure import measure

    system = solve(spec)
    return system, measure(system)


VERIFY = [
    (AnamorphicPairDesign(magnification=3.0, materials=("517642",)), Family.ANAMORPHIC_PAIR, 3.0),
    (AnamorphicPairDesign(magnification=0.4, materials=("517642", "785257")), Family.ANAMORPHIC_PAIR, 0.4),
    (AnamorphicPairDesign(magnification=2.0, materials=("fused silica",), normal_exit=False),
     Family.ANAMORPHIC_PAIR, 2.0),
    (AnamorphicPairDesign(magnification=3.0, materials=("517642",), tuning_range=(2.6, 3.4)),
     Family.ANAMORPHIC_PAIR, 3.0),
    (AnamorphicSingleDesign(magnification=2.0, material="517642"), Family.ANAMORPHIC_SINGLE, 2.0),
    (AnamorphicSingleDesign(magnification=0.6, material="785257"), Family.ANAMORPHIC_SINGLE, 0.6),
    (AnamorphicSingleDesign(magnification=1.4, material="517642", entry_aoi_deg=60.0),
     Family.ANAMORPHIC_SINGLE, 1.4),
    (AnamorphicSingleDesign(magnification=3.0, material="517642", output=OutputMode.PARALLEL),
     Family.ANAMORPHIC_SINGLE, 3.0),
]


@pytest.mark.parametrize(("design", "family", "m"), VERIFY)
def test_retrace_meets_magnification_and_pointing(design, family, m):
    """The optics engine's trace of every solved anamorphic design meets M and parallel output."""
    system, perf = _measured(_spec(design, family))
    assert perf.design.magnification_in_plane == pytest.approx(m, rel=1e-6)
    if family is Family.ANAMORPHIC_PAIR or design.output is OutputMode.PARALLEL:
        assert abs(perf.design.pointing_mrad) < 1e-6 * 1e3  # 1e-6 rad
    for name, label, *_ in system.clear_apertures:
        assert any(p.name == name for p in system.prisms) and label


def test_pair_offset_matches_segment_sum():
    """Lateral offset = sum of segment length x sin(segment angle) (optics.md section 4.2)."""
    system, perf = _measured(_spec(VERIFY[0][0], Family.ANAMORPHIC_PAIR))
    facts = {n: v for n, v, _ in system.facts}
    assert perf.design.lateral_offset_mm == pytest.approx(facts["lateral offset"], abs=1e-6)


def test_achromatic_pair_has_zero_first_order_dispersion():
    """Achromatic pair: traced dispersion vanishes at the design wavelength; order reported."""
    d = AnamorphicPairDesign(magnification=3.0, materials=("785257", "517642"), achromatic=True)
    system, perf = _measured(_spec(d, Family.ANAMORPHIC_PAIR))
    assert perf.design.magnification_in_plane == pytest.approx(3.0, rel=1e-6)
    assert abs(perf.design.dispersion_rad_per_um) < 1e-7
    assert abs(perf.design.pointing_mrad) < 1e-3


def test_tuning_rows_keep_output_parallel():
    """Every tuning row (M, rot1, rot2) gives M with parallel output in the angle model."""
    from prismfab import materials

    d = AnamorphicPairDesign(magnification=3.0, materials=("517642",), tuning_range=(2.6, 3.4))
    system = solve(_spec(d, Family.ANAMORPHIC_PAIR))
    n = float(materials.get("517642").n(780.0))
    facts = {k: v for k, v, _ in system.facts}
    phi, a = normal_exit_incidence(math.sqrt(3.0), n)
    # the 1 deg anti-feedback tilt opens the apex by about 1 deg over the closed form (4.1)
    assert 0.9 < facts["apex angle P1"] - math.degrees(a) < 1.1
    assert len(system.tuning) == 5
    ap = __import__("prismfab.design.anamorphic_pair", fromlist=["solve_angles"])
    pair = ap.solve_angles(magnification=3.0, ns=(n, n), dns=(0.0, 0.0), achromatic=False,
                           normal_exit=True, tilt_rad=math.radians(1.0))
    for m, r1, r2 in system.tuning:
        th, mag, _ = propagate_angles(0.0, [pair[0].rotated(math.radians(r1)),
                                            pair[1].rotated(math.radians(r2))], (n, n))
        assert mag == pytest.approx(m, rel=1e-9)
        assert abs(th) < 1e-12


def test_duarte_piper_recursion_matches_finite_difference():
    """The face-by-face dispersion equals a central difference of the angle trace (1e-9)."""
    prisms = [PrismAngles(-1.1, 0.6, 1), PrismAngles(0.3, 0.7, -1)]
    ns, dn = (1.51, 1.78), (-0.03, -0.12)
    h = 1e-6
    plus = propagate_angles(0.0, prisms, [n + h * d for n, d in zip(ns, dn)])[0]
    minus = propagate_angles(0.0, prisms, [n - h * d for n, d in zip(ns, dn)])[0]
    assert angular_dispersion(0.0, prisms, ns, dn) == pytest.approx((plus - minus) / (2 * h), abs=1e-9)


def test_brewster_pair_reports_gdd():
    """A Brewster pair gives two identical prisms, parallel output and a traced GDD fact."""
    d = BrewsterDesign(material="fused silica", pair=True, separation_mm=300.0)
    system, perf = _measured(_spec(d, Family.BREWSTER, din=2.0, dout=2.0))
    assert system.prisms[0].vertices_mm == system.prisms[1].vertices_mm
    assert abs(perf.design.pointing_mrad) < 1e-6
    names = [n for n, _, _ in system.facts]
    assert any(n.startswith("group-delay dispersion, one pass (traced)") for n in names)


@pytest.mark.parametrize(("design", "family", "path", "words"), [
    (AnamorphicSingleDesign(magnification=20.0, material="517642"), Family.ANAMORPHIC_SINGLE,
     "design.magnification", "reaches at most M ="),
    (AnamorphicPairDesign(magnification=400.0, materials=("517642",)), Family.ANAMORPHIC_PAIR,
     "design.magnification", "reaches at most M ="),
    (AnamorphicSingleDesign(magnification=2.0, material="517642", entry_aoi_deg=30.0),
     Family.ANAMORPHIC_SINGLE, "design.magnification", "reaches at most M ="),
    (AnamorphicSingleDesign(magnification=1.02, material="517642", output=OutputMode.PARALLEL),
     Family.ANAMORPHIC_SINGLE, "design.magnification", "needs M >="),
    (DispersingDesign(material="fused silica", dispersion_mrad_per_nm=5.0), Family.DISPERSING,
     "design.dispersion_mrad_per_nm", "reaches at most"),
    (AnamorphicPairDesign(magnification=3.0, materials=("517642",), tuning_range=(1e-4, 3.5)),
     Family.ANAMORPHIC_PAIR, "design.tuning_range", "reaches M ="),
])
def test_infeasible_targets_name_the_reachable_range(design, family, path, words):
    """Unreachable targets raise SolveError naming the field and the reachable range."""
    with pytest.raises(SolveError) as info:
        solve(_spec(design, family))
    assert info.value.path == path
    assert words in info.value.reason
    assert info.value.reachable


# --------------------------------------------------------------------------- grids (>= 200 each)


def _grid_pair():
    ms = np.linspace(1.3, 4.5, 10)
    for m, mats, wl in itertools.product(ms, (("517642",), ("fused silica",), ("785257",),
                                              ("517642", "785257"), ("620364",)), (450.0, 650.0, 780.0, 1064.0)):
        yield AnamorphicPairDesign(magnification=float(m), materials=mats), wl


def _grid_single():
    for m, mat, wl in itertools.product(np.linspace(0.4, 3.0, 10), ("517642", "fused silica", "785257", "620364", "calcium fluoride"),
                                        (450.0, 500.0, 780.0, 1000.0)):
        yield AnamorphicSingleDesign(magnification=float(m), material=mat), wl


def _grid_brewster():
    for mat, wl, din, pair in itertools.product(("517642", "fused silica", "785257", "620364", "calcium fluoride"),
                                                (450.0, 550.0, 650.0, 800.0, 1000.0), (0.5, 1.0, 2.0, 4.0),
                                                (False, True)):
        yield BrewsterDesign(material=mat, pair=pair, separation_mm=400.0), wl, din


def _grid_dispersing():
    for mat, wl, target in itertools.product(("517642", "fused silica", "785257", "620364", "calcium fluoride"),
                                             (450.0, 550.0, 650.0, 800.0),
                                             range(10)):
        if target < 4:
            yield DispersingDesign(material=mat, apex_deg=30.0 + 8 * target, littrow=target % 2 == 1), wl
        elif target < 7:
            yield DispersingDesign(material=mat, dispersion_mrad_per_nm=0.01 * (target - 3)), wl
        else:
            yield DispersingDesign(material=mat, resolving_power=20.0 * (target - 6),
                                   littrow=target == 9), wl


def test_pair_grid_converges():
    """200 feasible pair specs all solve (M 1.3-4.5, five material sets, four wavelengths)."""
    cases = list(_grid_pair())
    assert len(cases) >= 200
    for d, wl in cases:
        s = solve(_spec(d, Family.ANAMORPHIC_PAIR, wl=wl))
        facts = {n: v for n, v, _ in s.facts}
        assert facts["magnification (angle model)"] == pytest.approx(d.magnification, rel=1e-9)


def test_single_grid_converges():
    """200 feasible single-prism specs (deviated, M 0.4-3) all solve."""
    cases = list(_grid_single())
    assert len(cases) >= 200
    for d, wl in cases:
        s = solve(_spec(d, Family.ANAMORPHIC_SINGLE, wl=wl))
        assert len(s.prisms) == 1 and s.clear_apertures


def test_brewster_grid_converges():
    """200 Brewster specs (single and pair) all solve with apex 2 atan(1/n)."""
    from prismfab import materials

    cases = list(_grid_brewster())
    assert len(cases) >= 200
    for d, wl, din in cases:
        s = solve(_spec(d, Family.BREWSTER, wl=wl, din=din, dout=din))
        n = float(materials.get(d.material).n(wl))
        apex = {k: v for k, v, _ in s.facts}["apex angle"]
        assert apex == pytest.approx(math.degrees(2 * math.atan(1 / n)), abs=1e-9)


def test_dispersing_grid_converges():
    """200 dispersing specs (apex, dispersion, resolving power, Littrow) all solve."""
    cases = list(_grid_dispersing())
    assert len(cases) >= 200
    for d, wl in cases:
        s = solve(_spec(d, Family.DISPERSING, wl=wl))
        facts = {k: v for k, v, _ in s.facts}
        if d.dispersion_mrad_per_nm is not None:
            assert facts["angular dispersion"] == pytest.approx(d.dispersion_mrad_per_nm, rel=1e-9)
