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
    (AnamorphicSingleDesign(magnification=2.52, material="620364", output=OutputMode.PARALLEL),
     Family.ANAMORPHIC_SINGLE, 2.52),
    (AnamorphicSingleDesign(magnification=0.5, material="517642", output=OutputMode.PARALLEL),
     Family.ANAMORPHIC_SINGLE, 0.5),
    (AnamorphicSingleDesign(magnification=3.0, material="517642", output=OutputMode.COLLINEAR),
     Family.ANAMORPHIC_SINGLE, 3.0),
    (AnamorphicSingleDesign(magnification=0.4, material="fused silica",
                            output=OutputMode.COLLINEAR), Family.ANAMORPHIC_SINGLE, 0.4),
]


@pytest.mark.parametrize(("design", "family", "m"), VERIFY)
def test_retrace_meets_magnification_and_pointing(design, family, m):
    """The optics engine's trace of every solved anamorphic design meets M and parallel output."""
    system, perf = _measured(_spec(design, family))
    assert perf.design.magnification_in_plane == pytest.approx(m, rel=1e-6)
    if family is Family.ANAMORPHIC_PAIR or design.output is not OutputMode.DEVIATED:
        assert abs(perf.design.pointing_mrad) < 1e-6 * 1e3  # 1e-6 rad
    if family is Family.ANAMORPHIC_SINGLE and design.output is OutputMode.COLLINEAR:
        assert abs(perf.design.lateral_offset_mm) < 1e-6
    for name, label, *_ in system.clear_apertures:
        assert any(p.name == name for p in system.prisms) and label


def test_pair_offset_matches_segment_sum():
    """Lateral offset = sum of segment length x sin(segment angle) (geometry, derived)."""
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


# --------------------------------------------------------------------------- single prism details


def test_single_normal_face_tilt_rebalances_magnification():
    """A tilted normal exit face meets the chief ray at the tilt (inside) and M stays exact."""
    for tilt in (0.0, 1.0, 3.0):
        d = AnamorphicSingleDesign(magnification=2.5, material="517642", exit_tilt_deg=tilt)
        system, perf = _measured(_spec(d, Family.ANAMORPHIC_SINGLE))
        exit_face = next(f.label for f in system.prisms[0].faces if f.role.value == "exit")
        aoi = dict(((p, f), a) for p, f, a in perf.design.aoi_deg)[("P1", exit_face)]
        assert aoi == pytest.approx(tilt, abs=1e-6)  # internal incidence = the tilt
        assert perf.design.magnification_in_plane == pytest.approx(2.5, rel=1e-6)


def test_parallel_exit_tilt_keeps_output_parallel():
    """The parallel prism's exit face is tilted (no back reflection into the laser), output parallel."""
    d = AnamorphicSingleDesign(magnification=2.0, material="fused silica",
                               output=OutputMode.PARALLEL, exit_tilt_deg=2.0)
    system, perf = _measured(_spec(d, Family.ANAMORPHIC_SINGLE))
    exit_face = next(f.label for f in system.prisms[0].faces if f.role.value == "exit")
    aoi = dict(((p, f), a) for p, f, a in perf.design.aoi_deg)[("P1", exit_face)]
    assert aoi == pytest.approx(2.0, abs=1e-6)
    assert abs(perf.design.pointing_mrad) < 1e-3
    assert not any(g.warning for g in perf.ghosts)


def test_collinear_beyond_reach_names_the_range():
    """An expansion beyond the collinear prism's reach is refused with the reachable range."""
    d = AnamorphicSingleDesign(magnification=6.0, material="517642", output=OutputMode.COLLINEAR)
    with pytest.raises(SolveError) as info:
        solve(_spec(d, Family.ANAMORPHIC_SINGLE))
    assert info.value.path == "design.magnification" and "collinear" in info.value.reason
    assert info.value.reachable.startswith("M = ")


# --------------------------------------------------------------------------- pair tuning


def _facts(system):
    return {k: v for k, v, _ in system.facts}


@pytest.mark.parametrize("design", [
    AnamorphicPairDesign(magnification=3.0, materials=("517642",), tuning_range=(2.6, 3.4)),
    AnamorphicPairDesign(magnification=3.0, materials=("517642",)),
    AnamorphicPairDesign(magnification=0.4, materials=("517642", "785257"), tuning_range=(0.3, 0.5)),
])
def test_tuning_rows_retrace(design):
    """Each tuning row, re-traced with the prisms turned as the row says, gives its M with the
    output parallel (1e-6 relative, 1e-6 rad); rows lie inside the sized prisms' range."""
    from prismfab.design._pair_tuning import tuned_system
    from prismfab.optics.measure import measure

    system = solve(_spec(design, Family.ANAMORPHIC_PAIR))
    facts = _facts(system)
    lo = facts["tuning range M min (these prisms: beam inside the clear apertures)"]
    hi = facts["tuning range M max (these prisms: beam inside the clear apertures)"]
    assert facts["tuning range M min (angle limits: incidence <= 80 deg, no TIR)"] <= lo < hi
    assert hi <= facts["tuning range M max (angle limits: incidence <= 80 deg, no TIR)"]
    assert len(system.tuning) == 5
    if design.tuning_range is None:
        assert any(k.startswith("tuning table: default span") for k in facts)
    else:
        assert (system.tuning[0][0], system.tuning[-1][0]) == design.tuning_range
    for row in system.tuning:
        assert lo * (1 - 1e-9) <= row[0] <= hi * (1 + 1e-9)
        perf = measure(tuned_system(system, row))
        assert perf.design.magnification_in_plane == pytest.approx(row[0], rel=1e-6)
        assert abs(perf.design.pointing_mrad) < 1e-3  # 1e-6 rad


def test_tuning_range_edge_is_where_the_beam_leaves_a_clear_aperture():
    """Inside the reported range the traced beam (x margin) stays in every sized clear aperture;
    a few per cent beyond it, it does not (or an angle limit or a contact stops it first)."""
    from prismfab.design import _pair_tuning as tuning
    from prismfab.design._pair_tuning import tuned_system
    from prismfab.optics.measure import measure

    d = AnamorphicPairDesign(magnification=3.0, materials=("517642",), tuning_range=(2.6, 3.4))
    spec = _spec(d, Family.ANAMORPHIC_PAIR)
    system = solve(spec)
    hi = _facts(system)["tuning range M max (these prisms: beam inside the clear apertures)"]
    from prismfab import materials

    n = float(materials.get("517642").n(780.0))
    pair = __import__("prismfab.design.anamorphic_pair", fromlist=["x"]).solve_angles(
        magnification=3.0, ns=(n, n), dns=(0.0, 0.0), achromatic=False, normal_exit=True,
        tilt_rad=math.radians(1.0))
    margin = spec.fabrication.clear_aperture_margin
    ca = {(c[0], c[1]): (c[4] - c[2] / 2, c[4] + c[2] / 2) for c in system.clear_apertures}

    def inside(m):
        rows = tuning.rows_over(pair, (n, n), 3.0, [m], max_incidence_deg=80.0)
        if rows is None:
            return False
        perf = measure(tuned_system(system, rows[0]))
        for p, f, c, w, _hc, _hw in perf.design.footprint_mm:
            lo_, hi_ = ca[(p, f)]
            if c - margin * w / 2 < lo_ - 1e-3 or c + margin * w / 2 > hi_ + 1e-3:
                return False
        return True

    assert inside(hi * 0.999)
    assert not inside(hi * 1.03)


# --------------------------------------------------------------------------- grids (>= 200 each)


MATERIALS = ("517642", "fused silica", "785257", "620364", "calcium fluoride")
WAVELENGTHS = (450.0, 550.0, 780.0, 1000.0)
SAMPLE = 10  # every 10th spec of a grid is re-traced by the optics engine


def _grid_pair():
    ms = np.linspace(1.3, 4.5, 10)
    for m, mats, wl in itertools.product(ms, (("517642",), ("fused silica",), ("785257",),
                                              ("517642", "785257"), ("620364",)), (450.0, 650.0, 780.0, 1064.0)):
        yield AnamorphicPairDesign(magnification=float(m), materials=mats), wl


def _grid_single():
    for m, mat, wl in itertools.product(np.linspace(0.4, 3.0, 10), MATERIALS,
                                        (450.0, 500.0, 780.0, 1000.0)):
        yield AnamorphicSingleDesign(magnification=float(m), material=mat), wl


def _grid_output(output, ms):
    for m, mat, wl in itertools.product(ms, MATERIALS, WAVELENGTHS):
        yield AnamorphicSingleDesign(magnification=float(m), material=mat, output=output), wl


def _grid_brewster():
    for mat, wl, din, pair in itertools.product(MATERIALS, (450.0, 550.0, 650.0, 800.0, 1000.0),
                                                (0.5, 1.0, 2.0, 4.0), (False, True)):
        yield BrewsterDesign(material=mat, pair=pair, separation_mm=400.0), wl, din


def _grid_dispersing():
    for mat, wl, target in itertools.product(MATERIALS, (450.0, 550.0, 650.0, 800.0), range(10)):
        if target < 4:
            yield DispersingDesign(material=mat, apex_deg=30.0 + 8 * target, littrow=target % 2 == 1), wl
        elif target < 7:
            yield DispersingDesign(material=mat, dispersion_mrad_per_nm=0.01 * (target - 3)), wl
        else:
            yield DispersingDesign(material=mat, resolving_power=20.0 * (target - 6),
                                   littrow=target == 9), wl


def _retraced(system, m, *, parallel: bool, collinear: bool = False):
    """Re-trace with the optics engine: M to 1e-6 relative, pointing and offset to 1e-6."""
    from prismfab.optics.measure import measure

    perf = measure(system)
    assert perf.design.magnification_in_plane == pytest.approx(m, rel=1e-6)
    if parallel:
        assert abs(perf.design.pointing_mrad) < 1e-3  # 1e-6 rad
    if collinear:
        assert abs(perf.design.lateral_offset_mm) < 1e-6
    return perf


@pytest.mark.parametrize("quarter", range(4))
def test_pair_grid_converges(quarter):
    """200 feasible pair specs (M 1.3-4.5, five material sets, four wavelengths), in four
    quarters, all solve; every 10th is re-traced (M and parallel output to 1e-6)."""
    cases = list(_grid_pair())
    assert len(cases) >= 200
    for k, (d, wl) in enumerate(cases):
        if k % 4 != quarter:
            continue
        s = solve(_spec(d, Family.ANAMORPHIC_PAIR, wl=wl))
        facts = {n: v for n, v, _ in s.facts}
        assert facts["magnification (angle model)"] == pytest.approx(d.magnification, rel=1e-9)
        if k % SAMPLE == 0:
            _retraced(s, d.magnification, parallel=True)


def test_single_grid_converges():
    """200 feasible single-prism specs (deviated, M 0.4-3) all solve; every 10th re-traced."""
    cases = list(_grid_single())
    assert len(cases) >= 200
    for k, (d, wl) in enumerate(cases):
        s = solve(_spec(d, Family.ANAMORPHIC_SINGLE, wl=wl))
        assert len(s.prisms) == 1 and s.clear_apertures
        if k % SAMPLE == 0:
            _retraced(s, d.magnification, parallel=False)


def test_parallel_grid_retraced():
    """200 feasible parallel-output specs (M 1.1-4.1) all solve, and every one re-traced gives
    M to 1e-6 relative and the output parallel to 1e-6 rad, with the base reflection total."""
    cases = list(_grid_output(OutputMode.PARALLEL, np.linspace(1.1, 4.1, 10)))
    assert len(cases) >= 200
    for d, wl in cases:
        s = solve(_spec(d, Family.ANAMORPHIC_SINGLE, wl=wl))
        perf = _retraced(s, d.magnification, parallel=True)
        assert all(m > 0 for r in perf.results for _p, _f, m in r.tir_margin_deg)


def test_collinear_grid_retraced():
    """200 feasible collinear specs (M 0.25-0.9 and 1.1-4.1) all solve; every one re-traced:
    M to 1e-6 relative, output parallel to 1e-6 rad and on the input axis to 1e-6 mm."""
    ms = (0.25, 0.4, 0.6, 0.8, 0.9, 1.1, 1.6, 2.3, 3.2, 4.1)
    cases = list(_grid_output(OutputMode.COLLINEAR, ms))
    assert len(cases) >= 200
    for d, wl in cases:
        s = solve(_spec(d, Family.ANAMORPHIC_SINGLE, wl=wl))
        perf = _retraced(s, d.magnification, parallel=True, collinear=True)
        assert all(m > 0 for r in perf.results for _p, _f, m in r.tir_margin_deg)


def test_brewster_grid_converges():
    """200 Brewster specs (single and pair) all solve with apex 2 atan(1/n); every 10th is
    re-traced: M = 1 at minimum deviation (Hecht, Optics §5.5.1, from memory), deviation
    2 theta_B - A, and a pair's output parallel to its input."""
    from prismfab import materials

    cases = list(_grid_brewster())
    assert len(cases) >= 200
    for k, (d, wl, din) in enumerate(cases):
        s = solve(_spec(d, Family.BREWSTER, wl=wl, din=din, dout=din))
        n = float(materials.get(d.material).n(wl))
        facts = {k_: v for k_, v, _ in s.facts}
        assert facts["apex angle"] == pytest.approx(math.degrees(2 * math.atan(1 / n)), abs=1e-9)
        if k % SAMPLE == 0:
            perf = _retraced(s, 1.0, parallel=d.pair)
            if not d.pair:
                dev_mrad = math.radians(facts["minimum deviation"]) * 1e3
                assert abs(perf.design.pointing_mrad) == pytest.approx(dev_mrad, abs=1e-3)


def test_dispersing_grid_converges():
    """200 dispersing specs (apex, dispersion, resolving power, Littrow) all solve; every 10th
    is re-traced: M = 1 at minimum deviation (and after the Littrow double pass), and the traced
    dispersion equals the minimum-deviation form of Smith, Modern Optical Engineering, Eq. 7.7."""
    cases = list(_grid_dispersing())
    assert len(cases) >= 200
    for k, (d, wl) in enumerate(cases):
        s = solve(_spec(d, Family.DISPERSING, wl=wl))
        facts = {k_: v for k_, v, _ in s.facts}
        if d.dispersion_mrad_per_nm is not None:
            assert facts["angular dispersion"] == pytest.approx(d.dispersion_mrad_per_nm, rel=1e-9)
        if k % SAMPLE == 0:
            perf = _retraced(s, 1.0, parallel=False)
            if not d.littrow:
                # mrad/nm = rad/um; the spec's band is 10 nm wide, so the traced value is local
                assert abs(perf.design.dispersion_rad_per_um) == pytest.approx(
                    facts["angular dispersion"], rel=1e-4)


def test_tuning_jacobian_matches_differences():
    # the exact Jacobian of the tuning residual against central differences (self-consistency)
    from prismfab.design._pair_tuning import _residual_jac

    pair = (PrismAngles(-1.0, 0.5, 1), PrismAngles(0.9, 0.6, -1))
    ns, x, h = (1.5, 1.6), [0.01, -0.02], 1e-6
    _f, jac = _residual_jac(pair, ns, 0.3, x)
    for k in range(2):
        up, down = list(x), list(x)
        up[k] += h
        down[k] -= h
        f_up, _ = _residual_jac(pair, ns, 0.3, up)
        f_down, _ = _residual_jac(pair, ns, 0.3, down)
        for i in range(2):
            assert jac[i][k] == pytest.approx((f_up[i] - f_down[i]) / (2 * h), rel=1e-6, abs=1e-9)
    # the residual is the angle model's: direction and log M of propagate_angles
    theta, mag, _ev = propagate_angles(0.0, [pair[0].rotated(x[0]), pair[1].rotated(x[1])], ns)
    assert _f == (math.log(mag) - 0.3, theta)


def test_shared_first_prism_trace_equals_whole_trace():
    # a sequential trace resumed after a separately traced (cached) first prism is the same trace
    from prismfab.design import sizing
    from prismfab.design.common import Section, section_edges, trace_plane
    from prismfab.model import FaceRole

    roles = (FaceRole.EXIT, FaceRole.GROUND, FaceRole.ENTRY)
    p1 = np.array([[10.0, -8.0], [14.0, 6.0], [4.0, 6.0]])
    events = set()
    for lift_mm, n2 in ((4.0, 1.76), (12.0, 1.76), (12.0, 1.2), (16.0, 1.76)):
        secs = [Section(p1, roles, 1.51), Section(p1 + np.array([30.0, lift_mm]), roles, n2)]
        geo = section_edges(secs)
        for height in (-2.0, 0.0, 1.5, 4.0):
            for _ in range(2):  # the second pass takes the first prism's trace from the cache
                got = sizing._sequential_trace(secs, geo, np.array([-50.0, height]), 0.05)
                want = trace_plane(secs, (-50.0, height), 0.05, sequential=True)
                assert got.complete == want.complete
                assert [(h.section, h.face, h.event) for h in got.hits] == \
                    [(h.section, h.face, h.event) for h in want.hits]
                assert np.array_equal(np.array(got.points), np.array(want.points))
                assert np.array_equal(got.direction, want.direction)
                events |= {(h.section, h.event) for h in got.hits} | {len(got.hits)}
    # the cases cover a miss, rays through both prisms, and TIR and blocking in the second
    assert {0, (1, "refract"), (1, "tir"), (1, "blocked")} <= events
