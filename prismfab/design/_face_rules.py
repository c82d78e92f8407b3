"""Sizing rules for one face: clear-aperture fraction, border, bevel leg, apex flat, rounding.

Each function states one rule of ``design.sizing`` (see its docstring for the whole list) in
numbers: how much of a face the clear aperture may fill per grade, the border and bevel leg
each end of a face keeps, the width of a ground apex flat, the 0.1 mm rounding of defining
lengths, and the prism height from the out-of-plane beam.
"""

from __future__ import annotations

import math

from prismfab.spec.types import Grade, Spec

__all__ = [
    "APEX_FLAT_BELOW_DEG",
    "CA_FRACTION",
    "FLAT_MARGIN_MM",
    "MIN_FLAT_MM",
    "STEP_MM",
    "apex_flat_width_mm",
    "bevel_leg_mm",
    "border_mm",
    "height_mm",
    "round_up",
]

CA_FRACTION = {Grade.COMMERCIAL: 0.80, Grade.PRECISION: 0.90, Grade.HIGH_PRECISION: 0.95}
"""Largest fraction of a face the clear aperture may fill (common practice)."""
APEX_FLAT_BELOW_DEG = 30.0
"""Apices sharper than this get a ground flat (below 20-30 deg OCCT's chamfer builder fails at
usual bevel legs; measured)."""
FLAT_MARGIN_MM = 0.2
MIN_FLAT_MM = 0.5
STEP_MM = 0.1


def round_up(value_mm: float, step_mm: float = STEP_MM) -> float:
    """Round up to the step (0.1 mm), ignoring float noise below 1e-9 mm."""
    return round(math.ceil(value_mm / step_mm - 1e-9) * step_mm, 6)


def bevel_leg_mm(bevel_mm: float, dihedral_rad: float) -> float:
    """Leg along each face of a symmetric bevel of face width ``bevel_mm`` on a dihedral."""
    return bevel_mm / (2.0 * math.sin(dihedral_rad / 2.0))


def border_mm(ca_mm: float, grade: Grade) -> float:
    """Border each side of a clear aperture so it fills at most ``CA_FRACTION[grade]``."""
    return ca_mm * (1.0 / CA_FRACTION[grade] - 1.0) / 2.0


def apex_flat_width_mm(bevel_mm: float) -> float:
    """Width of a ground apex flat: wider than the two bevel legs on its edges plus a margin."""
    return max(2.0 * bevel_mm + FLAT_MARGIN_MM, MIN_FLAT_MM)




def height_mm(spec: Spec, *, path_mm: float) -> tuple[float, float]:
    """(clear aperture along the height, prism height), mm, for a chief-ray path ``path_mm``."""
    b = spec.beam
    grow = b.divergence_out_of_plane_mrad * 1e-3 * path_mm
    ca = spec.fabrication.clear_aperture_margin * (b.diameter_out_of_plane_mm + grow)
    ca += 2.0 * b.alignment.decenter_mm + 2.0 * b.alignment.tilt_mrad * 1e-3 * path_mm
    f = CA_FRACTION[spec.fabrication.grade]
    h = round_up(max(ca / f + 2.0 * spec.fabrication.bevel_mm, spec.fabrication.min_face_mm))
    return ca, h
