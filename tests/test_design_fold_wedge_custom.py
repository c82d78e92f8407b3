"""Fold, wedge and custom solvers: solved systems, re-traced by the 3D engine, and their errors.

Specs are built in memory from the Spec dataclasses; the beam values are invented test inputs.
Checks against published values live in tests/reference/test_design_fold_wedge_reference.py.
"""

from __future__ import annotations

import dataclasses
import itertools
import math

import numpy as np
import pytest

from prismfab.design import custom, fold, wedge
from prismfab.errors import DesignCheckError, SolveError, SpecError
from prismfab.model import CoatingType, FaceRole
from prismfab.optics.measure import measure
from prismfab.spec.types import (
    BeamSpec,
    CustomDesign,
    Fabrication,
    Family,
    FoldDesign,
    FoldType,
    Project,
    Spec,
    WedgeDesign,
)

DEV_TOL_DEG = 1e-6


def make_spec(design, family: Family, *, wavelength_nm: float = 632.8, band=(620.0, 650.0),
              diameter_mm: float = 3.0, height_diameter_mm: float = 2.0,
              divergence_mrad: float = 1.0, fabrication: Fabrication | None = None) -> Spec:
    beam = BeamSpec(wavelength_nm, band, diameter_mm, height_diameter_mm,
                    divergence_in_plane_mrad=divergence_mrad,
                    divergence_out_of_plane_mrad=divergence_mrad)
    return Spec(project=Project("test", "T-1"), beam=beam, design=design, family=family,
                fabrication=fabrication or Fabrication())


def fold_spec(kind: FoldType, material: str = "517642", coat: bool | None = None, **kw) -> Spec:
    return make_spec(FoldDesign(material, kind, coat), Family.FOLD, **kw)


def wedge_spec(deviation_deg: float, material: str = "517642", *, pair: bool = False,
               incidence_deg: float = 0.0, thickness_mm: float | None = None, **kw) -> Spec:
    return make_spec(WedgeDesign(material, deviation_deg, pair, incidence_deg, thickness_mm),
                     Family.WEDGE, **kw)


def custom_spec(vertices=((0.0, 0.0), (10.0, 0.0), (0.0, 10.0)), roles=("exit", "tir", "entry"),
                material: str = "517642", position=(-5.0, 10.0), rotation_deg: float = 0.0,
                height_mm: float | None = None, **kw) -> Spec:
    d = CustomDesign(material, tuple(roles), tuple(vertices), (), None, height_mm, rotation_deg,
                     tuple(position))
    return make_spec(d, Family.CUSTOM, **kw)


def traced_deviation_deg(system) -> float:
    """Deviation of the output chief ray from the input, by the 3D engine (measure)."""
    return abs(measure(system).design.pointing_mrad) * 1e-3 * 180.0 / math.pi


def fact(system, name: str) -> float:
    return next(v for n, v, _u in system.facts if n == name)


def assert_sized(system) -> None:
    """Every optical face has a clear aperture inside it and an AOI range; ground faces none."""
    cas = {(p, f): (w, h, c, ch) for p, f, w, h, c, ch in system.clear_apertures}
    aois = {(p, f) for p, f, *_ in system.aoi_ranges_deg}
    for prism in system.prisms:
        for i, face in enumerate(prism.faces):
            key = (prism.name, face.label)
            if not face.role.is_optical:
                assert key not in cas
                continue
            w, h, c, ch = cas[key]
            assert key in aois
            assert 0.0 <= c - w / 2 and c + w / 2 <= prism.face_length_mm(i) + 1e-6
            assert h <= prism.height_mm
            assert ch == pytest.approx(prism.height_mm / 2)


# --------------------------------------------------------------------------- fold


@pytest.mark.parametrize("kind, deviation", [(FoldType.RIGHT_ANGLE, 90.0), (FoldType.PENTA, 90.0),
                                             (FoldType.DOVE, 0.0), (FoldType.RETRO, 180.0)])
def test_fold_types_meet_their_deviation_when_retraced(kind, deviation):
    """Each fold type, re-traced by the 3D engine, deviates the beam as designed."""
    system = fold.design(fold_spec(kind))
    assert traced_deviation_deg(system) == pytest.approx(deviation, abs=DEV_TOL_DEG)
    assert fact(system, "deviation") == pytest.approx(deviation, abs=DEV_TOL_DEG)
    assert_sized(system)


def test_dove_output_is_collinear_at_the_design_wavelength():
    """The dove's base length puts the output chief ray back on the input axis."""
    system = fold.design(fold_spec(FoldType.DOVE, "fused silica"))
    result = measure(system).design
    assert result.lateral_offset_mm == pytest.approx(0.0, abs=1e-9)
    assert result.pointing_mrad == pytest.approx(0.0, abs=1e-9)
    assert fact(system, "image rotation per degree of prism roll") == 2.0


def test_retro_output_is_antiparallel_and_displaced():
    """The retro returns the beam antiparallel, displaced by about half the hypotenuse (the
    1 deg anti-feedback tilt moves it a little), as its fact states."""
    system = fold.design(fold_spec(FoldType.RETRO))
    perf = measure(system)
    out = np.subtract(perf.chief_ray_mm[-1], perf.chief_ray_mm[-2])
    out /= np.linalg.norm(out)
    assert float(out @ np.array([0.0, 0.0, 1.0])) == pytest.approx(-1.0, abs=1e-12)
    prism = system.prisms[0]
    assert prism.faces[0].role is FaceRole.ENTRY_EXIT
    shift = abs(perf.design.lateral_offset_mm)
    assert shift == pytest.approx(fact(system, "return-beam displacement"), abs=1e-4)
    assert shift == pytest.approx(prism.face_length_mm(0) / 2, rel=0.05)


@pytest.mark.parametrize("kind", [FoldType.PENTA, FoldType.RETRO])
def test_constant_deviation_folds_are_tilted_against_feedback(kind):
    """Penta and retro are set 1 deg off square: no reflection returns into the source, the
    deviation stays exact, and the usual penta coating raises no warning."""
    system = fold.design(fold_spec(kind))
    perf = measure(system)
    assert not any(g.warning for g in perf.ghosts)
    assert not perf.warnings and not system.warnings
    if kind is FoldType.RETRO:  # twice round the retro: reversed exactly, but beside the source
        assert any(g.order == 2 and g.destination == "backward" for g in perf.ghosts)
    assert fact(system, "anti-feedback tilt of the prism (deviation unchanged)") == 1.0
    entry = system.aoi_ranges_deg[-1 if kind is FoldType.PENTA else 0]
    assert entry[2] == pytest.approx(1.0, abs=1e-6)  # the entry face meets the beam at the tilt


def test_right_angle_normal_faces_are_left_to_the_back_reflection_check():
    """The right-angle prism keeps its square legs; the trace names each returning face once."""
    perf = measure(fold.design(fold_spec(FoldType.RIGHT_ANGLE)))
    back = [w for w in perf.warnings if "back-reflection" in w]
    assert len(back) == 2 and any("face C" in w for w in back) and any("face A" in w for w in back)


def test_penta_deviation_does_not_change_with_input_tilt():
    """Tilting the input beam leaves the penta prism's 90 deg deviation unchanged (3D trace)."""
    system = fold.design(fold_spec(FoldType.PENTA))
    for tilt_deg in (-1.0, -0.3, 0.3, 1.0):
        t = math.radians(tilt_deg)
        beam = dataclasses.replace(system.beam, direction=(math.sin(t), 0.0, math.cos(t)))
        tilted = dataclasses.replace(system, beam=beam)
        assert traced_deviation_deg(tilted) == pytest.approx(90.0, abs=1e-7)


def test_low_index_right_angle_gets_a_mirror_hypotenuse():
    """Magnesium fluoride (n < sqrt 2) loses TIR at 45 deg: the hypotenuse is mirror-coated."""
    system = fold.design(fold_spec(FoldType.RIGHT_ANGLE, "magnesium fluoride (o)"))
    hyp = system.prisms[0].faces[1]
    assert hyp.role is FaceRole.MIRROR
    assert hyp.coating.type is CoatingType.MIRROR
    assert any("mirror coating" in w for w in system.warnings)
    assert traced_deviation_deg(system) == pytest.approx(90.0, abs=DEV_TOL_DEG)


def test_crown_right_angle_keeps_an_uncoated_tir_hypotenuse():
    """517642 keeps TIR with margin over 2 deg: uncoated, no TIR warning."""
    system = fold.design(fold_spec(FoldType.RIGHT_ANGLE))
    hyp = system.prisms[0].faces[1]
    assert hyp.role is FaceRole.TIR
    assert hyp.coating.reason == "internal reflection"
    assert not any("TIR" in w for w in system.warnings)
    assert fact(system, "TIR margin P1 face B, worst case") > 2.0


def test_small_tir_margin_is_warned_once():
    """Fused silica folds keep TIR with under 2 deg margin: one worst-case warning per face."""
    system = fold.design(fold_spec(FoldType.RIGHT_ANGLE, "fused silica"))
    warns = [w for w in system.warnings if "P1 face B" in w]
    assert len(warns) == 1 and "worst-case TIR margin" in warns[0]


def test_coating_forced_on_and_off():
    """coat_reflecting_faces True coats a working TIR face; False with lost TIR is an error."""
    coated = fold.design(fold_spec(FoldType.RETRO, coat=True))
    assert [f.role for f in coated.prisms[0].faces[1:]] == [FaceRole.MIRROR, FaceRole.MIRROR]
    with pytest.raises(DesignCheckError) as err:
        fold.design(fold_spec(FoldType.RIGHT_ANGLE, "magnesium fluoride (o)", coat=False))
    assert err.value.path == "design.coat_reflecting_faces"
    assert "P1 face B" in str(err.value) and "critical angle 46.5" in str(err.value)
    assert "n above about 1.41" in err.value.reachable


def test_penta_uncoated_needs_a_very_high_index():
    """Uncoated penta reflectors (22.5 deg inside) work only above n = 1/sin 22.5 deg."""
    with pytest.raises(DesignCheckError):
        fold.design(fold_spec(FoldType.PENTA, coat=False))
    silicon = fold.design(fold_spec(FoldType.PENTA, "silicon", coat=False, wavelength_nm=4000.0,
                                    band=(3900.0, 4100.0)))
    assert [f.role for f in silicon.prisms[0].faces].count(FaceRole.TIR) == 2


def test_fold_face_limit_is_reported():
    """A beam too large for fabrication.max_face_mm names that field."""
    spec = fold_spec(FoldType.DOVE, diameter_mm=20.0, fabrication=Fabrication(max_face_mm=40.0))
    with pytest.raises(DesignCheckError) as err:
        fold.design(spec)
    assert err.value.path == "fabrication.max_face_mm"


def test_dove_is_sized_for_any_roll():
    """The dove's in-plane aperture covers the larger beam diameter (the image turns)."""
    small = fold.design(fold_spec(FoldType.DOVE, diameter_mm=2.0, height_diameter_mm=2.0))
    wide = fold.design(fold_spec(FoldType.DOVE, diameter_mm=2.0, height_diameter_mm=6.0))
    assert wide.prisms[0].face_length_mm(0) > small.prisms[0].face_length_mm(0)
    assert wide.beam.diameter_out_of_plane_mm == 6.0 and wide.beam.diameter_in_plane_mm == 2.0


FOLD_GRID = list(itertools.product(
    FoldType, ("fused silica", "517642", "785257", "calcium fluoride", "sapphire (o)"),
    ((632.8, (620.0, 650.0)), (1064.0, (1064.0, 1064.0)), (450.0, (440.0, 460.0))),
    (1.0, 4.0), (None, True)))


def test_fold_grid_converges_and_retraces():
    """Every one of 240 feasible fold specs solves, and the 3D re-trace meets its deviation."""
    assert len(FOLD_GRID) >= 200
    target = {FoldType.RIGHT_ANGLE: 90.0, FoldType.PENTA: 90.0, FoldType.DOVE: 0.0,
              FoldType.RETRO: 180.0}
    for kind, material, (wl, band), dia, coat in FOLD_GRID:
        system = fold.design(fold_spec(kind, material, coat, wavelength_nm=wl, band=band,
                                       diameter_mm=dia))
        assert traced_deviation_deg(system) == pytest.approx(target[kind], abs=DEV_TOL_DEG)


# --------------------------------------------------------------------------- wedge


def test_wedge_meets_its_deviation_when_retraced():
    """A solved wedge deviates the chief ray by the target, by the 3D engine, to 1e-6 deg."""
    for dev, inc in ((0.5, 0.0), (5.0, 3.0), (12.0, -8.0)):
        system = wedge.design(wedge_spec(dev, incidence_deg=inc))
        assert traced_deviation_deg(system) == pytest.approx(dev, abs=DEV_TOL_DEG)
        assert_sized(system)


def test_wedge_section_and_thickness():
    """Thick edge, exit, thin edge, entry; thin edge at least min_face_mm; angle as solved."""
    system = wedge.design(wedge_spec(3.0, incidence_deg=2.0))
    prism = system.prisms[0]
    assert [f.role for f in prism.faces] == [FaceRole.GROUND, FaceRole.EXIT, FaceRole.GROUND,
                                             FaceRole.ENTRY]
    assert prism.face_length_mm(2) >= 3.0 - 1e-9
    apex = fact(system, "wedge angle")
    entry_exit = math.degrees(math.pi - prism.interior_angle_rad(2) - prism.interior_angle_rad(3))
    assert abs(entry_exit) == pytest.approx(apex, abs=1e-7)
    t = fact(system, "centre thickness")
    assert round(t * 10) == pytest.approx(t * 10, abs=1e-9)  # a multiple of 0.1 mm


def first_wedge_deviation_deg(system) -> float:
    """Deviation of the first wedge alone, by the 3D engine."""
    return traced_deviation_deg(dataclasses.replace(system, prisms=system.prisms[:1]))


def test_wedge_pair_steering_facts():
    """The aligned pair meets the target deviation (its maximum); counter-rotation steers it
    down to a small residual at 180 deg, tabulated as (relative rotation, deviation) rows."""
    system = wedge.design(wedge_spec(2.0, "fused silica", pair=True))
    assert len(system.prisms) == 2
    assert traced_deviation_deg(system) == pytest.approx(2.0, abs=DEV_TOL_DEG)
    assert fact(system, "deviation") == pytest.approx(2.0, abs=DEV_TOL_DEG)
    assert 0.95 < first_wedge_deviation_deg(system) < 1.05  # each wedge about half
    assert fact(system, "steering range: maximum deviation (wedges aligned)") == pytest.approx(
        2.0, abs=DEV_TOL_DEG)
    assert fact(system, "steering range: minimum deviation (wedges opposed, 180 deg apart)") < 0.01
    assert system.tuning_columns == wedge.TUNING_COLUMNS
    rho = [r[0] for r in system.tuning]
    dev = [r[1] for r in system.tuning]
    assert rho[0] == 0.0 and rho[-1] == 180.0
    assert dev[0] == pytest.approx(2.0, abs=DEV_TOL_DEG)
    assert all(a > b for a, b in zip(dev, dev[1:]))  # counter-rotation only lowers it
    half = fact(system, "steering range: relative rotation for half the maximum deviation")
    assert 115.0 < half < 125.0  # near 120 deg, where cos(rho/2) = 1/2
    a, b = system.prisms
    assert a.vertices_mm == b.vertices_mm  # identical wedges
    assert not polygons_touch(system)


def test_wedge_pair_is_sized_for_any_rotation():
    """Both wedges sit on the rotation axis, square, with clear apertures centred on their faces
    that hold the beam's walk on the second wedge (3D trace with the wedges opposed)."""
    spec = wedge_spec(20.0, "785257", pair=True, diameter_mm=4.0, height_diameter_mm=1.0)
    system = wedge.design(spec)
    perf = measure(system)
    for prism in system.prisms:
        assert prism.height_mm >= max(prism.face_length_mm(1), prism.face_length_mm(3)) - 0.1
        entry = prism.pose.apply((*prism.vertices_mm[3], 0.0))
        end = prism.pose.apply((*prism.vertices_mm[0], 0.0))
        assert 0.5 * (entry[0] + end[0]) == pytest.approx(0.0, abs=1e-6)  # centred on the axis
    for name, label, w, h, c, ch in system.clear_apertures:
        prism = next(p for p in system.prisms if p.name == name)
        length = prism.face_length_mm(prism.face_index(label))
        assert w == h and c == pytest.approx(length / 2, abs=1e-4)
    # the traced footprint on W2's entry face lies inside its centred clear aperture, and the
    # walk (offset from the face centre) fits on the other side too (the opposed wedges)
    foot = {(p, f): (c, w) for p, f, c, w, _ch, _wh in perf.design.footprint_mm}
    c, w = foot[("W2", "D")]
    ca = {(p, f): (w_, c_) for p, f, w_, _h, c_, _ch in system.clear_apertures}[("W2", "D")]
    assert abs(c - ca[1]) + w / 2 <= ca[0] / 2 + 1e-6
    assert abs(c - ca[1]) > 0.2  # the walk is real at 20 deg


def polygons_touch(system) -> bool:
    """True if the two wedge sections overlap in the beam plane."""
    from prismfab.design.common import polygons_overlap, section_in_plane

    a, b = (section_in_plane(p) for p in system.prisms)
    return polygons_overlap(a, b)


def test_wedge_beyond_grazing_gives_the_reachable_range():
    """A deviation the material cannot give before grazing exit is a SolveError with the range."""
    with pytest.raises(SolveError) as err:
        wedge.design(wedge_spec(60.0, "fused silica"))
    assert err.value.path == "design.deviation_deg"
    assert err.value.reachable.startswith("0 to ")
    reach = float(err.value.reachable.split()[2])
    assert 30.0 < reach < 60.0
    ok = wedge.design(wedge_spec(reach - 1.0, "fused silica", diameter_mm=1.0))
    assert traced_deviation_deg(ok) == pytest.approx(reach - 1.0, abs=DEV_TOL_DEG)


def test_wedge_zero_deviation_and_thin_given_thickness_are_errors():
    """A zero target and a given thickness leaving a thin edge name their fields."""
    with pytest.raises(SolveError) as err:
        wedge.design(wedge_spec(0.0))
    assert err.value.path == "design.deviation_deg"
    with pytest.raises(DesignCheckError) as err:
        wedge.design(wedge_spec(3.0, thickness_mm=3.0))
    assert err.value.path == "design.thickness_mm" and "at least" in err.value.reachable


def test_wedge_near_normal_incidence_warns_about_back_reflection_once():
    """At normal incidence the trace's back-reflection check warns (once, not the solver too);
    a tilt under 0.5 deg gets the solver's warning; 2 deg is clean."""
    normal = wedge.design(wedge_spec(1.0))
    assert not normal.warnings
    assert sum("W1 face D" in w for w in measure(normal).warnings) == 1
    near = wedge.design(wedge_spec(1.0, incidence_deg=0.2)).warnings
    assert len(near) == 1 and "0.4 deg from the source" in near[0] and "IEC 60825-1" in near[0]
    assert not measure(wedge.design(wedge_spec(1.0, incidence_deg=0.2))).warnings
    assert not wedge.design(wedge_spec(1.0, incidence_deg=2.0)).warnings
    for w in near:
        assert ".md" not in w


WEDGE_GRID = list(itertools.product((0.1, 1.0, 3.0, 8.0, 12.0), (-10.0, 0.0, 5.0, 15.0),
                                    (False, True), ("fused silica", "517642", "785257"),
                                    (2.0, 6.0)))


def test_wedge_grid_converges_and_retraces():
    """Every one of 240 feasible wedge specs solves and re-traces to its deviation (1e-6 deg)."""
    assert len(WEDGE_GRID) >= 200
    for dev, inc, pair, material, dia in WEDGE_GRID:
        system = wedge.design(wedge_spec(dev, material, pair=pair, incidence_deg=inc,
                                         diameter_mm=dia))
        # single wedge: its deviation; pair: the aligned pair's deviation (the steering maximum)
        assert traced_deviation_deg(system) == pytest.approx(dev, abs=DEV_TOL_DEG)
        assert fact(system, "deviation") == pytest.approx(dev, abs=DEV_TOL_DEG)


# --------------------------------------------------------------------------- custom


def test_custom_polygon_is_packaged_as_given():
    """The user's vertices, pose and roles come back unchanged, with clear apertures."""
    spec = custom_spec(position=(-4.0, 12.0), height_mm=8.0)
    system = custom.design(spec)
    prism = system.prisms[0]
    assert prism.vertices_mm == ((0.0, 0.0), (10.0, 0.0), (0.0, 10.0))
    assert prism.height_mm == 8.0
    assert prism.pose.apply((0.0, 0.0, 4.0)) == pytest.approx((-4.0, 0.0, 12.0))
    assert [f.role for f in prism.faces] == [FaceRole.EXIT, FaceRole.TIR, FaceRole.ENTRY]
    assert_sized(system)
    assert traced_deviation_deg(system) == pytest.approx(90.0, abs=DEV_TOL_DEG)


def test_custom_triangle_from_angles():
    """Three interior angles and the first side give the same right-angle prism."""
    d = CustomDesign("517642", ("exit", "tir", "entry"), (), (90.0, 45.0, 45.0), 10.0, None, 0.0,
                     (-5.0, 10.0))
    system = custom.design(make_spec(d, Family.CUSTOM))
    assert np.allclose(system.prisms[0].vertices_mm, ((0, 0), (10, 0), (0, 10)), atol=1e-9)


def test_custom_spill_names_the_face_and_numbers():
    """A beam off the face centre spills: the error names the face and where the rays land."""
    with pytest.raises(DesignCheckError) as err:
        custom.design(custom_spec(position=(-1.0, 10.0)))
    text = str(err.value)
    assert "P1 face C" in text and "10.000 mm" in text and "9.000 mm" in text


def test_custom_clear_aperture_off_the_face():
    """A 1/e^2 beam on the face whose 1.5x clear aperture is not is still refused."""
    with pytest.raises(DesignCheckError) as err:
        custom.design(custom_spec(position=(-2.1, 10.0)))
    assert "clear aperture on P1 face" in str(err.value)


def test_custom_lost_tir_and_misses_and_roles():
    """Lost TIR, a missed prism, a ground face in the path and a wrong role are each refused."""
    with pytest.raises(DesignCheckError) as err:
        custom.design(custom_spec(material="magnesium fluoride (o)"))
    assert "P1 face B" in str(err.value) and "critical angle" in str(err.value)
    with pytest.raises(DesignCheckError) as err:
        custom.design(custom_spec(position=(20.0, 10.0)))
    assert err.value.path == "design.position_mm"
    with pytest.raises(DesignCheckError):
        custom.design(custom_spec(roles=("exit", "ground", "entry")))
    with pytest.raises(DesignCheckError) as err:
        custom.design(custom_spec(roles=("entry", "tir", "exit")))
    assert "marked exit" in str(err.value)
    mirror = custom.design(custom_spec(material="magnesium fluoride (o)",
                                       roles=("exit", "mirror", "entry")))
    assert mirror.prisms[0].faces[1].coating.type is CoatingType.MIRROR


def test_custom_tir_margin_with_allowances():
    """Calcium fluoride keeps TIR at 45 deg by under 1 deg: a 1 deg angle tolerance loses it."""
    spec = custom_spec(material="calcium fluoride", wavelength_nm=587.5618,
                       band=(587.5618, 587.5618), divergence_mrad=0.0,
                       fabrication=Fabrication(angle_tolerance_arcsec=3600.0))
    with pytest.raises(DesignCheckError) as err:
        custom.design(spec)
    assert "worst case" in str(err.value)
    ok = custom.design(dataclasses.replace(spec, fabrication=Fabrication()))
    assert any("worst-case TIR margin" in w for w in ok.warnings)


def test_custom_spec_errors():
    """Unknown role, wrong role count, clockwise polygon, quadrilateral by angles: SpecError."""
    with pytest.raises(SpecError) as err:
        custom.design(custom_spec(roles=("exit", "tir", "window")))
    assert err.value.path == "design.roles[2]"
    with pytest.raises(SpecError):
        custom.design(custom_spec(roles=("exit", "tir")))
    with pytest.raises(SpecError):
        custom.design(custom_spec(vertices=((0, 0), (0, 10), (10, 0))))
    d = CustomDesign("517642", ("exit",) * 4, (), (90.0, 90.0, 90.0, 90.0), 10.0)
    with pytest.raises(SpecError):
        custom.design(make_spec(d, Family.CUSTOM))


def test_custom_height_too_small():
    """A given height below the out-of-plane clear aperture names design.height_mm."""
    with pytest.raises(DesignCheckError) as err:
        custom.design(custom_spec(height_mm=1.0))
    assert err.value.path == "design.height_mm"


def _custom_grid() -> list[Spec]:
    """Feasible user designs: right-angle folds, retros and 60 deg prisms near minimum deviation."""
    specs = []
    for leg, material, dx in itertools.product((8.0, 12.0, 20.0),
                                               ("517642", "785257", "sapphire (o)"),
                                               (-0.5, 0.0, 0.5)):
        for rot in (-1.0, 0.0, 1.0):
            specs.append(custom_spec(((0, 0), (leg, 0), (0, leg)), ("exit", "tir", "entry"),
                                     material, (-leg / 2 + dx, 5.0), rot))
            h = 2.0 * leg
            specs.append(custom_spec(((0, 0), (h, 0), (h / 2, h / 2)),
                                     ("entry-exit", "tir", "tir"), material, (h / 4 + dx, 5.0),
                                     -90.0 + rot))
    for side, material, n_rot in itertools.product((15.0, 20.0, 30.0),
                                                   ("fused silica", "517642", "785257"),
                                                   (-2.0, 0.0, 2.0)):
        # equilateral prism, base face A, apex at vertex 2; entry face C turned to its
        # minimum-deviation incidence (Hecht, Optics §5.5.1, from memory), beam mid-height on C
        from prismfab import materials
        n = float(materials.get(material).n(632.8))
        phi1 = math.asin(n * math.sin(math.radians(30.0)))
        rot = 30.0 - math.degrees(phi1) + n_rot  # turns face C's normal to phi1 off the beam
        verts = ((0.0, 0.0), (side, 0.0), (side / 2, side * math.sqrt(3) / 2))
        mid = np.array([side / 4, side * math.sqrt(3) / 4])  # middle of face C
        a = math.radians(rot)
        x = math.sin(a) * mid[0] + math.cos(a) * mid[1]
        for dz in (2.0, 6.0):
            specs.append(custom_spec(verts, ("ground", "exit", "entry"), material, (-x, dz), rot))
    return specs


def test_custom_grid_converges_and_retraces():
    """Every one of 216 feasible custom specs solves and its 3D re-trace matches its facts."""
    specs = _custom_grid()
    assert len(specs) >= 200
    for spec in specs:
        system = custom.design(spec)
        assert traced_deviation_deg(system) == pytest.approx(fact(system, "deviation"),
                                                             abs=DEV_TOL_DEG)
