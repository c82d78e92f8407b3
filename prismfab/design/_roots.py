"""Small numerical solvers for the design families: a bracketed scalar root and damped Newton.

Both keep scipy's optimizer (a slow import) off the solve path and work on the few unknowns a
prism family has (angles in rad, lengths in mm).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np

__all__ = ["bracketed_root", "newton"]


def bracketed_root(f: Callable[[float], float], lo: float, hi: float, *, xtol: float = 1e-12,
                   rtol: float = 4e-16, maxiter: int = 200) -> float:
    """A root of ``f`` in ``[lo, hi]``, where ``f(lo)`` and ``f(hi)`` differ in sign.

    Regula falsi with the Illinois modification, falling back to bisection whenever an
    interpolated step would not shrink the bracket by half; stops when the bracket is narrower
    than ``xtol + rtol * |x|``. Keeps scipy's optimizer (a slow import) off the solve path.

    Raises:
        ValueError: ``f`` does not change sign over the bracket.
    """
    a, b = float(lo), float(hi)
    fa, fb = f(a), f(b)
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0) == (fb > 0):
        raise ValueError(f"no sign change between {a!r} and {b!r}")
    side = 0
    for _ in range(maxiter):
        width = abs(b - a)
        x = (a * fb - b * fa) / (fb - fa)
        if not (min(a, b) < x < max(a, b)):
            x = 0.5 * (a + b)
        fx = f(x)
        if fx == 0.0:
            return x
        if (fx > 0) == (fb > 0):
            b, fb = x, fx
            if side == -1:
                fa *= 0.5
            side = -1
        else:
            a, fa = x, fx
            if side == 1:
                fb *= 0.5
            side = 1
        if abs(b - a) > 0.5 * width:  # slow progress: bisect once
            m = 0.5 * (a + b)
            fm = f(m)
            if fm == 0.0:
                return m
            if (fm > 0) == (fb > 0):
                b, fb = m, fm
            else:
                a, fa = m, fm
            side = 0
        if abs(b - a) <= xtol + rtol * max(abs(a), abs(b)):
            break
    return 0.5 * (a + b)


def newton(residual: Callable[[np.ndarray], np.ndarray], x0: Sequence[float], *,
           tol: float = 1e-13, max_iter: int = 60, step_rad: float = 1e-7) -> np.ndarray | None:
    """Damped Newton iteration with a forward-difference Jacobian (square systems).

    Returns the root, or None when it does not converge or the residual cannot be evaluated
    (a ValueError from ``residual``, e.g. total internal reflection on the way).
    """
    x = np.asarray(x0, float)
    try:
        f = residual(x)
    except ValueError:
        return None
    f_max = _max_abs(f)
    for _ in range(max_iter):
        if f_max < tol:
            return x
        jac = np.empty((len(f), len(x)))
        try:
            for k in range(len(x)):
                xk = x.copy()
                xk[k] += step_rad
                jac[:, k] = (residual(xk) - f) / step_rad
            dx = _newton_step(jac, f)
        except (ValueError, np.linalg.LinAlgError):
            return None
        lam = 1.0
        for _ in range(30):
            try:
                fn = residual(x + lam * dx)
                fn_max = _max_abs(fn)
                if fn_max < f_max or lam < 1e-3:
                    break
            except ValueError:
                pass
            lam *= 0.5
        else:
            return None
        x, f, f_max = x + lam * dx, fn, fn_max
    return x if f_max < tol * 1e3 else None


def _max_abs(f: np.ndarray) -> float:
    """Largest absolute component (plain floats: the residuals here have a few components)."""
    return max(abs(v) for v in f.tolist()) if len(f) else 0.0


def _newton_step(jac: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Solve ``jac dx = -f``: closed form for a well-conditioned 2x2, least squares otherwise."""
    if jac.shape == (2, 2):
        (a, b), (c, d) = jac.tolist()
        det = a * d - b * c
        scale = max(abs(a), abs(b), abs(c), abs(d))
        if scale > 0.0 and abs(det) > 1e-10 * scale * scale:
            f0, f1 = f.tolist()
            return np.array([(-f0 * d + f1 * b) / det, (-f1 * a + f0 * c) / det])
    return np.linalg.lstsq(jac, -f, rcond=None)[0]
