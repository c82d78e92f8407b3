"""Design closed forms against published relations (sources beside each check)."""

from __future__ import annotations

import math

import pytest

from prismfab.design.anamorphic_pair import normal_exit_incidence
from prismfab.design.brewster import brewster_apex_rad
from prismfab.design.common import PrismAngles, propagate_angles
from prismfab.design.dispersing import ddelta_dn_min_dev


def test_brewster_apex():
    """Brewster prism at minimum deviation: apex 2 atan(1/n); n = 1.5 gives 67.38 deg."""
    # computed from Brewster's law tan(theta_B) = n (Smith, Modern Optical Engineering, 4th ed.,
    # Eq. 10.18) and the symmetric minimum-deviation path: alpha = 2 arctan(1/n) = 67.38 deg
    assert math.degrees(brewster_apex_rad(1.5)) == pytest.approx(67.38, abs=0.005)


def test_minimum_deviation_symmetric_path():
    """n = 1.5, A = 60 deg at minimum deviation: D = 37.1807558 deg, phi1 = 48.5903779 deg."""
    # computed from the minimum-deviation relation n = sin((A+D)/2)/sin(A/2) (Hecht, Optics,
    # 4th ed., §5.5.1, from memory)
    phi1 = math.asin(1.5 * math.sin(math.radians(30.0)))
    th, mag, _ = propagate_angles(0.0, [PrismAngles(-phi1, math.radians(60.0), 1)], [1.5])
    assert math.degrees(-th) == pytest.approx(37.1807558, abs=1e-7)
    assert math.degrees(phi1) == pytest.approx(48.5903779, abs=1e-7)
    assert mag == pytest.approx(1.0, abs=1e-12)  # M = 1 at min. deviation (symmetric path)


def test_brewster_entry_normal_exit_gives_m_equal_n():
    """Brewster entry and normal exit: A = atan(1/n), M = n, delta = atan(5/12) for n = 1.5."""
    # M = n at Brewster entry, normal exit: Sze and Harris in Duarte (ed.), Tunable Lasers
    # Handbook (1995), ch. 3, p. 44; A = atan(1/n), tan(delta) = (n^2-1)/(2n) computed from it
    phi1, apex = normal_exit_incidence(1.5, 1.5)
    assert math.degrees(phi1) == pytest.approx(56.3099325, abs=1e-7)  # Brewster, atan 1.5
    assert math.degrees(apex) == pytest.approx(33.6900675, abs=1e-7)
    th, mag, _ = propagate_angles(0.0, [PrismAngles(-phi1, apex, 1)], [1.5])
    assert mag == pytest.approx(1.5, abs=1e-12)
    assert -th == pytest.approx(math.atan(5.0 / 12.0), abs=1e-12)


@pytest.mark.parametrize("m", [1.2, math.sqrt(3.0), 2.5])
def test_normal_exit_closed_form(m):
    """The normal-exit closed form reproduced by an independent angle trace (own numbers)."""
    # sin phi1 = sqrt((m^2-1)/(m^2-1/n^2)), A = asin(sin phi1/n): derived from Snell's law and
    # k1 = cos psi1 / cos phi1 (Duarte (ed.), Tunable Lasers Handbook, ch. 2, Eq. 11)
    n = 1.5
    phi1, apex = normal_exit_incidence(m, n)
    _th, mag, ev = propagate_angles(0.0, [PrismAngles(-phi1, apex, 1)], [n])
    assert mag == pytest.approx(m, rel=1e-12)
    assert ev[1].incidence_rad == pytest.approx(0.0, abs=1e-12)  # normal exit


def test_min_dev_dispersion_fused_silica():
    """Fused silica, A = 60 deg, 632.8 nm: d delta/dn = 1.459776 at minimum deviation."""
    # computed from Smith, Modern Optical Engineering, 4th ed., Eq. 7.7 at minimum deviation,
    # n = 1.457017 (Malitson, J. Opt. Soc. Am. 55, 1205 (1965) formula at 632.8 nm)
    assert ddelta_dn_min_dev(math.radians(60.0), 1.457017) == pytest.approx(1.459776, abs=2e-6)
