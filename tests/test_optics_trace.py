"""Tracer, solids and ray bundles: invariants and behaviour (no external check values here)."""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from prismfab import materials
from prismfab.errors import MaterialError
from prismfab.model import Coating, CoatingType, Face, FaceRole, Polarization, Pose, Prism, System
from prismfab.optics import RayBundle, measure, sample_beam, trace
from prismfab.optics import closed_forms as cf
from prismfab.optics.beam import envelope_rays, grid_beam
from prismfab.optics.solid import solid_of
from prismfab.optics.testing import constant_index, prism_chain, prism_from_points
from prismfab.optics.trace import (
    EVENT_ABSORB,
    EVENT_MIRROR,
    STATUS_ABSORBED,
    STATUS_EXITED,
    STATUS_TRAPPED,
)

IDX = constant_index(1.5)


def _pair() -> System:
    phi, apex, _ = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)
    return prism_chain(apex_rad=[apex, apex], incidence_rad=[phi, phi], senses=[1, -1], index_of=IDX,
                       diameter_mm=(1.0, 3.0))


def test_solid_planes_follow_the_pose() -> None:
    """Outward normals are the edges turned clockwise, moved by the pose; vertices lie on their planes."""
    prism = Prism("P", "x", ((0, 0), (10, 0), (0, 5)), tuple(Face(c, FaceRole.ENTRY) for c in "ABC"),
                  4.0, Pose.in_plane(angle_rad=0.7, x_mm=1.0, z_mm=2.0, height_mm=4.0))
    s = solid_of(prism)
    assert s.labels == ("A", "B", "C", "BOTTOM", "TOP")
    assert s.roles[-1] == "end"
    rot = np.asarray(prism.pose.rotation)
    assert s.normals[0] == pytest.approx(rot @ [0, -1, 0], abs=1e-15)
    for i, (x, y) in enumerate(prism.vertices_mm):
        for z in (0.0, 4.0):
            p = np.asarray(prism.pose.apply((x, y, z)))
            assert s.normals[i] @ p == pytest.approx(s.offsets_mm[i], abs=1e-12)
            assert s.contains(p[None])[0]
    assert np.linalg.norm(s.normals, axis=1) == pytest.approx(np.ones(5), abs=1e-15)


def test_solid_rejects_clockwise() -> None:
    """A clockwise section is refused with a message that says how to fix it."""
    prism = Prism("P", "x", ((0, 0), (0, 5), (10, 0)), tuple(Face(c, FaceRole.ENTRY) for c in "ABC"), 4.0)
    with pytest.raises(ValueError, match="counter-clockwise"):
        solid_of(prism)


def test_random_refraction_invariants() -> None:
    """|t| = 1, t in the plane of d and N, n1 |d x N| = n2 |t x N| for random rays (vector Snell)."""
    rng = np.random.default_rng(3)
    d = rng.normal(size=(500, 3))
    d /= np.linalg.norm(d, axis=1, keepdims=True)
    nv = rng.normal(size=(500, 3))
    nv /= np.linalg.norm(nv, axis=1, keepdims=True)
    n1, n2 = rng.uniform(1, 2, 500), rng.uniform(1, 2, 500)
    t, tir = cf.refract(d, nv, n1, n2)
    assert np.abs(np.linalg.norm(t, axis=1) - 1) == pytest.approx(np.zeros(500), abs=1e-12)
    assert np.einsum("ij,ij->i", t, np.cross(d, nv)) == pytest.approx(np.zeros(500), abs=1e-12)
    ok = ~tir
    lhs = n1[ok] * np.linalg.norm(np.cross(d[ok], nv[ok]), axis=1)
    rhs = n2[ok] * np.linalg.norm(np.cross(t[ok], nv[ok]), axis=1)
    assert lhs == pytest.approx(rhs, abs=1e-12)
    assert tir.any() and ok.any()


def test_trace_is_chunk_independent() -> None:
    """Results do not depend on the chunk size."""
    system = _pair()
    rays = sample_beam(system.beam, n_rays=1000, wavelength_nm=632.8, seed=2)
    a = trace(system, rays, index_of=IDX, chunk_size=64)
    b = trace(system, rays, index_of=IDX)
    assert np.array_equal(a.origins, b.origins)
    assert np.array_equal(a.power, b.power)
    assert np.array_equal(a.event_face, b.event_face)


def test_misses_exit_untouched() -> None:
    """A ray that meets nothing exits with no events and full power."""
    res = trace(_pair(), RayBundle.create([100, 0, 0], [0, 0, 1], 600.0), index_of=IDX)
    assert res.status[0] == STATUS_EXITED and res.n_events[0] == 0 and res.power[0] == 1.0


def test_ground_face_and_end_face_absorb() -> None:
    """Rays that reach a ground face or an end face stop there with status ABSORBED."""
    system = _pair()
    s = solid_of(system.prisms[0])
    base = s.roles.index("ground")
    v = [np.asarray(system.prisms[0].pose.apply((x, y, 5.0))) for x, y in system.prisms[0].vertices_mm]
    mid = (v[base] + v[(base + 1) % 3]) / 2
    centroid = sum(v) / 3
    origins = [mid + 5.0 * s.normals[base], centroid + [0.0, 20.0, 0.0]]
    directions = [-s.normals[base], [0.0, -1.0, 0.0]]
    res = trace(system, RayBundle.create(origins, directions, 632.8), index_of=IDX)
    assert res.status.tolist() == [STATUS_ABSORBED, STATUS_ABSORBED]
    assert res.event_kind[:, 0].tolist() == [EVENT_ABSORB, EVENT_ABSORB]
    assert [s.labels[f] for f in res.event_face[:, 0]] == [s.labels[base], "TOP"]
    assert res.origins[1] == pytest.approx(centroid + [0.0, 5.0, 0.0], abs=1e-12)


def test_mirror_and_event_cap() -> None:
    """A mirror-walled box reflects (MIRROR events) until the cap, then reports TRAPPED."""
    pts = [(-5.0, 10.0), (5.0, 10.0), (5.0, 20.0), (-5.0, 20.0)]
    roles = (FaceRole.ENTRY, FaceRole.MIRROR, FaceRole.MIRROR, FaceRole.MIRROR)
    box = prism_from_points("M", pts, roles, height_mm=100.0)
    system = System("test", (box,), _pair().beam)
    res = trace(system, RayBundle.create([0, 0, 0], [0.3, 0, 1], 632.8), index_of=IDX, max_events=3)
    assert res.status[0] == STATUS_TRAPPED
    assert (res.event_kind[0, 1:] == EVENT_MIRROR).all()
    assert res.power[0] < 1.0


def test_polarisation_s_and_p_powers() -> None:
    """P and S input reproduce T_p and T_s of the closed forms; unpolarised is their mean."""
    phi = 60 * math.pi / 180
    system = prism_chain(apex_rad=[40 * math.pi / 180], incidence_rad=[phi], senses=[1], index_of=IDX)
    got = {}
    for pol in (Polarization.P, Polarization.S, Polarization.UNPOLARIZED):
        got[pol] = trace(system, RayBundle.create([0, 0, 0], [0, 0, 1], 632.8, polarization=pol),
                         index_of=IDX).power[0]
    p = cf.prism_path(phi, apex_rad=40 * math.pi / 180, n=1.5)
    _, _, ts1, tp1 = cf.fresnel_powers(phi, 1.0, 1.5)
    _, _, ts2, tp2 = cf.fresnel_powers(p.psi2, 1.5, 1.0)
    assert got[Polarization.P] == pytest.approx(tp1 * tp2, abs=1e-12)
    assert got[Polarization.S] == pytest.approx(ts1 * ts2, abs=1e-12)
    assert got[Polarization.UNPOLARIZED] == pytest.approx((tp1 * tp2 + ts1 * ts2) / 2, abs=1e-12)


def test_rotated_polarisation_basis_for_skew_rays() -> None:
    """Field stays transverse and power matches an independent per-face s/p decomposition."""
    system = _pair()
    rng = np.random.default_rng(5)
    d = np.column_stack([rng.normal(0, 0.05, 50), rng.normal(0, 0.05, 50), np.ones(50)])
    e = np.column_stack([np.ones(50), rng.normal(0, 1, 50), np.zeros(50)])
    rays = RayBundle.create(np.zeros((50, 3)), d, 632.8, polarization=e)
    res = trace(system, rays, index_of=IDX)
    ok = res.exited
    assert ok.sum() > 40
    fields = res.fields[ok]
    assert np.abs(np.einsum("ij,ij->i", fields, res.directions[ok])) == pytest.approx(np.zeros(ok.sum()), abs=1e-12)
    assert np.sum(np.abs(fields) ** 2, axis=1) == pytest.approx(res.power[ok], abs=1e-12)
    # independent reference: 3-vector field, s = unit(N x d), E' = t_s (E.s) s + t_p (E.p) p'
    for i in np.flatnonzero(ok)[:5]:
        field = rays.fields[i].copy()
        dd = rays.directions[i].copy()
        pts = res.event_points[i]
        for k in range(res.n_events[i]):
            s_ = res.solids[res.event_prism[i, k]]
            nv = s_.normals[res.event_face[i, k]]
            inside = k % 2 == 1
            n1, n2 = (1.5, 1.0) if inside else (1.0, 1.5)
            na = -nv if inside else nv
            t, _ = cf.refract(dd, na, n1, n2)
            sv = np.cross(na, dd)
            sv /= np.linalg.norm(sv)
            ci, ct = -dd @ na, -t @ na
            _, _, ts, tp = (np.real(x) for x in cf.fresnel_amplitudes(math.acos(ci), n1, n2))
            f = math.sqrt(n2 * ct / (n1 * ci))
            field = f * (ts * (field @ sv) * sv + tp * (field @ np.cross(sv, dd)) * np.cross(sv, t))
            dd = t
            assert pts[k] is not None
        assert np.abs(field) == pytest.approx(np.abs(res.fields[i]), abs=1e-12)


def test_opl_of_chief_ray() -> None:
    """Optical path = air lengths + n x glass lengths."""
    system = _pair()
    res = trace(system, RayBundle.create([0, 0, 0], [0, 0, 1], 632.8), index_of=IDX)
    pts = np.vstack([[0, 0, 0], res.event_points[0]])
    seg = np.linalg.norm(np.diff(pts, axis=0), axis=1)
    assert res.opl_mm[0] == pytest.approx(seg[0] + 1.5 * seg[1] + seg[2] + 1.5 * seg[3], abs=1e-12)


def test_beam_sampling() -> None:
    """Gaussian sampling: position spread diameter/4, seeded; grid weights sum to 1; envelope at w."""
    beam = _pair().beam
    a = sample_beam(beam, n_rays=20000, wavelength_nm=632.8, seed=4)
    b = sample_beam(beam, n_rays=20000, wavelength_nm=632.8, seed=4)
    assert np.array_equal(a.origins, b.origins)
    assert np.std(a.origins[:, 0]) == pytest.approx(beam.diameter_in_plane_mm / 4, rel=0.03)
    assert np.std(a.origins[:, 1]) == pytest.approx(beam.diameter_out_of_plane_mm / 4, rel=0.03)
    assert grid_beam(beam, wavelength_nm=632.8).weights.sum() == pytest.approx(1.0, abs=1e-12)
    env = envelope_rays(beam, wavelength_nm=632.8)
    assert env.origins[1, 0] == pytest.approx(0.5) and env.origins[3, 1] == pytest.approx(1.5)
    assert not a.origins.flags.writeable


def _messy_rays(polarization: object = Polarization.UNPOLARIZED) -> RayBundle:
    """Rays that miss, clip on ground and end faces, refract and skew, in several wavelengths.

    A third of them run exactly along z and a few more within 1e-9..1e-3 rad of it, so faces
    are met at, near and well off normal incidence in one chunk.
    """
    rng = np.random.default_rng(11)
    n = 3000
    o = np.column_stack([rng.normal(0, 6, n), rng.normal(0, 4, n), np.zeros(n)])
    d = np.column_stack([rng.normal(0, 0.05, n), rng.normal(0, 0.05, n), np.ones(n)])
    d[::3, :2] = 0.0
    d[1::7, :2] *= 10.0 ** rng.uniform(-8, -2, (len(d[1::7]), 1))
    wl = rng.choice([600.0, 632.8, 700.0], n)
    return RayBundle.create(o, d, wl, polarization=polarization)  # type: ignore[arg-type]


@pytest.mark.parametrize("polarization", [Polarization.UNPOLARIZED, Polarization.P, "elliptical"])
def test_prediction_gives_the_full_search_result_bit_for_bit(polarization: object) -> None:
    """Predicted next faces (verified per ray) and the full search give identical traces."""
    system = _pair()
    pol = np.array([1.0, 0.6j, 0.0]) if polarization == "elliptical" else polarization
    rays = _messy_rays(pol)
    reflect = np.where(np.arange(rays.n_rays) % 5 == 0, 1, -1)  # some forced partial reflections
    a = trace(system, rays, index_of=_dispersive, chunk_size=257, reflect_at_event=reflect)
    b = trace(system, rays, index_of=_dispersive, chunk_size=4096, predict=False, reflect_at_event=reflect)
    assert len(set(a.status.tolist())) >= 2 and (a.n_events >= 4).sum() > 100  # a mixed bundle
    for name in ("origins", "directions", "status", "power", "opl_mm", "n_events", "fields"):
        assert np.array_equal(getattr(a, name), getattr(b, name)), name
    for x, y in zip(a.event_arrays, b.event_arrays, strict=True):
        for u, v in zip(x, y, strict=True):
            assert np.array_equal(u, v)


def _dispersive(material: str, wavelengths_nm: np.ndarray) -> np.ndarray:
    return 1.5 + 0.004 / (np.asarray(wavelengths_nm, float) * 1e-3) ** 2  # invented test glass


def _coated(system: System, prism: int, face: int, coating: Coating, role: FaceRole | None = None) -> System:
    p = system.prisms[prism]
    faces = list(p.faces)
    faces[face] = replace(faces[face], coating=coating, role=role or faces[face].role)
    prisms = list(system.prisms)
    prisms[prism] = replace(p, faces=tuple(faces))
    return replace(system, prisms=tuple(prisms))


def test_antireflection_face_transmits_its_reflectance_limit() -> None:
    """An AR-coated refracting face passes 1 - R_max for s and p alike; uncoated faces stay Fresnel."""
    phi = 60 * math.pi / 180
    system = prism_chain(apex_rad=[40 * math.pi / 180], incidence_rad=[phi], senses=[1], index_of=IDX)
    coated = _coated(system, 0, 2, Coating(CoatingType.ANTIREFLECTION, reflectance_max_pct=0.5))
    _, _, ts1, tp1 = cf.fresnel_powers(phi, 1.0, 1.5)
    for pol, t_entry in ((Polarization.P, tp1), (Polarization.S, ts1)):
        res = trace(coated, RayBundle.create([0, 0, 0], [0, 0, 1], 632.8, polarization=pol), index_of=IDX)
        assert res.status[0] == STATUS_EXITED
        assert res.power[0] == pytest.approx(t_entry * 0.995, abs=1e-12)
    # a face coated without a stated limit is traced uncoated
    bare = _coated(system, 0, 2, Coating(CoatingType.ANTIREFLECTION))
    ref = trace(system, RayBundle.create([0, 0, 0], [0, 0, 1], 632.8), index_of=IDX).power[0]
    assert trace(bare, RayBundle.create([0, 0, 0], [0, 0, 1], 632.8), index_of=IDX).power[0] == ref


def test_mirror_coating_reflects_its_floor() -> None:
    """A mirror face reflects reflectance_min_pct and absorbs the rest; without a floor it is ideal."""
    pts = [(-5.0, 10.0), (5.0, 10.0), (5.0, 20.0), (-5.0, 20.0)]
    roles = (FaceRole.ENTRY, FaceRole.MIRROR, FaceRole.MIRROR, FaceRole.MIRROR)
    box = prism_from_points("M", pts, roles, height_mm=100.0)
    system = System("test", (box,), _pair().beam)
    ray = RayBundle.create([0, 0, 0], [0.3, 0, 1], 632.8)
    ideal = trace(system, ray, index_of=IDX, max_events=3)
    mirror = Coating(CoatingType.MIRROR, reflectance_min_pct=96.0)
    coated = System("test", (replace(box, faces=tuple(
        replace(f, coating=mirror) if f.role is FaceRole.MIRROR else f for f in box.faces)),), system.beam)
    res = trace(coated, ray, index_of=IDX, max_events=3)
    assert (res.event_kind[0, 1:] == EVENT_MIRROR).all()
    assert res.power[0] == pytest.approx(ideal.power[0] * 0.96**2, abs=1e-12)


def test_user_catalogue_material_is_traced(tmp_path: Path) -> None:
    """A material defined only in the system's user catalogue file is found by the tracer."""
    cat = tmp_path / "melts.yaml"
    cat.write_text(
        "format: 1\nmaterials:\n  test melt q:\n    type: test crown\n    formula: sellmeier-c\n"
        "    coefficients:\n      B: [1.03961212, 0.231792344, 1.01046945]\n"
        "      C_um2: [0.00600069867, 0.0200179144, 103.560653]\n    range_um: [0.4, 2.0]\n"
        "    temperature_c: 20\n    source: \"test melt sheet\"\n")
    base = _pair()
    prisms = tuple(replace(p, material="test melt q") for p in base.prisms)
    system = replace(base, prisms=prisms, materials_file=str(cat))
    ray = RayBundle.create([0, 0, 0], [0, 0, 1], 632.8)
    res = trace(system, ray)
    n = materials.get("test melt q", catalogue_file=cat).n
    expected = trace(system, ray, index_of=lambda m, w: n(w))
    assert res.status[0] == STATUS_EXITED
    assert np.array_equal(res.directions, expected.directions)
    assert measure(system).design.transmission == pytest.approx(float(res.power[0]), abs=1e-15)
    with pytest.raises(MaterialError):
        trace(replace(system, materials_file=""), ray)
