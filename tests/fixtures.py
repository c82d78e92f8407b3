"""Hand-built model objects for writer tests that must not depend on the solvers.

The numbers describe an invented example (a Brewster-entry, normal-exit prism of 517642
borosilicate crown at 780 nm); they are test inputs, never expectations about the outside world.
"""

from __future__ import annotations

import math

from prismfab.model import (
    Coating,
    CoatingType,
    DocumentInfo,
    Face,
    FaceRole,
    Part,
    PartFace,
    Pose,
    Prism,
    Tolerances,
)

N_780 = 1.511183  # 517642 at 780 nm, computed from its Sellmeier set (from memory, cross-checked)


def brewster_normal_exit_prism(*, height_mm: float = 10.0, leg_mm: float = 12.0) -> Prism:
    """Right-angle section: face A base (ground), B hypotenuse (entry, Brewster), C exit (normal)."""
    apex = math.atan(1.0 / N_780)
    b = leg_mm * math.tan(apex)
    vertices = ((0.0, 0.0), (b, 0.0), (0.0, leg_mm))
    faces = (
        Face("A", FaceRole.GROUND, note="mounting base"),
        Face("B", FaceRole.ENTRY, Coating(CoatingType.NONE, reason="Brewster"), note="Brewster entry"),
        Face("C", FaceRole.EXIT, Coating(CoatingType.ANTIREFLECTION, reflectance_max_pct=0.25)),
    )
    pose = Pose.in_plane(angle_rad=0.4, x_mm=2.0, z_mm=5.0, height_mm=height_mm)
    return Prism("P1", "517642", vertices, faces, height_mm, pose)


def sample_part() -> Part:
    """A complete Part for writer tests."""
    prism = brewster_normal_exit_prism()
    (x0, y0), (x1, y1), (x2, y2) = prism.vertices_mm
    lengths = [prism.face_length_mm(i) for i in range(3)]
    # chief ray: inside along -X at 45 % of the exit face height
    y_in = 0.45 * y2
    x_in = x1 * (1.0 - y_in / y2)
    hyp = math.hypot(x1, y2)
    nx, ny = y2 / hyp, x1 / hyp  # outward normal of face B
    t = (-1.0, 0.0)
    tn = t[0] * nx + t[1] * ny
    dt = (N_780 * (t[0] - tn * nx), N_780 * (t[1] - tn * ny))
    dn = math.sqrt(1.0 - dt[0] ** 2 - dt[1] ** 2)
    d = (dt[0] - dn * nx, dt[1] - dn * ny)
    ray = ((x_in - 8.0 * d[0], y_in - 8.0 * d[1]), (x_in, y_in), (0.0, y_in), (-6.0, y_in))
    along_b = math.hypot(x_in - x1, y_in - y1)
    faces = (
        PartFace("A", FaceRole.GROUND, lengths[0], None, None, None, False, "", "", Coating(), ""),
        PartFace(
            "B", FaceRole.ENTRY, lengths[1], (6.0, 6.0), (along_b, 5.0), (56.5, 56.2, 56.8), True,
            "3/ 1(0.5); λ = 632.8 nm", "5/ 2×0.10; L 1×0.004; E 0.2",
            Coating(CoatingType.NONE, reason="Brewster"), "uncoated: Brewster",
        ),
        PartFace(
            "C", FaceRole.EXIT, lengths[2], (6.0, 6.0), (y2 - y_in, 5.0), (0.0, -0.2, 0.2), True,
            "3/ 1(0.5); λ = 632.8 nm", "5/ 2×0.10; L 1×0.004; E 0.2",
            Coating(CoatingType.ANTIREFLECTION, reflectance_max_pct=0.25),
            "AR, R ≤ 0.25 % per surface, 775-785 nm, AOI 0° ± 1° in air, p-polarised",
        ),
    )
    tol = Tolerances(
        angle_arcsec=60.0, pyramidal_arcsec=60.0, length_mm=0.1, height_mm=0.1,
        nd_tolerance=0.0005, vd_tolerance_pct=0.8, surface_form_fringes=(1.0, 0.5),
        yield_fraction=0.97, driving="pointing", grade="precision", cost_index=1.6,
    )
    return Part(
        number="EX-1001-01", title="Brewster expander prism", quantity=10, prism=prism,
        faces=faces, material_name="517642 borosilicate crown", material_code="517642",
        nd=1.5168, vd=64.17, material_indications=("0/10", "1/2×0.10", "2/2;3"),
        bevel_mm=0.3,
        bevelled_edges=(("A", "B"), ("C", "A"), ("A", "BOTTOM"), ("A", "TOP"), ("B", "BOTTOM"),
                        ("B", "TOP"), ("C", "BOTTOM"), ("C", "TOP")),
        sharp_edges=(("B", "C"),),
        datums=(("A", "lower end face"), ("B", "face A (mounting base)")),
        tolerances=tol, functional_angles=(0, 2), ray_path_mm=ray,
        polarization_note="p: E-field in the principal section",
        notes=("Edge B/C sharp, no bevel; chips ≤ 0.1 mm.",),
    )


def sample_info() -> DocumentInfo:
    """Title-block data for writer tests."""
    return DocumentInfo(
        number="EX-1001-01", title="Brewster expander prism", revision="A", date="2026-12-01",
        company="Example Optics Lab", drawn_by="A. Drafter", checked_by="B. Checker",
        approved_by="C. Approver", revisions=(("A", "First issue", "2026-12-01", "C. Approver"),),
        scenario="Example beam expander",
    )


def sample_solution():  # type: ignore[no-untyped-def]
    """A complete Solution (hand-built System and Performance around ``sample_part``)."""
    from prismfab.model import Beam, Ghost, Performance, Polarization, System, WavelengthResult
    from prismfab.pipeline import Solution
    from prismfab.spec.types import (
        AnamorphicSingleDesign,
        BeamSpec,
        Family,
        Project,
        Spec,
    )

    part = sample_part()
    prism = part.prism
    beam = Beam(780.0, (775.0, 785.0), 1.2, 3.6, Polarization.P)
    system = System(
        family="anamorphic-single", prisms=(prism,), beam=beam,
        facts=(("entry incidence P1", 56.5, "deg"), ("deviation", 23.2, "deg")),
        clear_apertures=(("P1", "B", 6.0, 6.0, 5.0, 5.0), ("P1", "C", 6.0, 6.0, 6.6, 5.0)),
        aoi_ranges_deg=(("P1", "B", 56.5, 56.2, 56.8), ("P1", "C", 0.0, -0.2, 0.2)),
    )
    results = tuple(
        WavelengthResult(
            wavelength_nm=wl, magnification_in_plane=1.511 + k * 1e-4,
            magnification_out_of_plane=1.0, pointing_mrad=0.02 * k,
            pointing_out_of_plane_mrad=0.0, lateral_offset_mm=0.4, transmission=0.955,
            dispersion_rad_per_um=-0.02,
            aoi_deg=(("P1", "B", 56.5), ("P1", "C", 0.0)), tir_margin_deg=(),
            footprint_mm=(("P1", "B", 5.0, 2.2, 5.0, 3.6), ("P1", "C", 6.6, 1.8, 5.0, 3.6)),
        )
        for k, wl in ((0, 780.0), (-1, 775.0), (1, 785.0))
    )
    ray = tuple(prism.pose.apply((x, y, prism.height_mm / 2)) for x, y in part.ray_path_mm)
    ghosts = (Ghost("P1", "C", 780.0, 0.0025, (0.0, 0.0, -1.0), 0.5, "source", True),)
    perf = Performance(results=results, ghosts=ghosts, chief_ray_mm=ray)
    spec = Spec(
        project=Project(title="Example beam expander", drawing_prefix="EX-1001", quantity=10,
                        company="Example Optics Lab"),
        beam=BeamSpec(780.0, (775.0, 785.0), 1.2, 3.6),
        design=AnamorphicSingleDesign(magnification=1.51, material="517642"),
        family=Family.ANAMORPHIC_SINGLE,
    )
    return Solution(spec=spec, system=system, performance=perf, parts=(part,))
