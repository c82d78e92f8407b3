"""ISO 2768-1 general tolerances, for the non-optical (mechanical) features of a part only.

Tables 1 (linear), 2 (external radii and chamfer heights) and 3 (angular, by the shorter leg)
of ISO 2768-1:1989. Ranges are "over X up to and including Y". Optical faces and functional
angles always carry explicit tolerances on the drawing; these classes are far too coarse for them.
"""

from __future__ import annotations

from prismfab.errors import SpecError

__all__ = ["CLASSES", "angular_tolerance_arcmin", "chamfer_tolerance_mm", "linear_tolerance_mm"]

CLASSES = ("f", "m", "c", "v")

# Table 1: upper limits of the nominal ranges (mm) and the +/- tolerance per class (mm).
_LINEAR_UPPER_MM = (3.0, 6.0, 30.0, 120.0, 400.0, 1000.0, 2000.0, 4000.0)
_LINEAR_MM: dict[str, tuple[float | None, ...]] = {
    "f": (0.05, 0.05, 0.1, 0.15, 0.2, 0.3, 0.5, None),
    "m": (0.1, 0.1, 0.2, 0.3, 0.5, 0.8, 1.2, 2.0),
    "c": (0.2, 0.3, 0.5, 0.8, 1.2, 2.0, 3.0, 4.0),
    "v": (None, 0.5, 1.0, 1.5, 2.5, 4.0, 6.0, 8.0),
}
# Table 2: radii and chamfer heights.
_CHAMFER_UPPER_MM = (3.0, 6.0, float("inf"))
_CHAMFER_MM = {"f": (0.2, 0.5, 1.0), "m": (0.2, 0.5, 1.0), "c": (0.4, 1.0, 2.0), "v": (0.4, 1.0, 2.0)}
# Table 3: angular, by the length of the shorter leg (mm); tolerances in arc minutes.
_ANGULAR_UPPER_MM = (10.0, 50.0, 120.0, 400.0, float("inf"))
_ANGULAR_ARCMIN = {
    "f": (60.0, 30.0, 20.0, 10.0, 5.0),
    "m": (60.0, 30.0, 20.0, 10.0, 5.0),
    "c": (90.0, 60.0, 30.0, 15.0, 10.0),
    "v": (180.0, 120.0, 60.0, 30.0, 20.0),
}


def _check_class(tolerance_class: str) -> str:
    cls = tolerance_class.strip().lower()
    if cls not in CLASSES:
        raise SpecError("sheet.general_tolerance", f"has class {tolerance_class!r}",
                        fix="use one of f, m, c, v (ISO 2768-1)")
    return cls


def _index(value_mm: float, uppers: tuple[float, ...]) -> int | None:
    for i, upper in enumerate(uppers):
        if value_mm <= upper + 1e-12:
            return i
    return None


def linear_tolerance_mm(nominal_mm: float, tolerance_class: str = "m") -> float | None:
    """The +/- tolerance of a linear size, or None where Table 1 gives none.

    Below 0.5 mm the standard gives no general tolerance (state one at the dimension).
    """
    cls = _check_class(tolerance_class)
    if nominal_mm < 0.5:
        return None
    i = _index(nominal_mm, _LINEAR_UPPER_MM)
    return None if i is None else _LINEAR_MM[cls][i]


def chamfer_tolerance_mm(height_mm: float, tolerance_class: str = "m") -> float | None:
    """The +/- tolerance of an external radius or chamfer height (Table 2)."""
    cls = _check_class(tolerance_class)
    if height_mm < 0.5:
        return None
    i = _index(height_mm, _CHAMFER_UPPER_MM)
    return None if i is None else _CHAMFER_MM[cls][i]


def angular_tolerance_arcmin(shorter_leg_mm: float, tolerance_class: str = "m") -> float:
    """The +/- tolerance of an angle in arc minutes, by the length of its shorter leg (Table 3)."""
    cls = _check_class(tolerance_class)
    i = _index(shorter_leg_mm, _ANGULAR_UPPER_MM)
    assert i is not None  # the last range is open
    return _ANGULAR_ARCMIN[cls][i]
