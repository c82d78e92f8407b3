"""Tolerance analysis: perturbation geometry, linear model vs exact re-trace, class selection."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from prismfab.design.montecarlo import Limits, draws, exact_outputs, linearise, monte_carlo, predict
from prismfab.design.parts import make_parts
from prismfab.design.sensitivity import build_model
from prismfab.design.tolerance import derive
from prismfab.materials import get
from prismfab.model import Performance
from prismfab.spec.types import Fabrication, Requirements
from tests.tolerance_systems import brewster_pair, equilateral, right_angle, spec_for, wedge

N = float(get("517642").n(780.0))


def _model(system, datums):  # type: ignore[no-untyped-def]
    w = system.beam.wavelengths_nm
    mat = get("517642")
    n = np.array([[float(mat.n(x))] * len(system.prisms) for x in w])
    return build_model(system, n, np.full(len(system.prisms), mat.nd), datum_faces=datums,
                       wavelengths_nm=w)


def _interior(normals_xy: np.ndarray, a: int, b: int) -> float:
    """Interior angle between faces a and b (b after a, counter-clockwise), from normals."""
    ea = np.array([-normals_xy[a][1], normals_xy[a][0]])
    eb = np.array([-normals_xy[b][1], normals_xy[b][0]])
    return math.pi - math.atan2(ea[0] * eb[1] - ea[1] * eb[0], float(ea @ eb))


@pytest.mark.parametrize("system, datums", [(equilateral(N), (0,)), (right_angle(N), (1,)),
                                            (wedge(1.0, N), (0,)),
                                            (brewster_pair(N), (0, 2))])
def test_angle_parameter_changes_its_interior_angle_by_one_unit(system, datums):  # type: ignore[no-untyped-def]
    """Raising a chain angle by e turns the faces so that exactly that interior angle grows by e."""
    model = _model(system, datums)
    eps = 1e-4
    for j, p in enumerate(model.params):
        if p.kind != "angle":
            continue
        e = np.zeros((1, len(model.params)))
        e[0, j] = eps
        _, nrm = model._perturbed_planes(e)
        prism = system.prisms[p.prism]
        rot = np.array(prism.pose.rotation)
        part = nrm[0, p.prism] @ rot  # back to the part frame
        ca = model.chains[p.prism][p.index]
        lo, hi = (ca.face_a, ca.face_b) if ca.sign < 0 else (ca.face_b, ca.face_a)
        before = ca.value_rad
        after = _interior(part[:, :2], lo, hi)  # also across ground faces (turn below 180 deg)
        assert after - before == pytest.approx(eps, rel=1e-6)
        for other in model.chains[p.prism]:
            if other is ca:
                continue
            lo2, hi2 = (other.face_a, other.face_b) if other.sign < 0 else (other.face_b, other.face_a)
            assert _interior(part[:, :2], lo2, hi2) == pytest.approx(other.value_rad, abs=1e-12)


def test_linear_model_matches_exact_retrace_of_sample_builds():
    """Twenty random commercial-tolerance builds: linear prediction = exact re-trace, to second order."""
    system = brewster_pair(N)
    model = _model(system, (0, 2))
    lin = linearise(model, compensator_prisms=(1, 0))
    scale = np.array([{"angle": 300, "pyramidal": 300}.get(model.params[i].kind, 0) * math.pi / 648000
                      or {"nd": 5e-4, "vd": 8e-3}[model.params[i].kind] for i in lin.model_index])
    errors = draws(len(scale), 20, seed=3) * scale
    lin_out = predict(lin, errors)
    exact = exact_outputs(model, lin, errors)
    assert lin.comp_index is not None
    assert np.max(np.abs(exact["pin"][:, 0])) < 2e-5  # compensator restores the design pointing
    for key, atol in (("pin", 2e-5), ("pout", 2e-5), ("mag", 2e-4), ("off", 2e-3)):
        assert np.max(np.abs(lin_out[key] - exact[key])) < atol, key
    assert np.max(np.abs(lin_out["pout"])) > 1e-4  # the comparison is not trivially zero


def test_monte_carlo_is_seeded_and_monotone():
    """Same seed gives the same yield; a tighter tolerance never lowers it."""
    model = _model(brewster_pair(N), (0, 2))
    lin = linearise(model, compensator_prisms=(1,))
    limits = Limits(0.5e-3, 0.01, 0.2)
    unit = draws(len(lin.model_index), 3000, seed=7)
    again = draws(len(lin.model_index), 3000, seed=7)
    assert np.array_equal(unit, again)
    loose = np.full(len(lin.model_index), 3e-4)
    tight = loose / 3.0
    y_loose = monte_carlo(lin, loose, limits, unit).yield_fraction
    y_tight = monte_carlo(lin, tight, limits, unit).yield_fraction
    assert y_tight >= y_loose
    assert y_loose < 1.0


def test_derive_meets_yield_target_and_reports_looser_yields():
    """Derived classes meet the target; every quantity one class looser falls below it."""
    system = brewster_pair(N)
    spec = spec_for(system, requirements=Requirements(pointing_mrad=0.3, magnification_pct=0.5,
                                                      offset_mm=0.2))
    parts = make_parts(spec, system, Performance(results=()))
    new, report = derive(spec, system, parts, n_builds=1500)
    assert report.system_yield >= spec.requirements.yield_target
    for row in report.yields:
        if row.looser_yield is not None:
            assert row.looser_yield < spec.requirements.yield_target
    for p in new:
        assert p.tolerances.yield_fraction == report.system_yield
        assert p.tolerances.cost_index >= 1.0
        assert p.tolerances.driving
        assert all(f.surface_form.startswith("3/ ") for f in p.faces if f.polished)
    assert report.thermal_total_mrad_per_k is None  # 517642 carries no dn/dT in the catalogue
    assert any("yield" in line for line in report.lines())


def test_derive_is_deterministic():
    """Two runs give equal parts and reports."""
    system = brewster_pair(N)
    spec = spec_for(system)
    parts = make_parts(spec, system, Performance(results=()))
    assert derive(spec, system, parts, n_builds=500) == derive(spec, system, parts, n_builds=500)


def test_explicit_angle_tolerance_is_kept():
    """fabrication.angle_tolerance_arcsec overrides the classes and is marked explicit."""
    system = equilateral(N)
    spec = spec_for(system, fabrication=Fabrication(angle_tolerance_arcsec=20.0,
                                                    pyramidal_tolerance_arcsec=45.0))
    parts = make_parts(spec, system, Performance(results=()))
    new, report = derive(spec, system, parts, n_builds=500)
    assert new[0].tolerances.angle_arcsec == 20.0
    assert new[0].tolerances.pyramidal_arcsec == 45.0
    assert new[0].tolerances.grade == "explicit"
    assert report.compensator.startswith("none")  # minimum deviation: rotation does not steer


def test_unreachable_requirement_warns_instead_of_failing():
    """A requirement no class can meet gives the tightest classes and a warning."""
    system = wedge(1.0, N)
    spec = spec_for(system, requirements=Requirements(pointing_mrad=1e-4))
    parts = make_parts(spec, system, Performance(results=()))
    new, report = derive(spec, system, parts, n_builds=500)
    assert new[0].tolerances.angle_arcsec == 3.0
    assert report.warnings and "below the target" in report.warnings[0]


def test_thermal_drift_uses_dn_dt():
    """Fused silica (dn/dT in the catalogue) gives a drift equal to dδ/dn · dn/dT."""
    mat = get("fused silica")
    n = float(mat.n(780.0))
    system = brewster_pair(n)
    system = replace(system, prisms=tuple(replace(p, material="fused silica") for p in system.prisms))
    spec = spec_for(system)
    parts = make_parts(spec, system, Performance(results=()))
    _, report = derive(spec, system, parts, n_builds=200)
    nd_rows = [r for r in report.sensitivities if r.parameter == "nd"]
    expected = sum(r.pointing_in_mrad / 1e-4 for r in nd_rows) * mat.dn_dt_per_k
    assert report.thermal_total_mrad_per_k == pytest.approx(expected, rel=1e-9)


def test_nominal_retrace_agrees_with_the_optics_measurement():
    """The perturbation tracer at zero error reproduces prismfab.optics.measure on the same system."""
    from prismfab.optics.measure import measure

    system = brewster_pair(N)
    perf = measure(system)
    model = _model(system, (0, 2))
    out = model.evaluate(np.zeros((1, len(model.params))))
    for w, r in enumerate(perf.results):
        assert out["magnification"][0, w] == pytest.approx(r.magnification_in_plane, rel=1e-9)
        assert out["pointing_in"][0, w] * 1e3 == pytest.approx(r.pointing_mrad, abs=1e-9)
