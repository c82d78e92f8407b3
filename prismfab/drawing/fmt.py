"""Text of lengths and angles as the drawing prints them.

Angles are written from the design value in degrees, minutes and seconds, rounded (never
truncated) to the resolution the tolerance calls for: seconds when the tolerance is under 10′,
minutes otherwise; trailing zero fields are dropped (``36°08′``), minutes and seconds carry two
digits. Tolerances follow the trade: seconds under 1′, else minutes and seconds (``±1′30″``). Lengths carry as many decimals as their tolerance. One decimal sign for the whole sheet.
"""

from __future__ import annotations

import math

__all__ = ["angle_text", "angle_tolerance_text", "dms", "length_text", "number_text", "tol_decimals"]

DEG, MIN, SEC = "°", "′", "″"


def _round_half_up(x: float) -> int:
    return int(math.floor(x + 0.5))


def dms(value_deg: float, *, resolution_arcsec: int = 1) -> str:
    """Degrees-minutes-seconds text of an angle, rounded to ``resolution_arcsec`` (1 or 60).

    Args:
        value_deg: the angle, degrees (may be negative).
        resolution_arcsec: 1 for seconds, 60 for minutes, 3600 for whole degrees.
    """
    sign = "-" if value_deg < 0 else ""
    total = _round_half_up(abs(value_deg) * 3600.0 / resolution_arcsec) * resolution_arcsec
    d, rem = divmod(total, 3600)
    m, s = divmod(rem, 60)
    text = f"{sign}{d}{DEG}"
    if s:
        return f"{text}{m:02d}{MIN}{s:02d}{SEC}"
    if m:
        return f"{text}{m:02d}{MIN}"
    return text


def angle_tolerance_text(tol_arcsec: float) -> str:
    """An angle tolerance the way the optics trade writes it.

    Under one minute in seconds (``±30″``; one decimal below 10″ when not whole, ``±2.5″``); from
    one minute on in degrees, minutes and seconds with the zero fields dropped (``±1′``, ``±5′``,
    ``±1′30″``, ``±1°``, ``±1°30′``), never a seconds count above 59 (``±300″`` reads ``±5′``).
    """
    t = abs(tol_arcsec)
    if t < 59.95:
        if t < 10.0 and abs(t - round(t)) > 1e-6:
            return f"±{t:.1f}{SEC}"
        return f"±{_round_half_up(t)}{SEC}"
    total = _round_half_up(t)
    d, rem = divmod(total, 3600)
    m, s = divmod(rem, 60)
    text = f"{d}{DEG}" if d else ""
    if m or (d and s):
        text += f"{m}{MIN}"
    if s:
        text += f"{s}{SEC}"
    return f"±{text}"


def angle_text(value_deg: float, tol_arcsec: float | None = None) -> str:
    """An angle dimension's text, e.g. ``33°29′47″ ±60″``; without tolerance to the second."""
    if tol_arcsec is None:
        return dms(value_deg)
    resolution = 1 if tol_arcsec < 600 else 60
    return f"{dms(value_deg, resolution_arcsec=resolution)} {angle_tolerance_text(tol_arcsec)}"


def tol_decimals(tol_mm: float) -> int:
    """Decimals a length with this tolerance is written with (at least 1, at most 3)."""
    for n in (1, 2, 3):
        if abs(round(tol_mm, n) - tol_mm) < 1e-9:
            return n
    return 3


def number_text(value: float, decimals: int, *, decimal_comma: bool = False) -> str:
    """A number with a fixed count of decimals and the sheet's decimal sign."""
    text = f"{value:.{decimals}f}"
    if text.startswith("-") and float(text) == 0.0:
        text = text[1:]
    return text.replace(".", ",") if decimal_comma else text


def length_text(value_mm: float, tol_mm: float | None = None, *, decimals: int | None = None,
                decimal_comma: bool = False) -> str:
    """A length dimension's text, e.g. ``12.0 ±0.1``, or without tolerance ``7.94``."""
    if tol_mm is None:
        return number_text(value_mm, 2 if decimals is None else decimals, decimal_comma=decimal_comma)
    n = tol_decimals(tol_mm) if decimals is None else decimals
    return (f"{number_text(value_mm, n, decimal_comma=decimal_comma)} "
            f"±{number_text(tol_mm, n, decimal_comma=decimal_comma)}")
