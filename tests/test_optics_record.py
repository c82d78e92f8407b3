"""trace(record="final"): the light result mode gives the final state of the full mode.

No outside reference is involved: the full mode (checked against published relations in
test_optics_trace.py) is the reference here.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from prismfab.model import Coating, CoatingType, Polarization, System
from prismfab.optics import RayBundle, trace
from prismfab.optics import closed_forms as cf
from prismfab.optics.solid import solid_of
from prismfab.optics.testing import prism_chain
from prismfab.optics.trace import EVENT_TIR, STATUS_ABSORBED, STATUS_EXITED, TraceResult

TOL = 1e-12


def _glass(material: str, wavelengths_nm: np.ndarray) -> np.ndarray:
    return 1.5 + 0.004 / (np.asarray(wavelengths_nm, float) * 1e-3) ** 2  # invented test glass


def _coated_pair() -> System:
    """Two-prism pair; the exit face of the first prism carries an antireflection limit."""
    phi, apex, _ = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)
    system = prism_chain(apex_rad=[apex, apex], incidence_rad=[phi, phi], senses=[1, -1],
                         index_of=_glass, diameter_mm=(1.0, 3.0))
    p = system.prisms[0]
    faces = list(p.faces)
    faces[2] = replace(faces[2], coating=Coating(CoatingType.ANTIREFLECTION, reflectance_max_pct=0.5))
    return replace(system, prisms=(replace(p, faces=tuple(faces)), *system.prisms[1:]))


def _mixed(system: System, polarization: Polarization | None, n: int = 2500) -> RayBundle:
    """Misses, clipped rays and skew rays along the beam, plus a fan of skew rays from every
    side of the first prism (some meet its exit face beyond the critical angle), at three
    wavelengths."""
    rng = np.random.default_rng(5)
    half = n // 2
    o = np.column_stack([rng.normal(0, 6, half), rng.normal(0, 4, half), np.zeros(half)])
    d = np.column_stack([rng.normal(0, 0.05, half), rng.normal(0, 0.05, half), np.ones(half)])
    ang = rng.uniform(-1.5, 1.5, n - half)
    fan = np.column_stack([np.sin(ang), rng.normal(0, 0.05, n - half), np.cos(ang)])
    o_fan = _centre(system) + rng.normal(0, 2, (n - half, 3)) - 40.0 * fan
    wl = rng.choice([600.0, 632.8, 700.0], n)
    return RayBundle.create(np.vstack([o, o_fan]), np.vstack([d, fan]), wl, polarization=polarization)


def _centre(system: System) -> np.ndarray:
    """Mean vertex of the first prism, system frame, mm."""
    s = solid_of(system.prisms[0])
    v = np.array([[x, y, s.height_mm / 2] for x, y in s.vertices_mm])
    return (v @ s.rotation.T + s.translation_mm).mean(axis=0)


def _same_final(full: TraceResult, light: TraceResult) -> None:
    assert np.array_equal(full.status, light.status)
    assert np.array_equal(full.n_events, light.n_events)
    for name in ("origins", "directions", "power", "opl_mm"):
        np.testing.assert_allclose(getattr(light, name), getattr(full, name), rtol=0, atol=TOL, err_msg=name)
    if full.fields is None:
        assert light.fields is None
    else:
        np.testing.assert_allclose(light.fields, full.fields, rtol=0, atol=TOL)


@pytest.mark.parametrize("polarization", [Polarization.S, Polarization.P, None])
def test_final_mode_matches_full_mode_on_a_mixed_bundle(polarization: Polarization | None) -> None:
    system = _coated_pair()
    rays = _mixed(system, polarization)
    full = trace(system, rays, index_of=_glass, chunk_size=700)
    light = trace(system, rays, index_of=_glass, chunk_size=700, record="final")
    # the bundle really is mixed: misses, absorption, TIR, several events, skew rays
    assert (full.n_events == 0).sum() > 50 and (full.status == STATUS_ABSORBED).sum() > 50
    assert (full.event_kind == EVENT_TIR).sum() > 20 and (full.n_events >= 4).sum() > 100
    assert np.abs(full.directions[full.exited, 1]).max() > 0.01
    assert 0.0 < full.power[full.exited].min() < full.power[full.exited].max() <= 1.0 + TOL
    _same_final(full, light)
    assert light.record == "final" and light.event_arrays == () and light.event_kind.shape == (rays.n_rays, 0)
    assert light.interactions == full.interactions


def test_final_mode_does_not_depend_on_chunks_or_ghost_reflections() -> None:
    system = _coated_pair()
    rays = _mixed(system, Polarization.UNPOLARIZED, n=1500)
    reflect = np.where(np.arange(rays.n_rays) % 4 == 0, 1, -1)  # forced partial reflections
    full = trace(system, rays, index_of=_glass, chunk_size=4096, reflect_at_event=reflect)
    for chunk in (1, 333, 1500):
        light = trace(system, rays, index_of=_glass, chunk_size=chunk, reflect_at_event=reflect, record="final")
        _same_final(full, light)


def test_final_mode_of_a_missing_bundle_and_bad_record() -> None:
    system = _coated_pair()
    rays = RayBundle.create([0, 0, 0], [1, 0, 0], 632.8)  # along x: misses both prisms
    res = trace(system, rays, index_of=_glass, record="final")
    assert res.status[0] == STATUS_EXITED and res.power[0] == 1.0 and res.n_events[0] == 0
    with pytest.raises(ValueError, match="record"):
        trace(system, rays, index_of=_glass, record="history")
