"""Sizing: traced footprint -> clear aperture -> face length -> section polygon.

Rules (each stated once, used by every family):

* **Clear aperture** (common practice): on each optical face, for every
  traced condition (wavelengths of the band, tuning states, alignment decentre and tilt of
  ``spec.beam.alignment``), the 1/e^2 footprint of the beam (edge rays at +/- the 1/e^2 radius,
  opened by half the divergence) is scaled about its centre by
  ``spec.fabrication.clear_aperture_margin``; the clear aperture is the union over conditions.
* **Face length** (common practice): the clear aperture may fill at
  most ``CA_FRACTION[grade]`` of the face (commercial 80 %, precision 90 %, high precision
  95 %), so each end keeps a border ``ca (1/f - 1) / 2`` plus the bevel leg of that edge.
  Bevel leg on a dihedral theta for a bevel of face width w: ``a = w / (2 sin(theta/2))``
  (OCCT's chamfer builder takes legs along each face, drawings give the face width).
* **Apex flats** (OCCT's chamfer builder fails once the bevel strips of an acute apex meet,
  measured on this machine): an apex sharper than ``APEX_FLAT_BELOW_DEG`` that no
  light crosses is truncated by a ground flat of width ``max(2 bevel + 0.2 mm, 0.5 mm)``, so
  the bevel legs on its two edges never meet; the flat is a GROUND face with note "apex flat".
* **Rounding**: defining lengths round UP to 0.1 mm; no face is shorter than
  ``spec.fabrication.min_face_mm`` (flats excepted); beyond ``max_face_mm`` is an error.
* **Height**: the out-of-plane beam (1/e^2 diameter plus divergence over the path) times the
  margin, plus twice the alignment decentre, divided by the clear-aperture fraction, plus two
  bevel widths, rounded up, at least ``min_face_mm``.

The code lives in one module per job; this module re-exports it unchanged:
  * ``_face_rules``: the numbers of the rules above (``CA_FRACTION``, ``border_mm``,
    ``bevel_leg_mm``, ``apex_flat_width_mm``, ``round_up``, ``height_mm``)
  * ``_footprint``: the traced conditions and their footprints (``beam_groups``, ``Placed``,
    ``trace_groups``, ``footprints``, ``clear_aperture``)
  * ``_triangle``: sizing a triangular prism on the beam (``Triangle``, ``size_triangle``)
  * ``_finish``: the sized drafts traced and assembled into the ``System`` (``Draft``,
    ``finish_system``, ``start_z_mm``, ``wavelengths_nm``)
"""

from __future__ import annotations

from prismfab.design._face_rules import (
    APEX_FLAT_BELOW_DEG,
    CA_FRACTION,
    FLAT_MARGIN_MM,
    MIN_FLAT_MM,
    STEP_MM,
    apex_flat_width_mm,
    bevel_leg_mm,
    border_mm,
    height_mm,
    round_up,
)
from prismfab.design._finish import Draft, finish_system, start_z_mm, wavelengths_nm
from prismfab.design._footprint import (
    Placed,
    RayGroup,
    beam_groups,
    clear_aperture,
    footprints,
    trace_groups,
)
# private helpers other modules reach as sizing._reached / sizing._sequential_trace
from prismfab.design._footprint import _reached as _reached
from prismfab.design._footprint import _sequential_trace as _sequential_trace
from prismfab.design._triangle import SizedTriangle, Triangle, face_normal, size_triangle

__all__ = [
    "APEX_FLAT_BELOW_DEG",
    "CA_FRACTION",
    "FLAT_MARGIN_MM",
    "MIN_FLAT_MM",
    "STEP_MM",
    "Draft",
    "Placed",
    "RayGroup",
    "SizedTriangle",
    "Triangle",
    "apex_flat_width_mm",
    "beam_groups",
    "bevel_leg_mm",
    "border_mm",
    "clear_aperture",
    "face_normal",
    "finish_system",
    "footprints",
    "height_mm",
    "round_up",
    "size_triangle",
    "start_z_mm",
    "trace_groups",
    "wavelengths_nm",
]
