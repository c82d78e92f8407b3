"""Closed-form relations of plane-surface optics, for the design solvers and the tests.

Everything here is pure numpy: angles in radians, wavelengths in micrometres, indices as plain
numbers (scalars or arrays; results broadcast). Prism notation (Duarte): ``phi1`` external
incidence on the entry face, ``psi1`` internal refraction angle there, ``psi2`` internal incidence
on the exit face, ``phi2`` external exit angle, ``A`` apex angle, ``psi1 + psi2 = A``,
deviation ``phi1 + phi2 - A``, beam-width ratios ``k1 = cos psi1 / cos phi1`` and
``k2 = cos phi2 / cos psi2``, magnification ``M = k1 k2``. Where no refracted ray exists (total
internal reflection) the scalar functions return NaN; the tracer reports TIR as an event instead.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import erf, erfinv

__all__ = [
    "PrismPath",
    "brewster_angle",
    "circular_aperture_radius",
    "circular_aperture_transmission",
    "critical_angle",
    "fresnel_amplitudes",
    "fresnel_powers",
    "fresnel_unpolarized",
    "index_from_minimum_deviation",
    "minimum_deviation",
    "minimum_deviation_incidence",
    "multiple_prism_dispersion",
    "normal_exit_prism",
    "prism_deviation",
    "prism_ddelta_dn",
    "prism_exit_angle",
    "prism_path",
    "reflect",
    "refract",
    "slit_half_width",
    "slit_transmission",
    "snell",
    "thin_prism_deviation",
    "thin_prism_deviation_tilted",
    "tir_phase",
]

Float = NDArray[np.float64] | float


# --------------------------------------------------------------------------- interfaces


def snell(theta_i: ArrayLike, n1: ArrayLike, n2: ArrayLike) -> Float:
    """Refraction angle (rad) from ``n1 sin theta_i = n2 sin theta_t``; NaN beyond the critical angle."""
    s = np.asarray(n1, float) * np.sin(theta_i) / np.asarray(n2, float)
    with np.errstate(invalid="ignore"):
        return np.where(np.abs(s) <= 1.0, np.arcsin(np.clip(s, -1.0, 1.0)), np.nan)[()]


def critical_angle(n1: ArrayLike, n2: ArrayLike = 1.0) -> Float:
    """Critical angle (rad) going from index ``n1`` into ``n2 < n1``: ``asin(n2 / n1)``; NaN if none."""
    r = np.asarray(n2, float) / np.asarray(n1, float)
    with np.errstate(invalid="ignore"):
        return np.where(r < 1.0, np.arcsin(np.minimum(r, 1.0)), np.nan)[()]


def brewster_angle(n1: ArrayLike, n2: ArrayLike) -> Float:
    """Brewster angle (rad) from ``n1`` into ``n2``: ``atan(n2 / n1)`` (R_p = 0 there)."""
    return np.arctan2(np.asarray(n2, float), np.asarray(n1, float))[()]


def refract(
    d: ArrayLike, normal: ArrayLike, n1: ArrayLike, n2: ArrayLike
) -> tuple[NDArray[np.float64], NDArray[np.bool_]]:
    """Vector Snell law.

    Args:
        d: unit incident directions, shape (..., 3).
        normal: unit surface normals, shape (..., 3); either orientation (flipped to face the ray).
        n1, n2: indices before and after the surface.

    Returns:
        (t, tir): unit refracted directions (the reflected direction where ``tir`` is True, so
        the result is never NaN) and the total-internal-reflection mask.
    """
    d = np.asarray(d, float)
    nv = np.asarray(normal, float)
    dn = np.sum(d * nv, axis=-1, keepdims=True)
    nv = np.where(dn > 0.0, -nv, nv)  # normal against the ray
    c = np.abs(dn)
    eta = np.asarray(n1, float) / np.asarray(n2, float)
    if eta.ndim:
        eta = eta[..., None]
    k = 1.0 - eta * eta * (1.0 - c * c)
    tir = k < 0.0
    t = eta * d + (eta * c - np.sqrt(np.maximum(k, 0.0))) * nv
    t = np.where(tir, d + 2.0 * c * nv, t)
    return t, tir[..., 0]


def reflect(d: ArrayLike, normal: ArrayLike) -> NDArray[np.float64]:
    """Mirror reflection ``r = d - 2 (d.N) N`` of unit directions (..., 3)."""
    d = np.asarray(d, float)
    nv = np.asarray(normal, float)
    return d - 2.0 * np.sum(d * nv, axis=-1, keepdims=True) * nv


def _cos_t(theta_i: ArrayLike, n1: ArrayLike, n2: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.complex128]]:
    """cos theta_i (real) and cos theta_t (complex: +i q beyond the critical angle)."""
    ci = np.cos(np.asarray(theta_i, float))
    s2 = (np.asarray(n1, float) / np.asarray(n2, float)) ** 2 * (1.0 - ci * ci)
    ct = np.sqrt((1.0 - s2).astype(complex))  # principal root: +i q for TIR (evanescent decay)
    return ci, ct


def fresnel_amplitudes(
    theta_i: ArrayLike, n1: ArrayLike, n2: ArrayLike
) -> tuple[NDArray[np.complex128], NDArray[np.complex128], NDArray[np.complex128], NDArray[np.complex128]]:
    """Fresnel amplitude coefficients (r_s, r_p, t_s, t_p), complex beyond the critical angle.

    ``r_p`` uses the convention ``(n2 cos i - n1 cos t)/(n2 cos i + n1 cos t)``, so at normal
    incidence ``r_p = -r_s``. Reflectances do not depend on the convention.
    """
    n1 = np.asarray(n1, float)
    n2 = np.asarray(n2, float)
    ci, ct = _cos_t(theta_i, n1, n2)
    a, b = n1 * ci, n2 * ct
    c, e = n2 * ci, n1 * ct
    return (a - b) / (a + b), (c - e) / (c + e), 2.0 * a / (a + b), 2.0 * a / (c + e)


def fresnel_powers(
    theta_i: ArrayLike, n1: ArrayLike, n2: ArrayLike
) -> tuple[Float, Float, Float, Float]:
    """Power reflectances and transmittances (R_s, R_p, T_s, T_p) with ``T = (n2 cos t / n1 cos i)|t|^2``.

    Beyond the critical angle R = 1 and T = 0.
    """
    n1a = np.asarray(n1, float)
    n2a = np.asarray(n2, float)
    rs, rp, ts, tp = fresnel_amplitudes(theta_i, n1a, n2a)
    ci, ct = _cos_t(theta_i, n1a, n2a)
    with np.errstate(invalid="ignore", divide="ignore"):
        f = np.where(ct.imag == 0.0, n2a * ct.real / (n1a * ci), 0.0)
    return (
        (np.abs(rs) ** 2)[()], (np.abs(rp) ** 2)[()],
        (f * np.abs(ts) ** 2)[()], (f * np.abs(tp) ** 2)[()],
    )


def fresnel_unpolarized(theta_i: ArrayLike, n1: ArrayLike, n2: ArrayLike) -> tuple[Float, Float]:
    """(R, T) for unpolarised light: the means of the s and p values."""
    rs, rp, ts, tp = fresnel_powers(theta_i, n1, n2)
    return 0.5 * (rs + rp), 0.5 * (ts + tp)


def tir_phase(theta_i: ArrayLike, n1: ArrayLike, n2: ArrayLike) -> tuple[Float, Float, Float]:
    """Phase advances (delta_s, delta_p, delta_p - delta_s), rad, on total internal reflection.

    ``tan(delta_s/2) = sqrt(sin^2 i - n^2)/cos i`` and ``tan(delta_p/2) = sqrt(sin^2 i - n^2)/(n^2 cos i)``
    with ``n = n2/n1``; zero below the critical angle.
    """
    n = np.asarray(n2, float) / np.asarray(n1, float)
    si = np.sin(np.asarray(theta_i, float))
    ci = np.cos(np.asarray(theta_i, float))
    q = np.sqrt(np.maximum(si * si - n * n, 0.0))
    ds = 2.0 * np.arctan2(q, ci)
    dp = 2.0 * np.arctan2(q, n * n * ci)
    return ds[()], dp[()], (dp - ds)[()]


# --------------------------------------------------------------------------- single prism


class PrismPath(NamedTuple):
    """The in-section path through one prism (rad; ``k1``, ``k2``, ``magnification`` unitless)."""

    phi1: Float
    psi1: Float
    psi2: Float
    phi2: Float
    deviation: Float
    k1: Float
    k2: Float
    magnification: Float


def prism_path(phi1: ArrayLike, *, apex_rad: ArrayLike, n: ArrayLike) -> PrismPath:
    """Angles, deviation and beam-width ratios of a prism in air (NaN where the ray cannot exit)."""
    phi1 = np.asarray(phi1, float)
    n = np.asarray(n, float)
    psi1 = np.arcsin(np.sin(phi1) / n)
    psi2 = np.asarray(apex_rad, float) - psi1
    phi2 = snell(psi2, n, 1.0)
    k1 = np.cos(psi1) / np.cos(phi1)
    k2 = np.cos(phi2) / np.cos(psi2)
    dev = phi1 + phi2 - apex_rad
    return PrismPath(phi1[()], psi1[()], psi2[()], np.asarray(phi2)[()], np.asarray(dev)[()],
                     k1[()], np.asarray(k2)[()], np.asarray(k1 * k2)[()])


def prism_exit_angle(phi1: ArrayLike, *, apex_rad: ArrayLike, n: ArrayLike) -> Float:
    """Exit angle ``phi2 = asin(sin A sqrt(n^2 - sin^2 phi1) - cos A sin phi1)`` (rad)."""
    phi1 = np.asarray(phi1, float)
    a = np.asarray(apex_rad, float)
    s = np.sin(a) * np.sqrt(np.asarray(n, float) ** 2 - np.sin(phi1) ** 2) - np.cos(a) * np.sin(phi1)
    with np.errstate(invalid="ignore"):
        return np.where(np.abs(s) <= 1.0, np.arcsin(np.clip(s, -1.0, 1.0)), np.nan)[()]


def prism_deviation(phi1: ArrayLike, *, apex_rad: ArrayLike, n: ArrayLike) -> Float:
    """Deviation ``phi1 + phi2 - A`` (rad)."""
    return (np.asarray(phi1, float) + prism_exit_angle(phi1, apex_rad=apex_rad, n=n)
            - np.asarray(apex_rad, float))[()]


def prism_ddelta_dn(phi1: ArrayLike, *, apex_rad: ArrayLike, n: ArrayLike) -> Float:
    """d(deviation)/dn at fixed incidence: ``(cos psi2 tan psi1 + sin psi2)/cos phi2`` (rad per unit n)."""
    p = prism_path(phi1, apex_rad=apex_rad, n=n)
    return ((np.cos(p.psi2) * np.tan(p.psi1) + np.sin(p.psi2)) / np.cos(p.phi2))[()]


def minimum_deviation(*, apex_rad: ArrayLike, n: ArrayLike) -> Float:
    """Minimum deviation ``2 asin(n sin(A/2)) - A`` (rad)."""
    a = np.asarray(apex_rad, float)
    return (2.0 * np.arcsin(np.asarray(n, float) * np.sin(a / 2.0)) - a)[()]


def minimum_deviation_incidence(*, apex_rad: ArrayLike, n: ArrayLike) -> Float:
    """Incidence (rad) of the symmetric minimum-deviation path: ``asin(n sin(A/2))``."""
    return np.arcsin(np.asarray(n, float) * np.sin(np.asarray(apex_rad, float) / 2.0))[()]


def index_from_minimum_deviation(*, apex_rad: ArrayLike, deviation_rad: ArrayLike) -> Float:
    """Index from a measured minimum deviation: ``n = sin((A + D)/2) / sin(A/2)``."""
    a = np.asarray(apex_rad, float)
    return (np.sin((a + np.asarray(deviation_rad, float)) / 2.0) / np.sin(a / 2.0))[()]


def normal_exit_prism(*, magnification: ArrayLike, n: ArrayLike) -> tuple[Float, Float, Float]:
    """Normal-exit prism giving width ratio ``m``: (phi1, apex, deviation), rad.

    ``sin phi1 = sqrt((m^2 - 1)/(m^2 - 1/n^2))``, ``A = asin(sin phi1 / n)``, ``delta = phi1 - A``.
    With ``m = n`` this is the Brewster-entry prism.
    """
    m = np.asarray(magnification, float)
    n = np.asarray(n, float)
    s = np.sqrt((m * m - 1.0) / (m * m - 1.0 / (n * n)))
    phi1 = np.arcsin(s)
    apex = np.arcsin(s / n)
    return phi1[()], apex[()], (phi1 - apex)[()]


def thin_prism_deviation(*, apex_rad: ArrayLike, n: ArrayLike) -> Float:
    """Thin prism at near-normal incidence: ``delta = (n - 1) A`` (rad)."""
    return ((np.asarray(n, float) - 1.0) * np.asarray(apex_rad, float))[()]


def thin_prism_deviation_tilted(*, apex_rad: ArrayLike, n: ArrayLike, incidence_rad: ArrayLike) -> Float:
    """Thin prism at incidence I: ``delta = A (n - 1)(1 + I^2 (n + 1)/(2 n))`` (rad, third order)."""
    n = np.asarray(n, float)
    i = np.asarray(incidence_rad, float)
    return (np.asarray(apex_rad, float) * (n - 1.0) * (1.0 + i * i * (n + 1.0) / (2.0 * n)))[()]


# --------------------------------------------------------------------------- prism sequences


def multiple_prism_dispersion(
    phi1: ArrayLike, *, apex_rad: ArrayLike, n: ArrayLike, dn_dlambda: ArrayLike,
    same_sense: ArrayLike,
) -> Float:
    """Angular dispersion d(phi2,r)/d(lambda) of a prism sequence (rad per unit of ``dn_dlambda``).

    Recursion ``grad phi2,m = H2,m grad n_m + (H1,m grad n_m +/- grad phi2,m-1)/(k1,m k2,m)``
    with ``H = tan(phi)/n``; "+" when prism m is mounted in the same sense as prism m-1,
    "-" when opposite (compensating).

    Args:
        phi1: entry incidence of each prism, its own frame (rad), shape (r,).
        apex_rad: apex angle of each prism, shape (r,).
        n: index of each prism, shape (r,).
        dn_dlambda: dn/d(lambda) of each prism (per um gives rad/um), shape (r,).
        same_sense: for each prism, True if mounted like the previous one (first entry ignored).

    Returns:
        d(phi2)/d(lambda) of the last prism, measured from its exit normal.
    """
    phi1 = np.atleast_1d(np.asarray(phi1, float))
    apex = np.broadcast_to(np.asarray(apex_rad, float), phi1.shape)
    nn = np.broadcast_to(np.asarray(n, float), phi1.shape)
    dn = np.broadcast_to(np.asarray(dn_dlambda, float), phi1.shape)
    same = np.broadcast_to(np.asarray(same_sense, bool), phi1.shape)
    grad = 0.0
    for m in range(phi1.shape[0]):
        p = prism_path(phi1[m], apex_rad=apex[m], n=nn[m])
        h1 = np.tan(p.phi1) / nn[m]
        h2 = np.tan(p.phi2) / nn[m]
        sign = 1.0 if same[m] else -1.0
        grad = h2 * dn[m] + (h1 * dn[m] + sign * grad) / p.magnification
    return float(grad)


# --------------------------------------------------------------------------- Gaussian clipping


def circular_aperture_transmission(*, radius_mm: ArrayLike, w_mm: ArrayLike) -> Float:
    """Power through a centred circular aperture of radius ``a``: ``1 - exp(-2 a^2 / w^2)``.

    ``w`` is the 1/e^2 intensity radius.
    """
    a = np.asarray(radius_mm, float) / np.asarray(w_mm, float)
    return (-np.expm1(-2.0 * a * a))[()]


def slit_transmission(*, half_width_mm: ArrayLike, w_mm: ArrayLike) -> Float:
    """Power through a centred slit of full width ``2a`` (one axis clipped): ``erf(sqrt(2) a / w)``."""
    return erf(np.sqrt(2.0) * np.asarray(half_width_mm, float) / np.asarray(w_mm, float))[()]


def circular_aperture_radius(*, fraction: ArrayLike, w_mm: ArrayLike) -> Float:
    """Aperture radius (mm) passing ``fraction`` of a centred Gaussian of 1/e^2 radius ``w``."""
    return (np.asarray(w_mm, float) * np.sqrt(-0.5 * np.log1p(-np.asarray(fraction, float))))[()]


def slit_half_width(*, fraction: ArrayLike, w_mm: ArrayLike) -> Float:
    """Slit half-width (mm) passing ``fraction`` of a Gaussian of 1/e^2 radius ``w`` in that axis."""
    return (np.asarray(w_mm, float) * erfinv(np.asarray(fraction, float)) / np.sqrt(2.0))[()]
