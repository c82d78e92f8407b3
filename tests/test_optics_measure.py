"""measure(): Performance of hand-built systems, ghosts, footprints and the bench protocol."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from prismfab.model import Beam, Coating, CoatingType, FaceRole, Performance, Polarization, System
from prismfab.optics import measure
from prismfab.optics import closed_forms as cf
from prismfab.optics.testing import constant_index, prism_chain, prism_from_points
from prismfab.optics.trace import EVENT_PARTIAL, RayBundle, trace

IDX = constant_index(1.5)
ROOT = Path(__file__).resolve().parents[1]


def _pair(**kw: object) -> System:
    phi, apex, _ = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)
    return prism_chain(apex_rad=[apex, apex], incidence_rad=[phi, phi], senses=[1, -1], index_of=IDX,
                       diameter_mm=(1.0, 3.0), **kw)  # type: ignore[arg-type]


def test_measure_shape_and_design_first() -> None:
    """One result per beam wavelength, design first; chief path from lead-in to lead-out."""
    perf = measure(_pair(band_nm=(620.0, 640.0)), index_of=IDX)
    assert isinstance(perf, Performance)
    assert [r.wavelength_nm for r in perf.results] == [632.8, 620.0, 640.0]
    assert perf.design.magnification_out_of_plane == pytest.approx(1.0, abs=1e-12)
    assert len(perf.chief_ray_mm) == 6  # lead-in, 4 hits, lead-out
    assert perf.chief_ray_mm[0][2] < perf.chief_ray_mm[1][2]
    assert [k[:2] for k in perf.design.aoi_deg] == [("P1", "A"), ("P1", "C"), ("P2", "C"), ("P2", "A")]


def test_footprint_independent_of_pose_angle() -> None:
    """Footprints are in face coordinates: the same solid at another pose angle gives the same numbers."""
    a = _pair()
    prisms = []
    for p in a.prisms:
        from prismfab.optics.solid import solid_of
        from prismfab.optics.testing import prism_from_points
        s = solid_of(p)
        pts = [tuple(s.rotation @ [x, y, 0] + s.translation_mm)[::2] for x, y in p.vertices_mm]
        prisms.append(prism_from_points(p.name, pts, [f.role for f in p.faces], angle_rad=-1.1))
    b = System("test", tuple(prisms), a.beam)
    fa = measure(a, index_of=IDX).design.footprint_mm
    fb = measure(b, index_of=IDX).design.footprint_mm
    for x, y in zip(fa, fb, strict=True):
        assert x[:2] == y[:2]
        assert x[3] == pytest.approx(y[3], abs=1e-9) and x[5] == pytest.approx(y[5], abs=1e-9)
        assert x[4] == pytest.approx(5.0, abs=1e-9)  # beam plane is mid-height


def test_footprint_centre_matches_hit_point() -> None:
    """Footprint centre along the face = distance of the chief hit from the face's start vertex."""
    system = _pair()
    perf = measure(system, index_of=IDX)
    p1 = system.prisms[0]
    pts = np.asarray(perf.chief_ray_mm)
    hit = np.asarray(p1.pose.rotation).T @ (pts[1] - np.asarray(p1.pose.translation_mm))
    v0 = np.asarray(p1.vertices_mm[0])
    centre = perf.design.footprint_mm[0][2]
    assert centre == pytest.approx(float(np.linalg.norm(hit[:2] - v0)), abs=1e-9)
    assert centre == pytest.approx(p1.face_length_mm(0) / 2, abs=1e-9)  # the builder hits mid-face


def test_normal_faces_send_ghosts_to_source() -> None:
    """Normal-incidence faces return a ghost into the laser; steep faces do not."""
    perf = measure(_pair(), index_of=IDX, back_reflection_mrad=2.0)
    by_face = {(g.prism, g.face): g for g in perf.ghosts if g.order == 1}
    assert by_face[("P1", "C")].destination == "source" and by_face[("P1", "C")].warning
    assert by_face[("P1", "A")].destination != "source"
    assert by_face[("P1", "A")].power_fraction == pytest.approx(
        cf.fresnel_powers(cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)[0], 1.0, 1.5)[1],
        abs=1e-12)
    assert any("IEC 60825-1" in w for w in perf.warnings)


def _plate(n_glass: float) -> tuple[System, object]:
    """A plane-parallel plate 10 mm thick, beam along +z at normal incidence."""
    plate = prism_from_points("W1", [(-5.0, 10.0), (5.0, 10.0), (5.0, 20.0), (-5.0, 20.0)],
                              [FaceRole.ENTRY, FaceRole.GROUND, FaceRole.EXIT, FaceRole.GROUND])
    beam = Beam(wavelength_nm=632.8, band_nm=(632.8, 632.8), diameter_in_plane_mm=1.0,
                diameter_out_of_plane_mm=1.0, polarization=Polarization.P)
    return System("plate", (plate,), beam), constant_index(n_glass)


def test_second_order_ghost_of_a_plate_is_the_next_term_of_the_plate_series() -> None:
    """Plate at normal incidence: ghosts A and C go back to the source, C-then-A goes forward.

    R0 = ((n - 1)/(n + 1))^2 (Smith, Modern Optical Engineering, Eq. 11.2). The transmitted
    beams of a plate carry (1 - R0)^2, (1 - R0)^2 R0^2, ...; their incoherent sum is
    (1 - R0)^2 / (1 - R0^2) = 2n/(n^2 + 1) = 0.923077 for n = 1.5 (shared reference optics.md,
    section 2, plate line [C]).
    """
    system, index_of = _plate(1.5)
    perf = measure(system, index_of=index_of, back_reflection_mrad=2.0)
    r0 = ((1.5 - 1.0) / (1.5 + 1.0)) ** 2
    role = {f.role: f.label for f in system.prisms[0].faces}
    entry, exit_ = f"W1 {role[FaceRole.ENTRY]}", f"W1 {role[FaceRole.EXIT]}"
    by_path = {g.path: g for g in perf.ghosts}
    assert set(by_path) == {entry, exit_, f"{exit_}, then {entry}"}
    assert by_path[entry].power_fraction == pytest.approx(r0, abs=1e-12)
    assert by_path[exit_].power_fraction == pytest.approx((1 - r0) ** 2 * r0, abs=1e-12)
    assert by_path[entry].warning and by_path[exit_].warning
    second = by_path[f"{exit_}, then {entry}"]
    assert second.order == 2 and second.destination == "forward" and not second.warning
    assert second.power_fraction == pytest.approx((1 - r0) ** 2 * r0 ** 2, abs=1e-13)
    assert np.allclose(second.direction, (0.0, 0.0, 1.0), atol=1e-12)
    main = perf.design.transmission
    # the main beam and the second-order ghost are the first two terms of 2n/(n^2 + 1)
    assert main + second.power_fraction == pytest.approx(2 * 1.5 / (1.5 ** 2 + 1), abs=(1 - r0) ** 2 * r0 ** 4 * 1.01)
    assert any("and then" not in w and "IEC 60825-1" in w for w in perf.warnings)


def test_two_forced_reflections_per_ray_and_bad_shapes() -> None:
    """An (N, 2) reflect_at_event reflects twice; a row count that does not match is refused."""
    system, index_of = _plate(1.5)
    rays = RayBundle.create(np.zeros((2, 3)), (0.0, 0.0, 1.0), 632.8)
    res = trace(system, rays, index_of=index_of, reflect_at_event=np.array([[1, 2], [1, -1]]))
    assert res.event_kind[0, 1] == EVENT_PARTIAL and res.event_kind[0, 2] == EVENT_PARTIAL
    assert res.directions[0, 2] == pytest.approx(1.0) and res.directions[1, 2] == pytest.approx(-1.0)
    with pytest.raises(ValueError, match="rows"):
        trace(system, rays, index_of=index_of, reflect_at_event=np.array([[1, 2]]))


def test_clipping_is_warned() -> None:
    """A beam wider than the faces is reported as clipped."""
    perf = measure(_pair().__class__("test", _pair().prisms, _wide_beam()), index_of=IDX)
    assert any("clipped" in w for w in perf.warnings)


def _wide_beam():  # type: ignore[no-untyped-def]
    from dataclasses import replace
    return replace(_pair().beam, diameter_in_plane_mm=30.0)


def test_bench_runner_protocol(tmp_path: Path) -> None:
    """bench/run.py discovers bench_*.py modules, prints a table and writes JSON."""
    bench = tmp_path / "bench"
    bench.mkdir()
    (bench / "run.py").write_text((ROOT / "bench" / "run.py").read_text())
    (bench / "bench_dummy.py").write_text(
        "def run():\n    return [{'name': 'x', 'value': 2.0, 'unit': 's', 'floor': 1.0, 'ratio': 2.0}]\n")
    out = tmp_path / "b.json"
    proc = subprocess.run([sys.executable, str(bench / "run.py"), "dummy", "--json", str(out)],
                          capture_output=True, text=True, check=True)
    assert "x" in proc.stdout and "ratio" in proc.stdout
    assert json.loads(out.read_text())["benchmarks"][0]["value"] == 2.0
    bad = subprocess.run([sys.executable, str(bench / "run.py"), "nothere"], capture_output=True, text=True)
    assert bad.returncode == 2


def test_antireflection_faces_in_transmission_and_ghosts() -> None:
    """AR-coated normal faces: transmission and ghost power use the coating's reflectance limit."""
    r_max = 0.25  # percent
    base = _pair()
    ar = Coating(CoatingType.ANTIREFLECTION, reflectance_max_pct=r_max)
    exits = {"P1": "C", "P2": "A"}  # the normal-incidence exit faces (see the AOI order above)
    prisms = tuple(replace(p, faces=tuple(replace(f, coating=ar) if f.label == exits[p.name] else f
                                          for f in p.faces)) for p in base.prisms)
    perf = measure(replace(base, prisms=prisms), index_of=IDX)
    phi = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)[0]
    t_a = cf.fresnel_powers(phi, 1.0, 1.5)[3]  # p transmission of the steep faces (uncoated)
    r = r_max / 100.0
    assert perf.design.transmission == pytest.approx(t_a**2 * (1.0 - r) ** 2, abs=1e-12)
    ghost = {(g.prism, g.face): g for g in perf.ghosts if g.order == 1}[("P1", "C")]
    # back through P1 face A the ray meets the same angles: the same T_p (Fresnel reciprocity)
    assert ghost.power_fraction == pytest.approx(t_a * r * t_a, abs=1e-12)
    assert ghost.destination == "source"
    uncoated = {(g.prism, g.face): g for g in measure(base, index_of=IDX).ghosts if g.order == 1}[("P1", "C")]
    assert np.allclose(ghost.direction, uncoated.direction, atol=1e-12)
