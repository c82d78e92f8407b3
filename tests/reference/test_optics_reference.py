"""The optics engine against published physics: refraction, Fresnel, prisms, beams, dispersion.

Every expectation names its source beside the check. Values marked "computed" are consequences
of the named published formula, evaluated independently of prismfab in double precision.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from prismfab.model import FaceRole, Polarization, System
from prismfab.optics import closed_forms as cf
from prismfab.optics.measure import measure
from prismfab.optics.testing import constant_index, prism_chain, prism_from_points
from prismfab.optics.trace import (
    EVENT_LEAK,
    EVENT_REFRACT,
    EVENT_TIR,
    STATUS_EXITED,
    STATUS_LEAKED,
    RayBundle,
    trace,
)

DEG = math.pi / 180.0


def _cauchy(table: dict[str, tuple[float, float]]):  # type: ignore[no-untyped-def]
    """index_of for test glasses n = a + b / lambda^2 (lambda in um); invented test materials."""

    def index_of(material: str, wavelengths_nm: np.ndarray) -> np.ndarray:
        a, b = table[material]
        return a + b / (np.asarray(wavelengths_nm, float) * 1e-3) ** 2

    return index_of


def _malitson_fused_silica(material: str, wavelengths_nm: np.ndarray) -> np.ndarray:
    # Malitson, J. Opt. Soc. Am. 55, 1205 (1965), Sellmeier coefficients (resonance
    # wavelengths squared).
    lam2 = (np.asarray(wavelengths_nm, float) * 1e-3) ** 2
    b = (0.6961663, 0.4079426, 0.8974794)
    c = (0.0684043**2, 0.1162414**2, 9.896161**2)
    return np.sqrt(1.0 + sum(bi * lam2 / (lam2 - ci) for bi, ci in zip(b, c, strict=True)))


# --------------------------------------------------------------- refraction, reflection, TIR


def test_vector_refraction_cases() -> None:
    """Worked vector Snell cases (Spencer & Murty 1962 [from memory]; Glassner 1989 form)."""
    d = np.array([math.sin(30 * DEG), 0.0, -math.cos(30 * DEG)])
    t, tir = cf.refract(d, [0.0, 0.0, 1.0], 1.0, 1.5)
    # plane refraction, computed from t = eta d + (eta c - sqrt k) N (Heckbert's derivation in
    # Glassner (ed.), An Introduction to Ray Tracing, 1989)
    assert t == pytest.approx([1.0 / 3.0, 0.0, -0.9428090415820634], abs=1e-9)
    assert not tir
    assert math.degrees(math.acos(-t[2])) == pytest.approx(19.4712206, abs=1e-7)
    d = np.array([1.0, 2.0, -3.0]) / math.sqrt(14.0)
    t, _ = cf.refract(d, [0.0, 0.0, 1.0], 1.0, 1.5)
    # skew ray, computed from the same form: plane of incidence kept, tangential invariant
    # n |d x N| = 0.5976143
    assert t == pytest.approx([0.1781742, 0.3563483, -0.9172076], abs=1e-7)
    assert t[0] / t[1] == pytest.approx(0.5, abs=1e-12)
    z = np.array([0.0, 0.0, 1.0])
    assert np.linalg.norm(np.cross(d, z)) == pytest.approx(0.5976143, abs=1e-7)
    assert 1.5 * np.linalg.norm(np.cross(t, z)) == pytest.approx(0.5976143, abs=1e-7)
    nrm = np.array([0.0, math.sin(20 * DEG), math.cos(20 * DEG)])
    t, _ = cf.refract([0.0, 0.0, -1.0], nrm, 1.0, 1.5)
    # tilted normal, computed from Snell's law: asin(sin 20 deg / 1.5) = 13.1801422 deg
    assert math.degrees(math.acos(-t @ nrm)) == pytest.approx(13.1801422, abs=1e-7)


def test_reflection_and_tir_cases() -> None:
    """Reflection r = d - 2(d.N)N and the TIR radicand test (Heckbert, in Glassner 1989)."""
    d = np.array([math.sin(30 * DEG), 0.0, -math.cos(30 * DEG)])
    assert cf.reflect(d, [0.0, 0.0, 1.0]) == pytest.approx([0.5, 0.0, 0.8660254037844386], abs=1e-12)
    inside = np.array([math.sin(45 * DEG), 0.0, -math.cos(45 * DEG)])
    t, tir = cf.refract(inside, [0.0, 0.0, 1.0], 1.5, 1.0)
    assert tir  # k = 1 - 2.25 * 0.5 = -0.125 < 0
    assert np.all(np.isfinite(t))


@pytest.mark.parametrize(
    ("n", "deg"),
    [(1.5, 41.8103149), (1.458464, 43.2870), (1.5168, 41.2452), (1.78472, 34.0774), (2.4028, 24.5937)],
)
def test_critical_angles(n: float, deg: float) -> None:
    """Critical angle asin(1/n), computed from the TIR radicand test (Heckbert, in Glassner 1989)."""
    tol = 1e-7 if n == 1.5 else 5e-5
    assert math.degrees(cf.critical_angle(n)) == pytest.approx(deg, abs=tol)


# --------------------------------------------------------------------------- Fresnel, Brewster


@pytest.mark.parametrize(
    ("deg", "rs", "rp"),
    [(0.0, 0.04, 0.04), (30.0, 0.057796, 0.025249), (45.0, 0.092013, 0.0084665),
     (60.0, 0.176571, 0.0018019), (80.0, 0.538595, 0.236814)],
)
def test_fresnel_table(deg: float, rs: float, rp: float) -> None:
    """Fresnel powers, n 1 -> 1.5: Smith, Modern Optical Engineering 4th ed., Eqs. 11.1, 11.2."""
    r_s, r_p, t_s, t_p = cf.fresnel_powers(deg * DEG, 1.0, 1.5)
    assert r_s == pytest.approx(rs, abs=1e-6)
    assert r_p == pytest.approx(rp, abs=1e-6)
    assert r_s + t_s == pytest.approx(1.0, abs=1e-12)
    assert r_p + t_p == pytest.approx(1.0, abs=1e-12)
    # Smith Eq. 11.1 in its sin^2/tan^2 form must agree with the amplitude form
    if deg > 0:
        tt = cf.snell(deg * DEG, 1.0, 1.5)
        i = deg * DEG
        assert r_s == pytest.approx(math.sin(i - tt) ** 2 / math.sin(i + tt) ** 2, abs=1e-12)
        assert r_p == pytest.approx(math.tan(i - tt) ** 2 / math.tan(i + tt) ** 2, abs=1e-12)


def test_fresnel_internal_and_random_sum() -> None:
    """Internal reflection 1.5 -> 1 at 30 deg (computed, Smith Eq. 11.1); R + T = 1 (energy)."""
    r_s, r_p, _, _ = cf.fresnel_powers(30 * DEG, 1.5, 1.0)
    assert r_s == pytest.approx(0.105773, abs=1e-6)
    assert r_p == pytest.approx(0.0046075, abs=1e-6)
    rng = np.random.default_rng(1)
    ang = rng.uniform(0, 89.9, 200) * DEG
    n2 = rng.uniform(1.3, 3.5, 200)
    for n1, m2 in ((1.0, n2), (n2, 1.0)):
        r_s, r_p, t_s, t_p = cf.fresnel_powers(ang, n1, m2)
        assert np.max(np.abs(r_s + t_s - 1.0)) < 1e-12
        assert np.max(np.abs(r_p + t_p - 1.0)) < 1e-12


@pytest.mark.parametrize(
    ("n", "theta_b", "r0"),
    [(1.5, 56.3099325, 0.04), (1.458464, 55.5634, 0.034776), (1.5168, 56.6038, 0.042165),
     (1.78472, 60.7376, 0.079408), (2.4028, 67.4038, 0.169949), (3.42, 73.7012, 0.299769)],
)
def test_brewster(n: float, theta_b: float, r0: float) -> None:
    """tan(theta_B) = n, R_p(theta_B) = 0, R_s = ((n^2-1)/(n^2+1))^2 (Smith Eq. 11.1; Brewster)."""
    b = cf.brewster_angle(1.0, n)
    assert math.degrees(b) == pytest.approx(theta_b, abs=1e-7 if n == 1.5 else 5e-5)
    r_s, r_p, _, _ = cf.fresnel_powers(b, 1.0, n)
    assert r_p < 1e-15
    assert r_s == pytest.approx(((n * n - 1) / (n * n + 1)) ** 2, abs=1e-12)
    assert cf.fresnel_powers(0.0, 1.0, n)[0] == pytest.approx(r0, abs=1e-6)  # Smith Eq. 11.2
    # internal Brewster angle = 90 deg - theta_B
    assert cf.fresnel_powers(math.pi / 2 - b, n, 1.0)[1] < 1e-15


def test_tir_phase() -> None:
    """Phase on TIR, 1.5 -> 1 at 45 deg: 36.8699/73.7398/36.8699 deg (Born & Wolf 1.5.4, from memory)."""
    ds, dp, delta = cf.tir_phase(45 * DEG, 1.5, 1.0)
    assert math.degrees(ds) == pytest.approx(36.8699, abs=1e-4)
    assert math.degrees(dp) == pytest.approx(73.7398, abs=1e-4)
    assert math.degrees(delta) == pytest.approx(36.8699, abs=1e-4)
    rs, rp, _, _ = cf.fresnel_amplitudes(45 * DEG, 1.5, 1.0)
    assert abs(rs) == pytest.approx(1.0, abs=1e-12)
    assert abs(np.angle(rp / rs)) == pytest.approx(delta, abs=1e-12)


# --------------------------------------------------------------------------- single prism


def test_minimum_deviation_values() -> None:
    """n = sin((A+D)/2)/sin(A/2) (Hecht 5.5.1, from memory); published 59.54084145 deg case."""
    # published 59.54084145 deg: ingalidakis.com spectroscope page ("deviation angle")
    assert math.degrees(cf.minimum_deviation(apex_rad=60 * DEG, n=1.72803)) == pytest.approx(
        59.54084145, abs=1e-7)
    assert math.degrees(cf.minimum_deviation(apex_rad=60 * DEG, n=1.5)) == pytest.approx(37.1807558, abs=1e-7)
    assert math.degrees(cf.minimum_deviation_incidence(apex_rad=60 * DEG, n=1.5)) == pytest.approx(
        48.5903779, abs=1e-7)
    assert cf.index_from_minimum_deviation(apex_rad=60 * DEG, deviation_rad=37.18075578 * DEG) == \
        pytest.approx(1.5, abs=1e-9)
    assert cf.index_from_minimum_deviation(apex_rad=60 * DEG, deviation_rad=59.54084145 * DEG) == \
        pytest.approx(1.72803, abs=1e-9)
    assert math.degrees(cf.minimum_deviation(apex_rad=60 * DEG, n=1.458464)) == pytest.approx(33.644097, abs=1e-6)


def _single(n: float, apex: float, phi1: float, sense: int = 1) -> System:
    return prism_chain(apex_rad=[apex], incidence_rad=[phi1], senses=[sense], index_of=constant_index(n))


def _deviation_and_m(system: System, n: float) -> tuple[float, float]:
    rays = RayBundle.create([[0, 0, 0], [0.01, 0, 0]], [0, 0, 1], 632.8)
    res = trace(system, rays, index_of=constant_index(n))
    assert np.all(res.status == STATUS_EXITED)
    d = res.directions[0]
    delta = res.origins[1] - res.origins[0]
    return math.acos(d[2]), float(np.linalg.norm(delta - (delta @ d) * d)) / 0.01


def test_exact_trace_minimum_deviation_prism() -> None:
    """Exact trace at minimum deviation: D = 37.1807558 deg, M = 1 (Hecht 5.5.1, from memory)."""
    phi = cf.minimum_deviation_incidence(apex_rad=60 * DEG, n=1.5)
    for sense in (1, -1):
        dev, m = _deviation_and_m(_single(1.5, 60 * DEG, phi, sense), 1.5)
        assert math.degrees(dev) == pytest.approx(37.1807558, abs=1e-7)
        assert m == pytest.approx(1.0, abs=1e-9)


@pytest.mark.parametrize("n", [1.5, 1.458464, 1.5168, 1.78472])
def test_brewster_entry_normal_exit_prism(n: float) -> None:
    """Brewster entry, normal exit: M = n exactly (Tunable Lasers Handbook ch. 3, p. 44)."""
    phi, apex, dev = cf.normal_exit_prism(magnification=n, n=n)
    assert phi == pytest.approx(math.atan(n), abs=1e-12)  # phi1 = theta_B = atan n
    assert apex == pytest.approx(math.atan(1 / n), abs=1e-12)
    trace_dev, m = _deviation_and_m(_single(n, apex, phi), n)
    assert m == pytest.approx(n, abs=1e-9)
    assert trace_dev == pytest.approx(math.atan((n * n - 1) / (2 * n)), abs=1e-9)  # tan d = (n^2-1)/2n
    if n == 1.5:
        assert math.degrees(trace_dev) == pytest.approx(22.6198649, abs=1e-7)


def test_single_prism_closed_forms_match_trace() -> None:
    """Exit angle, deviation, k1 k2 against the exact trace (Duarte handbook ch. 2, eq. 11 defs)."""
    for phi_deg in (40.0, 55.0, 70.0):
        p = cf.prism_path(phi_deg * DEG, apex_rad=50 * DEG, n=1.62)
        dev, m = _deviation_and_m(_single(1.62, 50 * DEG, phi_deg * DEG), 1.62)
        assert dev == pytest.approx(p.deviation, abs=1e-12)
        assert m == pytest.approx(p.magnification, rel=1e-9)
        assert cf.prism_exit_angle(phi_deg * DEG, apex_rad=50 * DEG, n=1.62) == pytest.approx(p.phi2, abs=1e-12)


@pytest.mark.parametrize(("incidence_deg", "exact"), [(0.0, 0.500095), (10.0, 0.511023), (20.0, 0.549875)])
def test_thin_prism(incidence_deg: float, exact: float) -> None:
    """Thin wedge n = 1.5, A = 1 deg: exact (computed, Snell) vs Smith Eqs. 7.8a/7.8b."""
    dev = cf.prism_deviation(incidence_deg * DEG, apex_rad=1 * DEG, n=1.5)
    assert math.degrees(dev) == pytest.approx(exact, abs=1e-6)
    assert math.degrees(cf.thin_prism_deviation(apex_rad=1 * DEG, n=1.5)) == pytest.approx(0.5, abs=1e-12)
    approx = {0.0: 0.5, 10.0: 0.512692, 20.0: 0.550770}[incidence_deg]
    got = cf.thin_prism_deviation_tilted(apex_rad=1 * DEG, n=1.5, incidence_rad=incidence_deg * DEG)
    assert math.degrees(got) == pytest.approx(approx, abs=1e-6)


@pytest.mark.parametrize("beta_deg", [0.0, 5.0, 15.0, 30.0])
def test_rays_out_of_principal_section(beta_deg: float) -> None:
    """3D trace vs effective index n_eff = sqrt(n^2 - sin^2 b)/cos b (derived from vector Snell;
    the idea is credited to Bravais, from memory)."""
    n, apex = 1.5, 60 * DEG
    phi = cf.minimum_deviation_incidence(apex_rad=apex, n=n)
    system = _single(n, apex, phi)
    b = beta_deg * DEG
    start = [0.0, -30.0 * math.tan(b), 0.0]  # meets the entry face on the beam plane
    res = trace(system, RayBundle.create(start, [0, math.sin(b), math.cos(b)], 632.8),
                index_of=constant_index(n))
    assert res.n_events[0] == 2
    d = res.directions[0]
    assert d[1] == pytest.approx(math.sin(b), abs=1e-12)  # tangential component conserved
    n_eff = math.sqrt(n * n - math.sin(b) ** 2) / math.cos(b)
    projected = math.atan2(-d[0], d[2])
    assert projected == pytest.approx(cf.prism_deviation(phi, apex_rad=apex, n=n_eff), abs=1e-10)


# -------------------------------------------------------- prism pairs, dispersion, thermal drift


def test_anamorphic_pair_transmission_offset() -> None:
    """n = 1.5, M = 3 pair: T_p = 0.912123 (computed, Smith Eq. 11.1); offset s sin(delta) (derived)."""
    idx = constant_index(1.5)
    phi, apex, dev = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)
    system = prism_chain(apex_rad=[apex, apex], incidence_rad=[phi, phi], senses=[1, -1], index_of=idx)
    perf = measure(system, index_of=idx)
    r = perf.design
    assert r.magnification_in_plane == pytest.approx(3.0, abs=1e-9)
    assert r.pointing_mrad == pytest.approx(0.0, abs=1e-9)
    assert r.transmission == pytest.approx(0.912123, abs=1e-6)
    res = trace(system, RayBundle.create([0, 0, 0], [0, 0, 1], 632.8), index_of=idx)
    pts = res.event_points[0]
    s = float(np.linalg.norm(pts[2] - pts[0]))  # entry on P1 to entry on P2
    assert abs(r.lateral_offset_mm) == pytest.approx(s * math.sin(dev), abs=1e-9)
    assert math.degrees(dev) == pytest.approx(26.0682, abs=1e-4)  # computed from the closed form


@pytest.mark.parametrize(
    "senses", [(1,), (-1,), (1, 1), (1, -1), (-1, 1), (1, 1, 1), (1, -1, 1), (1, 1, -1), (-1, -1, 1)])
def test_multiple_prism_dispersion_vs_exact_trace(senses: tuple[int, ...]) -> None:
    """Duarte & Piper recursion (Opt. Commun. 43, 303 (1982)) vs finite differences of the trace."""
    table = {"g1": (1.5, 0.0042), "g2": (1.7, 0.012), "g3": (1.6, 0.008)}
    idx = _cauchy(table)
    mats = ["g1", "g2", "g3"][: len(senses)]
    apex = [50 * DEG, 35 * DEG, 45 * DEG][: len(senses)]
    phi = [55 * DEG, 60 * DEG, 40 * DEG][: len(senses)]
    lam = 632.8
    system = prism_chain(apex_rad=apex, incidence_rad=phi, senses=senses, index_of=idx,
                         materials=mats, wavelength_nm=lam)
    step_nm = 0.01
    res = trace(system, RayBundle.create([0, 0, 0], [0, 0, 1], [lam - step_nm, lam + step_nm]),
                index_of=idx)
    assert np.all(res.status == STATUS_EXITED)
    theta = np.arctan2(res.directions[:, 0], res.directions[:, 2])
    fd = (theta[1] - theta[0]) / (2 * step_nm * 1e-3)
    lam_um = lam * 1e-3
    n = [table[m][0] + table[m][1] / lam_um**2 for m in mats]
    dn = [-2 * table[m][1] / lam_um**3 for m in mats]
    same = [True] + [senses[i] == senses[i - 1] for i in range(1, len(senses))]
    grad = cf.multiple_prism_dispersion(phi, apex_rad=apex, n=n, dn_dlambda=dn, same_sense=same)
    # sign: the output angle turns by -sense * d(phi2) (apex on +x for sense +1)
    assert fd == pytest.approx(-senses[-1] * grad, abs=1e-9)
    perf = measure(system, index_of=idx)
    assert perf.design.dispersion_rad_per_um == pytest.approx(fd, abs=1e-9)


def test_fused_silica_prism_dispersion() -> None:
    """Fused silica 60 deg at min. dev., 632.8 nm: |d delta/d lambda| = 0.0423841 rad/um (Smith Eq. 7.7)."""
    lam = 632.8165  # the He-Ne vacuum line; 0.0423841 is computed there
    n = float(_malitson_fused_silica("", np.array([lam]))[0])
    phi = cf.minimum_deviation_incidence(apex_rad=60 * DEG, n=n)
    system = prism_chain(apex_rad=[60 * DEG], incidence_rad=[phi], senses=[1],
                         index_of=_malitson_fused_silica, wavelength_nm=lam)
    disp = measure(system, index_of=_malitson_fused_silica).design.dispersion_rad_per_um
    assert abs(disp) == pytest.approx(0.0423841, abs=1e-6)
    # computed from Smith Eq. 7.7: d delta/dn = 1.459776 at this wavelength; 1.5118579 for n = 1.5
    assert cf.prism_ddelta_dn(phi, apex_rad=60 * DEG, n=n) == pytest.approx(1.459776, abs=1e-6)
    phi15 = cf.minimum_deviation_incidence(apex_rad=60 * DEG, n=1.5)
    assert cf.prism_ddelta_dn(phi15, apex_rad=60 * DEG, n=1.5) == pytest.approx(1.5118579, abs=1e-7)


def test_thermal_pointing_drift() -> None:
    """d delta/dT = (d delta/dn)(dn/dT), dn/dT = 1e-5 /K (round figure, from memory); computed."""
    n = 1.458464
    phi = cf.minimum_deviation_incidence(apex_rad=60 * DEG, n=n)
    drift = cf.prism_ddelta_dn(phi, apex_rad=60 * DEG, n=n) * 1.0e-5
    assert drift == pytest.approx(1.4614e-5, rel=1e-3)
    assert math.degrees(drift) * 3600 == pytest.approx(3.014, rel=1e-3)
    phi_b, apex_b, _ = cf.normal_exit_prism(magnification=1.5, n=1.5)
    assert cf.prism_ddelta_dn(phi_b, apex_rad=apex_b, n=1.5) == pytest.approx(2 / 3, abs=1e-12)
    # the same from the exact trace: index step of 1e-6 at fixed geometry
    system = _single(1.5, apex_b, phi_b)
    devs = [_deviation_and_m(system, 1.5 + h)[0] for h in (-1e-6, 1e-6)]
    assert (devs[1] - devs[0]) / 2e-6 == pytest.approx(2 / 3, abs=1e-7)


# ------------------------------------------------------------- TIR folds, Gaussian apertures


def _fold(n: float) -> tuple[System, RayBundle]:
    pts = [(5.0, 10.0), (-5.0, 10.0), (-5.0, 20.0)]
    roles = (FaceRole.ENTRY, FaceRole.EXIT, FaceRole.TIR)
    prism = prism_from_points("F1", pts, roles, angle_rad=0.2)
    system = prism_chain(apex_rad=[], incidence_rad=[], senses=[], index_of=constant_index(n))
    return System("test", (prism,), system.beam), RayBundle.create([0, 0, 0], [0, 0, 1], 632.8)


def test_right_angle_fold_tir() -> None:
    """Normal entry: the hypotenuse sees 45 deg; TIR needs n > sqrt(2) (computed, asin(1/n))."""
    system, rays = _fold(1.5)
    res = trace(system, rays, index_of=constant_index(1.5))
    assert res.event_kind[0].tolist() == [EVENT_REFRACT, EVENT_TIR, EVENT_REFRACT]
    assert math.degrees(res.event_aoi_rad[0, 1]) == pytest.approx(45.0, abs=1e-9)
    assert res.directions[0] == pytest.approx([-1.0, 0.0, 0.0], abs=1e-12)
    assert res.status[0] == STATUS_EXITED
    # two normal-incidence faces, TIR lossless: (1 - R0)^2 = 0.9216 (Smith Eq. 11.2)
    assert res.power[0] == pytest.approx(0.9216, abs=1e-12)
    perf = measure(system, index_of=constant_index(1.5))
    margin = dict(((p, f), m) for p, f, m in perf.design.tir_margin_deg)[("F1", "C")]
    assert margin == pytest.approx(45.0 - 41.8103149, abs=1e-7)


def test_mgf2_like_fold_leaks() -> None:
    """n = 1.377744 < sqrt(2): no TIR at 45 deg, reported, never NaN (computed, asin(1/n))."""
    system, rays = _fold(1.377744)
    res = trace(system, rays, index_of=constant_index(1.377744))
    assert res.status[0] == STATUS_LEAKED
    assert res.event_kind[0, 1] == EVENT_LEAK
    assert np.all(np.isfinite(res.directions)) and np.all(np.isfinite(res.origins))
    perf = measure(system, index_of=constant_index(1.377744))
    assert perf.design.transmission == 0.0
    assert any("leaks" in w for w in perf.warnings)
    assert perf.design.tir_margin_deg[0][2] < 0.0


def test_exit_face_beyond_critical_reports_tir() -> None:
    """A refracting face hit at 45 deg from n = 1.5 glass reflects totally (critical 41.81 deg)."""
    pts = [(5.0, 10.0), (-5.0, 10.0), (-5.0, 20.0)]
    prism = prism_from_points("F1", pts, (FaceRole.ENTRY, FaceRole.EXIT, FaceRole.EXIT))
    system, rays = _fold(1.5)
    res = trace(System("test", (prism,), system.beam), rays, index_of=constant_index(1.5))
    assert res.event_kind[0, 1] == EVENT_TIR
    assert res.status[0] == STATUS_EXITED


@pytest.mark.parametrize(("a_over_w", "circ", "slit"), [
    (0.5, 0.393469, 0.682689), (1.0, 0.864665, 0.954500), (1.5, 0.988891, 0.997300),
    (math.pi / 2, 0.992808, 0.998320), (2.0, 0.999665, 0.999937)])
def test_gaussian_clipping(a_over_w: float, circ: float, slit: float) -> None:
    """T = 1 - exp(-2a^2/w^2) (Siegman, Lasers, ch. 17, from memory); slit erf(sqrt2 a/w), derived."""
    assert cf.circular_aperture_transmission(radius_mm=a_over_w * 2.0, w_mm=2.0) == pytest.approx(circ, abs=1e-6)
    assert cf.slit_transmission(half_width_mm=a_over_w * 2.0, w_mm=2.0) == pytest.approx(slit, abs=1e-6)


def test_gaussian_aperture_inverses() -> None:
    """Radius for 99 % / 99.9 % (computed by inverting the two formulas): 1.517427, 1.858461;
    slit 1.287915, 1.645263."""
    assert cf.circular_aperture_radius(fraction=0.99, w_mm=1.0) == pytest.approx(1.517427, abs=1e-6)
    assert cf.circular_aperture_radius(fraction=0.999, w_mm=1.0) == pytest.approx(1.858461, abs=1e-6)
    assert cf.slit_half_width(fraction=0.99, w_mm=1.0) == pytest.approx(1.287915, abs=1e-6)
    assert cf.slit_half_width(fraction=0.999, w_mm=1.0) == pytest.approx(1.645263, abs=1e-6)


def test_footprint_on_tilted_face() -> None:
    """Footprint W/cos(phi): 3 mm at 62.2087 deg covers 6.434 mm (geometry, computed)."""
    idx = constant_index(1.5)
    phi, apex, _ = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)
    system = prism_chain(apex_rad=[apex], incidence_rad=[phi], senses=[1], index_of=idx,
                         diameter_mm=(3.0, 2.0), polarization=Polarization.S)
    assert math.degrees(phi) == pytest.approx(62.2087, abs=1e-4)
    foot = {(p, f): rest for p, f, *rest in measure(system, index_of=idx).design.footprint_mm}
    entry = foot[("P1", "A")]
    assert entry[1] == pytest.approx(6.434, abs=1e-3)
    assert entry[3] == pytest.approx(2.0, abs=1e-9)
    # normal-exit face shows the expanded width m W
    assert foot[("P1", "C")][1] == pytest.approx(math.sqrt(3.0) * 3.0, abs=1e-9)
