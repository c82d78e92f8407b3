"""Monte Carlo yield of random builds, on the linearised sensitivities, with compensation.

Each build draws every fabrication error uniformly within its tolerance (a shop accepts any
part inside the tolerance; uniform is the conservative common-practice choice), the alignment
compensator (a prism rotation about the system y axis) restores the in-plane pointing at the
design wavelength, and the residual pointing (in plane and out of plane, combined), in-plane
magnification change and lateral offset change at every wavelength are checked against the
requirements. The draws are seeded and reused for every candidate tolerance set (common
random numbers), so yields are monotone in each tolerance and class choices are reproducible.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from prismfab.design.sensitivity import Model

__all__ = ["COMP_LEVERAGE_MIN", "COMP_RANGE_RAD", "FAB_KINDS", "Limits", "Linear", "Result",
           "draws", "exact_outputs", "linearise", "monte_carlo"]

FAB_KINDS = ("angle", "pyramidal", "nd", "vd")
COMP_LEVERAGE_MIN = 0.05
"""Least |d pointing / d rotation| (rad/rad) for a prism rotation to count as a compensator."""
COMP_RANGE_RAD = math.radians(1.0)
"""Adjustment range of the compensating rotation, ±1° (common practice for prism mounts)."""


@dataclass(frozen=True, slots=True)
class Limits:
    """Requirement limits in internal units: rad, fraction, mm."""

    pointing_rad: float
    magnification_frac: float
    offset_mm: float


@dataclass(frozen=True, slots=True)
class Linear:
    """Linearised outputs: per output an array (W, P) over the fabrication parameters.

    Args:
        model_index: for each fabrication parameter, its index in ``Model.params``.
        comp_index: index in ``Model.params`` of the compensating rotation, or None.
        comp: per output, (W,) derivative per radian of compensating rotation, or None.
    """

    model_index: tuple[int, ...]
    pin: np.ndarray
    pout: np.ndarray
    mag: np.ndarray
    off: np.ndarray
    comp_index: int | None
    comp: dict[str, np.ndarray] | None


@dataclass(frozen=True, slots=True)
class Result:
    """Yield of one tolerance set, and the fraction of builds failing each requirement."""

    yield_fraction: float
    failing: tuple[tuple[str, float], ...]
    worst_ratio: float = 0.0  # the yield-target quantile of the worst requirement ratio (1 = limit)


def linearise(model: Model, *, compensator_prisms: tuple[int, ...],
              jac: dict[str, np.ndarray] | None = None) -> Linear:
    """Central-difference sensitivities of every fabrication parameter and the compensator.

    Args:
        model: the prepared system.
        compensator_prisms: prisms whose rotation may restore pointing, in order of preference;
            the first with enough leverage (``COMP_LEVERAGE_MIN``) is used.
        jac: ``model.jacobian()`` when already computed.
    """
    jac = model.jacobian() if jac is None else jac
    fab = tuple(i for i, p in enumerate(model.params) if p.kind in FAB_KINDS)
    comp_index, comp = None, None
    for k in compensator_prisms:
        j = next(i for i, p in enumerate(model.params) if p.prism == k and p.kind == "mount_rot")
        if abs(jac["pointing_in"][0, j]) >= COMP_LEVERAGE_MIN:
            comp_index = j
            comp = {"pin": jac["pointing_in"][:, j], "pout": jac["pointing_out"][:, j],
                    "mag": jac["magnification"][:, j], "off": jac["offset"][:, j]}
            break
    idx = list(fab)
    return Linear(fab, jac["pointing_in"][:, idx], jac["pointing_out"][:, idx],
                  jac["magnification"][:, idx], jac["offset"][:, idx], comp_index, comp)


def draws(n_params: int, n_builds: int, seed: int) -> np.ndarray:
    """Uniform draws in [-1, 1], shape (n_builds, n_params), from a seeded generator."""
    return np.random.default_rng(seed).uniform(-1.0, 1.0, size=(n_builds, n_params))


def predict(lin: Linear, errors: np.ndarray) -> dict[str, np.ndarray]:
    """Linear outputs (B, W) of builds with fabrication errors (B, P), after compensation.

    Also returns "comp" (B,), the compensating rotation in rad (clipped to its range).
    """
    out = {"pin": errors @ lin.pin.T, "pout": errors @ lin.pout.T, "mag": errors @ lin.mag.T,
           "off": errors @ lin.off.T}
    comp = np.zeros(len(errors))
    if lin.comp is not None:
        comp = np.clip(-out["pin"][:, 0] / lin.comp["pin"][0], -COMP_RANGE_RAD, COMP_RANGE_RAD)
        for key in out:
            out[key] = out[key] + comp[:, None] * lin.comp[key][None, :]
    out["comp"] = comp
    return out


def monte_carlo(lin: Linear, scale: np.ndarray, limits: Limits, unit_draws: np.ndarray, *,
                quantile: float = 0.95) -> Result:
    """Yield of builds whose errors are ``unit_draws * scale``.

    Args:
        lin: linearised system.
        scale: (P,) tolerance of each fabrication parameter (rad, index, fraction).
        limits: the requirements.
        unit_draws: (N, P) uniform draws in [-1, 1].
        quantile: where to read the distribution of the worst requirement ratio (the yield
            target); a smooth measure the class selection uses to rank tightening steps.
    """
    out = predict(lin, unit_draws * scale[None, :])
    point_rad = np.hypot(out["pin"], out["pout"])
    mag_frac, off_mm = np.abs(out["mag"]), np.abs(out["off"])
    point = _row_all(point_rad <= limits.pointing_rad)
    mag = _row_all(mag_frac <= limits.magnification_frac)
    off = _row_all(off_mm <= limits.offset_mm)
    ok = point & mag & off
    ratio = np.maximum.reduce([
        _row_max(point_rad) / limits.pointing_rad,
        _row_max(mag_frac) / limits.magnification_frac,
        _row_max(off_mm) / limits.offset_mm])
    failing = (("pointing_mrad", float(1.0 - point.mean())),
               ("magnification_pct", float(1.0 - mag.mean())),
               ("offset_mm", float(1.0 - off.mean())))
    return Result(float(ok.mean()), failing, float(np.quantile(ratio, quantile)))


def _row_max(a: np.ndarray) -> np.ndarray:
    """``a.max(axis=1)`` of a (builds, wavelengths) array, column by column (a few columns, many
    rows: much faster than the strided reduction, and exact)."""
    out = a[:, 0]
    for j in range(1, a.shape[1]):
        out = np.maximum(out, a[:, j])
    return out


def _row_all(a: np.ndarray) -> np.ndarray:
    """``a.all(axis=1)`` of a (builds, wavelengths) boolean array, column by column."""
    out = a[:, 0]
    for j in range(1, a.shape[1]):
        out = out & a[:, j]
    return out


def exact_outputs(model: Model, lin: Linear, errors: np.ndarray) -> dict[str, np.ndarray]:
    """Exact re-trace of builds (B, P fabrication errors) with the linear compensation applied.

    Returns the same keys as ``predict`` (changes from nominal; "mag" relative), so a test can
    compare the linear model with the exact trace build by build.
    """
    full = np.zeros((len(errors), len(model.params)))
    full[:, list(lin.model_index)] = errors
    comp = predict(lin, errors)["comp"]
    if lin.comp_index is not None:
        full[:, lin.comp_index] = comp
    built = model.evaluate(full)
    nominal = model.evaluate(np.zeros((1, len(model.params))))
    return {"pin": np.angle(np.exp(1j * (built["pointing_in"] - nominal["pointing_in"]))),
            "pout": built["pointing_out"] - nominal["pointing_out"],
            "mag": built["magnification"] / nominal["magnification"] - 1.0,
            "off": built["offset"] - nominal["offset"], "comp": comp}
