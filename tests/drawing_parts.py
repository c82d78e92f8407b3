"""Two more hand-built parts for the drawing tests: a 60° dispersing prism and a right-angle fold.

Invented example geometry (test inputs, never expectations about the outside world). The ray
paths are drawn through the sections by simple construction, not traced.
"""

from __future__ import annotations

import math
from dataclasses import replace

from prismfab.model import Coating, CoatingType, Face, FaceRole, Part, PartFace, Prism, Tolerances
from tests.fixtures import sample_part


def _tol(angle_arcsec: float) -> Tolerances:
    return Tolerances(angle_arcsec=angle_arcsec, pyramidal_arcsec=60.0, length_mm=0.1,
                      height_mm=0.1, nd_tolerance=0.0005, vd_tolerance_pct=0.8,
                      surface_form_fringes=(1.0, 0.5))


def _pf(label: str, role: FaceRole, length: float, ca: float | None, centre: float,
        coating_text: str) -> PartFace:
    optical = role.is_optical
    return PartFace(
        label, role, length, (ca, ca) if optical and ca else None,
        (centre, 7.5) if optical and ca else None, (45.0, 44.0, 46.0) if optical else None, optical,
        "3/ 2(0.5); λ = 632.8 nm" if optical else "", "5/ 3×0.16; L 2×0.010; E 0.3" if optical else "",
        Coating(CoatingType.ANTIREFLECTION, reflectance_max_pct=0.5) if "AR" in coating_text
        else Coating(), coating_text)


def dispersing_prism() -> Part:
    """Equilateral 60° dispersing prism, 25 mm sides, 15 mm high, apex at vertex 2."""
    side = 25.0
    v = ((0.0, 0.0), (side, 0.0), (side / 2, side * math.sqrt(3) / 2))
    faces = (Face("A", FaceRole.GROUND, note="base"), Face("B", FaceRole.EXIT),
             Face("C", FaceRole.ENTRY))
    prism = Prism("P2", "fused-silica", v, faces, 15.0)
    y = 0.45 * v[2][1]
    xl, xr = y / math.sqrt(3), side - y / math.sqrt(3)
    ray = ((xl - 9.0, y - 5.2), (xl, y), (xr, y), (xr + 9.0, y - 5.2))
    pf = (
        _pf("A", FaceRole.GROUND, side, None, 0, ""),
        _pf("B", FaceRole.EXIT, side, 16.0, side * 0.55, "AR, R ≤ 0.5 % per surface, 400-700 nm, AOI 45° ± 5°"),
        _pf("C", FaceRole.ENTRY, side, 16.0, side * 0.45, "AR, R ≤ 0.5 % per surface, 400-700 nm, AOI 45° ± 5°"),
    )
    base = sample_part()
    return replace(base, number="EX-1002-01", title="60° dispersing prism", prism=prism, faces=pf,
                   material_name="fused silica", material_code="", nd=1.4585, vd=67.82,
                   bevelled_edges=(("A", "B"), ("C", "A"), ("A", "TOP"), ("A", "BOTTOM")),
                   sharp_edges=(("B", "C"),), datums=(("A", "lower end face"), ("B", "face A")),
                   tolerances=_tol(30.0), functional_angles=(2, 0), ray_path_mm=ray,
                   polarization_note="", notes=())


def fold_prism() -> Part:
    """Right-angle fold prism, 20 mm legs, 20 mm high; the beam turns 90° by TIR on face B."""
    leg = 20.0
    v = ((0.0, 0.0), (leg, 0.0), (0.0, leg))
    faces = (Face("A", FaceRole.ENTRY), Face("B", FaceRole.TIR), Face("C", FaceRole.EXIT))
    prism = Prism("P3", "517642", v, faces, 20.0)
    x = 0.5 * leg
    ray = ((x, -10.0), (x, 0.0), (x, leg - x), (0.0, leg - x), (-10.0, leg - x))
    pf = (
        _pf("A", FaceRole.ENTRY, leg, 16.0, leg / 2, "AR, R ≤ 0.25 % per surface, 630-660 nm, AOI 0° ± 2°"),
        _pf("B", FaceRole.TIR, leg * math.sqrt(2), 22.0, leg * math.sqrt(2) / 2,
            "uncoated: internal reflection"),
        _pf("C", FaceRole.EXIT, leg, 16.0, leg / 2, "AR, R ≤ 0.25 % per surface, 630-660 nm, AOI 0° ± 2°"),
    )
    base = sample_part()
    return replace(base, number="EX-1003-01", title="Right-angle fold prism", prism=prism, faces=pf,
                   bevelled_edges=(("A", "B"), ("B", "C"), ("C", "A"), ("A", "TOP"), ("B", "TOP"),
                                   ("C", "TOP"), ("A", "BOTTOM"), ("B", "BOTTOM"), ("C", "BOTTOM")),
                   sharp_edges=(), datums=(("A", "lower end face"), ("B", "face C")),
                   tolerances=_tol(30.0), functional_angles=(0, 1, 2), ray_path_mm=ray,
                   polarization_note="s: E-field normal to the principal section", notes=())


def apex_flat_prism() -> Part:
    """A 40° dispersing prism whose apex is truncated by a 1 mm ground flat (face C).

    Base 20 mm, base angles 70°; faces A base (ground, datum B), B exit, C apex flat, D entry.
    The functional angle between D and B (across the flat) is 40°.
    """
    half = math.radians(20.0)
    apex_y = 10.0 / math.tan(half)
    flat_y = apex_y - 0.5 / math.tan(half)
    v = ((0.0, 0.0), (20.0, 0.0), (10.5, flat_y), (9.5, flat_y))
    faces = (Face("A", FaceRole.GROUND, note="base"), Face("B", FaceRole.EXIT),
             Face("C", FaceRole.GROUND, note="apex flat"), Face("D", FaceRole.ENTRY))
    prism = Prism("P4", "fused-silica", v, faces, 12.0)
    lengths = [prism.face_length_mm(i) for i in range(4)]
    y = 0.4 * flat_y
    xl, xr = y * math.tan(half), 20.0 - y * math.tan(half)
    ray = ((xl - 8.0, y - 4.0), (xl, y), (xr, y), (xr + 8.0, y - 4.0))
    ar = "AR, R ≤ 0.5 % per surface, 400-700 nm, AOI 30° ± 5°"
    pf = (
        _pf("A", FaceRole.GROUND, lengths[0], None, 0, ""),
        _pf("B", FaceRole.EXIT, lengths[1], 14.0, lengths[1] * 0.55, ar),
        _pf("C", FaceRole.GROUND, lengths[2], None, 0, ""),
        _pf("D", FaceRole.ENTRY, lengths[3], 14.0, lengths[3] * 0.45, ar),
    )
    base = sample_part()
    return replace(base, number="EX-1004-01", title="40° prism with apex flat", prism=prism,
                   faces=pf, material_name="fused silica", material_code="", nd=1.4585, vd=67.82,
                   bevelled_edges=(("A", "TOP"), ("A", "BOTTOM"), ("B", "TOP"), ("B", "BOTTOM"),
                                   ("D", "TOP"), ("D", "BOTTOM")),
                   sharp_edges=(("B", "C"), ("C", "D"), ("A", "B"), ("D", "A")),
                   datums=(("A", "lower end face"), ("B", "face A (base)")),
                   tolerances=_tol(30.0), functional_angles=(1,), ray_path_mm=ray,
                   polarization_note="", notes=("Edges B/C and C/D sharp, no bevel; chips ≤ 0.05 mm.",))
