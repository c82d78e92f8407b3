"""Dispersion formulas: refractive index, dn/dλ and group index from published coefficients.

Every formula the catalogue accepts is reduced, once, to one canonical form (λ in µm)::

    n²(λ) = K + Σ_k A_k λ^p_k + Σ_i B_i λ² / (λ² − C_i) + Σ_j D_j / (λ² − E_j)

with ``C_i`` and ``E_j`` in µm². The four data-file forms map onto it:

``sellmeier-c``          n² − 1 = Σ B_i λ²/(λ² − C_i), C_i in µm²
``sellmeier-resonance``  the same with resonance wavelengths λ_i in µm printed instead of C_i;
                         they are squared here, C_i = λ_i² (leaving them unsquared is the classic bug)
``sellmeier-constant``   n² − 1 = A0 + Σ B_i λ²/(λ² − C_i), C_i in µm²
``polynomial``           n² = A0 + A1 λ² + A2 λ⁻² + A3 λ⁻⁴ + A4 λ⁻⁶ + ... (A_k, k ≥ 2, multiplies
                         λ^(−2(k−1))), plus optional pole terms Σ D_j/(λ² − λ_j²), λ_j in µm

Evaluation takes a float (fast pure-Python path, returns a float) or an array (numpy, returns an
array of the same shape). Nothing here checks the valid range; ``Material.check_range`` does.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Callable

import numpy as np
import numpy.typing as npt

__all__ = [
    "FORMULAS",
    "Dispersion",
    "FormulaSpec",
    "abbe_number",
    "glass_code",
    "polynomial",
    "sellmeier_c",
    "sellmeier_constant",
    "sellmeier_resonance",
]

WavelengthLike = float | Sequence[float] | npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True)
class Dispersion:
    """Canonical dispersion law; see the module docstring for the form.

    Args:
        constant: K (dimensionless).
        powers: exponents p_k of the power terms.
        power_coefficients: A_k, in µm^(−p_k).
        b: Sellmeier strengths B_i (dimensionless).
        c_um2: Sellmeier poles C_i, in µm².
        d_um2: pole-term strengths D_j, in µm².
        e_um2: pole-term poles E_j, in µm².
    """

    constant: float
    powers: tuple[int, ...] = ()
    power_coefficients: tuple[float, ...] = ()
    b: tuple[float, ...] = ()
    c_um2: tuple[float, ...] = ()
    d_um2: tuple[float, ...] = ()
    e_um2: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        if len(self.powers) != len(self.power_coefficients):
            raise ValueError("powers and power_coefficients differ in length")
        if len(self.b) != len(self.c_um2) or len(self.d_um2) != len(self.e_um2):
            raise ValueError("pole strengths and pole positions differ in length")

    @property
    def poles_um2(self) -> tuple[float, ...]:
        """Every λ² (µm²) where the formula has a pole."""
        return self.c_um2 + self.e_um2

    def n_squared(self, wavelength_um: WavelengthLike) -> float | npt.NDArray[np.float64]:
        """n² at a wavelength in µm (float in, float out; array in, array out)."""
        if isinstance(wavelength_um, (float, int)):
            return self._n2_scalar(float(wavelength_um))
        lam = np.asarray(wavelength_um, dtype=float)
        lam2 = lam * lam
        out = np.full_like(lam, self.constant)
        for p, a in zip(self.powers, self.power_coefficients):
            out += a * lam**p
        for b, c in zip(self.b, self.c_um2):
            out += b * lam2 / (lam2 - c)
        for d, e in zip(self.d_um2, self.e_um2):
            out += d / (lam2 - e)
        return out

    def _n2_scalar(self, lam: float) -> float:
        lam2 = lam * lam
        out = self.constant
        for p, a in zip(self.powers, self.power_coefficients):
            out += a * lam**p
        for b, c in zip(self.b, self.c_um2):
            out += b * lam2 / (lam2 - c)
        for d, e in zip(self.d_um2, self.e_um2):
            out += d / (lam2 - e)
        return out

    def n(self, wavelength_um: WavelengthLike) -> float | npt.NDArray[np.float64]:
        """Refractive index at a wavelength in µm."""
        n2 = self.n_squared(wavelength_um)
        if isinstance(n2, float):
            return math.sqrt(n2)
        return np.sqrt(n2)

    def dn2_dlambda(self, wavelength_um: WavelengthLike) -> float | npt.NDArray[np.float64]:
        """d(n²)/dλ in µm⁻¹, analytic."""
        scalar = isinstance(wavelength_um, (float, int))
        lam: float | npt.NDArray[np.float64] = (
            float(wavelength_um) if scalar else np.asarray(wavelength_um, dtype=float)  # type: ignore[arg-type]
        )
        lam2 = lam * lam
        out = 0.0 * lam
        for p, a in zip(self.powers, self.power_coefficients):
            out = out + p * a * lam ** (p - 1)
        for b, c in zip(self.b, self.c_um2):
            out = out - 2.0 * b * c * lam / (lam2 - c) ** 2
        for d, e in zip(self.d_um2, self.e_um2):
            out = out - 2.0 * d * lam / (lam2 - e) ** 2
        return out

    def dn_dlambda(self, wavelength_um: WavelengthLike) -> float | npt.NDArray[np.float64]:
        """dn/dλ in µm⁻¹, analytic: d(n²)/dλ / (2n)."""
        return self.dn2_dlambda(wavelength_um) / (2.0 * self.n(wavelength_um))  # type: ignore[operator]


def sellmeier_c(b: Sequence[float], c_um2: Sequence[float]) -> Dispersion:
    """n² − 1 = Σ B_i λ²/(λ² − C_i), C_i in µm²."""
    return Dispersion(1.0, b=tuple(map(float, b)), c_um2=tuple(map(float, c_um2)))


def sellmeier_resonance(b: Sequence[float], resonance_um: Sequence[float]) -> Dispersion:
    """n² − 1 = Σ B_i λ²/(λ² − λ_i²), resonance wavelengths λ_i in µm (squared here)."""
    return sellmeier_c(b, [float(lam) ** 2 for lam in resonance_um])


def sellmeier_constant(a0: float, b: Sequence[float], c_um2: Sequence[float]) -> Dispersion:
    """n² − 1 = A0 + Σ B_i λ²/(λ² − C_i), C_i in µm²."""
    return Dispersion(1.0 + float(a0), b=tuple(map(float, b)), c_um2=tuple(map(float, c_um2)))


def polynomial(
    a: Sequence[float],
    pole_d_um2: Sequence[float] = (),
    pole_resonance_um: Sequence[float] = (),
) -> Dispersion:
    """n² = A0 + A1 λ² + A2 λ⁻² + A3 λ⁻⁴ + ... + Σ D_j/(λ² − λ_j²), λ and λ_j in µm."""
    if not a:
        raise ValueError("a polynomial needs at least A0")
    powers = tuple(2 if k == 1 else -2 * (k - 1) for k in range(1, len(a)))
    return Dispersion(
        float(a[0]),
        powers=powers,
        power_coefficients=tuple(map(float, a[1:])),
        d_um2=tuple(map(float, pole_d_um2)),
        e_um2=tuple(float(lam) ** 2 for lam in pole_resonance_um),
    )


@dataclass(frozen=True, slots=True)
class FormulaSpec:
    """How a data-file formula name reads its coefficients.

    Args:
        name: the ``formula:`` value in a data file.
        text: the formula in words, for help and errors.
        lists: coefficient names holding lists (all must be given, same length unless noted).
        scalars: coefficient names holding one number.
        optional: coefficient names that may be left out (lists).
        build: turns the coefficient mapping into a Dispersion.
    """

    name: str
    text: str
    lists: tuple[str, ...]
    scalars: tuple[str, ...]
    optional: tuple[str, ...]
    build: Callable[[Mapping[str, object]], Dispersion]

    @property
    def names(self) -> tuple[str, ...]:
        """Every coefficient name the formula accepts."""
        return self.scalars + self.lists + self.optional


def _get(co: Mapping[str, object], name: str) -> object:
    return co.get(name, ())


FORMULAS: dict[str, FormulaSpec] = {
    spec.name: spec
    for spec in (
        FormulaSpec(
            "sellmeier-c",
            "n² − 1 = Σ B λ²/(λ² − C), λ in µm, C in µm²",
            ("B", "C_um2"), (), (),
            lambda co: sellmeier_c(co["B"], co["C_um2"]),  # type: ignore[arg-type]
        ),
        FormulaSpec(
            "sellmeier-resonance",
            "n² − 1 = Σ B λ²/(λ² − λr²), λ and resonance wavelengths λr in µm",
            ("B", "resonance_um"), (), (),
            lambda co: sellmeier_resonance(co["B"], co["resonance_um"]),  # type: ignore[arg-type]
        ),
        FormulaSpec(
            "sellmeier-constant",
            "n² − 1 = A0 + Σ B λ²/(λ² − C), λ in µm, C in µm²",
            ("B", "C_um2"), ("A0",), (),
            lambda co: sellmeier_constant(co["A0"], co["B"], co["C_um2"]),  # type: ignore[arg-type]
        ),
        FormulaSpec(
            "polynomial",
            "n² = A0 + A1 λ² + A2 λ⁻² + A3 λ⁻⁴ + ... + Σ D/(λ² − λr²), λ and λr in µm, D in µm²",
            ("A",), (), ("pole_D_um2", "pole_resonance_um"),
            lambda co: polynomial(
                co["A"], _get(co, "pole_D_um2"), _get(co, "pole_resonance_um")  # type: ignore[arg-type]
            ),
        ),
    )
}
"""Formula name (as written in data files) -> how to read and build it."""


def abbe_number(n_mid: float, n_short: float, n_long: float) -> float:
    """Abbe number (n_mid − 1)/(n_short − n_long), e.g. vd from nd, nF, nC."""
    return (n_mid - 1.0) / (n_short - n_long)


def glass_code(nd: float, vd: float) -> str:
    """Six-digit glass code: round((nd − 1)·1000) then round(vd·10), halves rounded up.

    Args:
        nd: index at the d line (587.5618 nm).
        vd: Abbe number at the d line.

    Raises:
        ValueError: nd or vd does not fit three digits (nd ≥ 1.9995 or vd ≥ 99.95, or below 1 / 0).
    """
    index_part = math.floor((nd - 1.0) * 1000.0 + 0.5)
    abbe_part = math.floor(vd * 10.0 + 0.5)
    if not (0 <= index_part <= 999 and 0 <= abbe_part <= 999):
        raise ValueError(f"nd = {nd:.6f}, vd = {vd:.2f} do not fit three digits each")
    return f"{index_part:03d}{abbe_part:03d}"
