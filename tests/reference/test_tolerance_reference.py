"""Tolerance analysis against published relations (sources beside each check).

Index values are plain textbook numbers (n = 1.5).
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from prismfab.design import classes as C
from prismfab.design.montecarlo import Limits, Linear, draws, monte_carlo
from prismfab.design.sensitivity import build_model
from prismfab.design.tolerance import ARCSEC_RAD, opd_factor, select_classes
from prismfab.model import FaceRole, Polarization
from tests.tolerance_systems import brewster, equilateral, wedge


def _model(system, n: float, datums=(0,)):  # type: ignore[no-untyped-def]
    w = system.beam.wavelengths_nm
    return build_model(system, np.full((len(w), len(system.prisms)), n), np.full(len(system.prisms), n),
                       datum_faces=datums, wavelengths_nm=w)


def _d(model, kind: str, label: str = "", out: str = "pointing_in") -> float:  # type: ignore[no-untyped-def]
    jac = model.jacobian()
    i = next(j for j, p in enumerate(model.params) if p.kind == kind and p.label.endswith(label))
    return float(jac[out][0, i])


def test_thin_wedge_angle_sensitivity():
    """dδ/dA of a 1° wedge at normal entry, n = 1.5."""
    n, a = 1.5, math.radians(1.0)
    model = _model(wedge(1.0, n), n)
    d = abs(_d(model, "angle", "D/B"))
    phi2 = math.asin(n * math.sin(a))
    # exact: δ = φ2 − A with sin φ2 = n sin A, so dδ/dA = n cos A / cos φ2 − 1 (Snell, derived)
    assert d == pytest.approx(n * math.cos(a) / math.cos(phi2) - 1.0, rel=1e-7)
    # thin prism δ = (n − 1) A: Smith, Modern Optical Engineering 4th ed., Eq. 7.8a
    assert d == pytest.approx(n - 1.0, rel=1e-3)


def test_pyramidal_tilt_of_normal_face_deviates_by_thin_prism_rule():
    """A normal-incidence face tilted out of the section by p deviates the beam by (n − 1) p."""
    n = 1.5
    model = _model(wedge(1.0, n), n)
    # the tilt makes a thin prism out of the section: Smith 4th ed. Eq. 7.8a, δ = (n − 1) A
    assert abs(_d(model, "pyramidal", "D", out="pointing_out")) == pytest.approx(n - 1.0, rel=1e-9)


def test_index_sensitivity_at_minimum_deviation():
    """60° prism, n = 1.5, minimum deviation: dδ/dn = 1.5118579."""
    model = _model(equilateral(1.5), 1.5)
    # computed from Smith, Modern Optical Engineering, 4th ed., Eq. 7.7 at minimum deviation
    assert abs(_d(model, "nd")) == pytest.approx(1.5118579, abs=2e-7)
    # rotation does not steer at minimum deviation (dδ/dφ1 = 0; Hecht §5.5.1, from memory)
    assert abs(_d(model, "mount_rot")) < 1e-6


def test_index_sensitivity_of_normal_exit_prism_and_thermal_drift():
    """Brewster entry, normal exit, n = 1.5: dδ/dn = tan ψ1 = 2/3; dδ/dT = 6.667e-6 rad/K."""
    model = _model(brewster(1.5), 1.5)
    d = _d(model, "nd")
    # normal-exit prism dδ/dn = tan ψ1 (Smith Eq. 7.7 with φ2 = 0; Duarte single-prism form)
    assert abs(d) == pytest.approx(2.0 / 3.0, abs=1e-8)
    # dn/dT = 1.0e-5 K⁻¹ (round figure, from memory) -> 6.667e-6 rad/K, computed (1e-3 relative)
    assert abs(d) * 1.0e-5 == pytest.approx(6.667e-6, rel=1e-3)
    # M = n for Brewster entry, normal exit (Duarte (ed.), Tunable Lasers Handbook, ch. 3, p. 44)
    nominal = model.evaluate(np.zeros((1, len(model.params))))
    assert nominal["magnification"][0, 0] == pytest.approx(1.5, abs=1e-12)


def _wedge_linear(slope: float) -> Linear:
    """One parameter, one wavelength: pointing = slope × angle error, no compensator."""
    z = np.zeros((1, 1))
    return Linear((0,), np.array([[slope]]), z, z, z, None, None)


def test_monte_carlo_yield_of_wedge_under_uniform_angle_error():
    """P(|S·u·t| ≤ r) = r / (S t) for u uniform in [−1, 1]."""
    n, a = 1.5, math.radians(1.0)
    model = _model(wedge(1.0, n), n)
    slope = _d(model, "angle", "D/B")
    t = 60.0 * ARCSEC_RAD
    r = 0.6 * abs(slope) * t
    unit = draws(1, 200_000, seed=11)
    y = monte_carlo(_wedge_linear(slope), np.array([t]), Limits(r, 1.0, 1.0), unit).yield_fraction
    # analytic: uniform distribution, |X| ≤ r has probability r/(S t) = 0.6 (derived); the
    # binomial standard error at N = 200 000 is 0.0011
    assert y == pytest.approx(0.6, abs=0.005)
    assert abs(slope) == pytest.approx(n * math.cos(a) / math.cos(math.asin(n * math.sin(a))) - 1, rel=1e-7)


class _FakeModel:
    """The one angle parameter of the wedge, for ``select_classes``."""

    class _P:
        prism, kind = 0, "angle"

    params = (_P(),)


@pytest.mark.parametrize("factor, expected", [(1.02, 60.0), (0.98, 30.0)])
def test_class_selection_at_a_boundary(factor: float, expected: float):
    """The limit just above / below the 95 % point of the ±60″ class picks ±60″ / ±30″."""
    slope = 0.5003
    lin = _wedge_linear(slope)
    # yield(t) = r / (S t); the ±60″ class meets 95 % when r ≥ 0.95 S 60″ (analytic, derived)
    r = 0.95 * slope * 60.0 * ARCSEC_RAD * factor
    ladders = {(0, "angle"): C.ANGLE_LADDER_ARCSEC}
    unit = draws(1, 100_000, seed=5)
    choice, res, looser = select_classes(_FakeModel(), lin, ladders, Limits(r, 1.0, 1.0), unit, 0.95)
    assert C.ANGLE_LADDER_ARCSEC[choice[(0, "angle")]][0] == expected
    assert res.yield_fraction >= 0.95
    assert looser[(0, "angle")].yield_fraction < 0.95


def test_opd_factors():
    """Wavefront error per unit surface height: (n − 1) at normal incidence, 2n in reflection."""
    # path difference of a displaced plane: normal incidence (n − 1) h, reflection inside glass
    # 2 n h (derived from the optical path; e.g. Malacara, Optical Shop Testing, from memory)
    assert opd_factor(FaceRole.ENTRY, 0.0, 1.5) == pytest.approx(0.5, abs=1e-12)
    assert opd_factor(FaceRole.EXIT, 0.0, 1.5) == pytest.approx(0.5, abs=1e-12)
    assert opd_factor(FaceRole.TIR, 0.0, 1.5) == pytest.approx(3.0, abs=1e-12)
    # oblique refraction: n cos θt − cos θi, with Snell (derived); Brewster n = 1.5 -> 0.693375
    th_i = math.atan(1.5)
    th_t = math.asin(math.sin(th_i) / 1.5)
    assert opd_factor(FaceRole.ENTRY, math.degrees(th_i), 1.5) == pytest.approx(
        1.5 * math.cos(th_t) - math.cos(th_i), abs=1e-12)


# ISO 10110 code syntax (code numbers as in a public "Introduction to ISO 10110" tutorial)
_FORM = re.compile(r"^3/ \d+(\.\d+)?\(\d+(\.\d+)?\); λ = \d+(\.\d+)? nm$")
_IMPERF = re.compile(r"^5/ \d+×\d\.\d+(; C \d+×\d\.\d+)?; L \d+×\d\.\d+; E \d+(\.\d+)?$")


def test_iso_10110_5_surface_form_string():
    """3/A(B) with λ stated (ISO 10110-5:2015 syntax, as quoted in a secondary source)."""
    assert C.surface_form(1.0, 0.5) == "3/ 1(0.5); λ = 632.8 nm"
    assert _FORM.match(C.surface_form(4.0, 2.0, 546.07))
    # λ/4 flatness = 0.5 fringe = 158.2 nm at 632.8 nm (1 fringe = λ/2; computed)
    assert 0.5 * 632.8 / 2 == pytest.approx(158.2)
    assert C.surface_form(1.0, 0.5, decimal_comma=True) == "3/ 1(0,5); λ = 632,8 nm"


def test_iso_10110_7_and_mil_strings():
    """5/ N×A; C N×A; L N×A; E A (ISO 10110-7); scratch-dig (MIL-PRF-13830B)."""
    text = C.imperfections_iso("precision", clear_aperture_mm=(8.0, 8.0), coated=True)
    assert _IMPERF.match(text), text
    # ISO 10110-7 syntax: N×A and L as quoted in a secondary source, C and E terms from memory;
    # N = 1 + ceil(equal-area diameter / 10 mm) and the A, L, E values per grade: common practice
    assert text == "5/ 2×0.25; C 2×0.25; L 1×0.010; E 0.3"
    assert _IMPERF.match(C.imperfections_iso("high-precision", clear_aperture_mm=None, coated=False))
    # ISO 10110-7 grade series ×1.6: 0.063, 0.10, 0.25 (as quoted in a secondary source)
    assert [C.grade_number(v) for v in (0.063, 0.1, 0.25, 0.004)] == ["0.063", "0.10", "0.25", "0.004"]
    # MIL-PRF-13830B grades 60-40 commercial, 40-20 precision, 20-10 high precision: common practice
    assert [C.scratch_dig(g) for g in ("commercial", "precision", "high-precision")] == \
        ["60-40", "40-20", "20-10"]


def test_iso_10110_material_indications():
    """0/A nm/cm, 1/N×A, 2/A;B (ISO 10110-2/-3/-4, now ISO 10110-18); values common practice."""
    g = C.material_grade("precision", family="anamorphic-pair", polarization_critical=False,
                         largest_mm=20.0)
    assert g.indications() == ("0/5", "1/2×0.10", "2/2;5")  # laser beam shaping, common practice
    assert g.nd_tolerance == 0.0003 and g.vd_tolerance_pct == 0.5  # common practice
    c = C.material_grade("commercial", family="fold", polarization_critical=False, largest_mm=20.0)
    assert c.indications() == ("0/10", "1/3×0.16", "2/1;1")  # commercial, common practice


def test_coating_text_states_iso_9211_2_items():
    """Band, AOI with range and medium, polarisation, limit, durability (ISO 9211-2 items)."""
    from prismfab.model import Coating, CoatingType

    text = C.coating_text(Coating(CoatingType.ANTIREFLECTION, reflectance_max_pct=0.2),
                          role=FaceRole.ENTRY, band_nm=(798.0, 818.0), aoi_deg=(68.0, 67.0, 69.0),
                          n_glass=1.5, polarization=Polarization.P)
    for item in ("R ≤ 0.2 % per surface", "798-818 nm", "AOI 68° (67° to 69°) in air",
                 "p-polarised", "ISO 9211-4"):
        assert item in text
    assert C.coating_text(Coating(CoatingType.NONE, reason="Brewster"), role=FaceRole.ENTRY,
                          band_nm=(800, 800), aoi_deg=None, n_glass=1.5,
                          polarization=Polarization.P) == "uncoated: Brewster"
