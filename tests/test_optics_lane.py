"""The compiled lane of the tracer gives the numpy lane's results bit for bit.

No outside reference is involved: the numpy lane (checked against published relations in
test_optics_trace.py and tests/reference) is the reference here. Every case is traced with the
compiled lane on and off; the lane must be used where it applies (counted), and every result
array, event record included, must be identical.
"""

from __future__ import annotations

import math
import os
import shutil
import sys
import sysconfig
from collections.abc import Iterator

import numpy as np
import pytest

from prismfab.model import Polarization, System
from prismfab.optics import _lane
from prismfab.optics import closed_forms as cf
from prismfab.optics.testing import constant_index, prism_chain
from prismfab.optics.trace import EVENT_TIR, RayBundle, TraceResult, trace

sys.path.insert(0, os.path.dirname(__file__))
from test_optics_record import _coated_pair, _glass, _mixed  # noqa: E402

NAMES = ("origins", "directions", "status", "power", "opl_mm", "n_events", "fields")


def _compiler() -> bool:
    cc = (sysconfig.get_config_var("CC") or "cc").split()[0]
    return shutil.which(cc) is not None or shutil.which("gcc") is not None


@pytest.mark.skipif(bool(os.environ.get("PRISMFAB_NUMPY_ONLY")), reason="numpy lane asked for")
def test_the_lane_is_built_where_a_compiler_is() -> None:
    if not _compiler():
        pytest.skip("no C compiler: the tracer runs its numpy lane")
    assert _lane.available(), "the compiled lane was not built: reinstall with `pip install -e .`"


def test_a_library_of_another_version_is_not_used(tmp_path: object, monkeypatch: pytest.MonkeyPatch) -> None:
    """A stale build (another LANE_VERSION) is refused: the tracer then runs numpy only."""
    if not _lane.available():
        pytest.skip("compiled lane not built")
    monkeypatch.setattr(_lane, "VERSION", _lane.VERSION + 1)
    assert _lane._load() is None
    monkeypatch.setattr(_lane, "VERSION", _lane.VERSION - 1)
    assert _lane._load() is not None


@pytest.fixture
def calls(monkeypatch: pytest.MonkeyPatch) -> Iterator[dict[str, int]]:
    """Counts of compiled-lane calls (refract events and flagged rays)."""
    count = {"refract": 0, "flagged": 0}
    refract = _lane.refract

    def counting(*args: object, **kw: object) -> int:
        flagged = refract(*args, **kw)  # type: ignore[arg-type]
        count["refract"] += 1
        count["flagged"] += flagged
        return flagged

    monkeypatch.setattr(_lane, "refract", counting)
    yield count


def _both(system: System, rays: RayBundle, index_of: object, monkeypatch: pytest.MonkeyPatch,
          calls: dict[str, int], **kw: object) -> tuple[TraceResult, TraceResult]:
    """The same trace with the compiled lane on and off (``calls`` counts the first only)."""
    calls.update(refract=0, flagged=0)
    monkeypatch.setattr(_lane, "enabled", True)
    fast = trace(system, rays, index_of=index_of, **kw)  # type: ignore[arg-type]
    monkeypatch.setattr(_lane, "enabled", False)
    slow = trace(system, rays, index_of=index_of, **kw)  # type: ignore[arg-type]
    monkeypatch.setattr(_lane, "enabled", True)
    return fast, slow


def _identical(a: TraceResult, b: TraceResult) -> None:
    for name in NAMES:
        x, y = getattr(a, name), getattr(b, name)
        assert (x is None and y is None) or np.array_equal(x, y), name
    assert len(a.event_arrays) == len(b.event_arrays)
    for k, (x, y) in enumerate(zip(a.event_arrays, b.event_arrays, strict=True)):
        for j, (u, v) in enumerate(zip(x, y, strict=True)):
            assert np.array_equal(u, v), (k, j)


def _normal_exit_pair() -> System:
    phi, apex, _ = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)
    return prism_chain(apex_rad=[apex, apex], incidence_rad=[phi, phi], senses=[1, -1],
                       index_of=constant_index(1.5), diameter_mm=(1.0, 3.0))


def _beam_rays(wavelength_nm: float, polarization: object, n: int = 3000) -> RayBundle:
    """A Gaussian-like bundle along +z, some rays skew by up to a few mrad."""
    rng = np.random.default_rng(17)
    o = np.column_stack([rng.normal(0, 0.4, n), rng.normal(0, 1.0, n), np.zeros(n)])
    d = np.column_stack([rng.normal(0, 2e-3, n), rng.normal(0, 2e-3, n), np.ones(n)])
    d[::4, :2] = 0.0  # a quarter exactly along the axis
    return RayBundle.create(o, d, wavelength_nm, polarization=polarization)  # type: ignore[arg-type]


@pytest.mark.skipif(not _lane.available(), reason="compiled lane not built")
@pytest.mark.parametrize("polarization", [Polarization.P, Polarization.S, Polarization.UNPOLARIZED,
                                          np.array([1.0, 0.5j, 0.0]), np.array([1.0, -0.0j, 0.0])])
@pytest.mark.parametrize("record", ["full", "final"])
@pytest.mark.parametrize("index", [1.5, 1.5004])  # exactly normal exit, and a little off it
def test_normal_exit_pair_in_both_lanes(polarization: object, record: str, index: float,
                                        calls: dict[str, int], monkeypatch: pytest.MonkeyPatch) -> None:
    system = _normal_exit_pair()
    rays = _beam_rays(632.8, polarization)
    fast, slow = _both(system, rays, constant_index(index), monkeypatch, calls, record=record, chunk_size=700)
    _identical(fast, slow)
    real = not (isinstance(polarization, np.ndarray) and polarization[1] != 0)
    assert calls["refract"] > 0 if real else calls["refract"] == 0  # complex fields stay in numpy
    assert fast.exited.all() and fast.n_events.min() == 4


@pytest.mark.skipif(not _lane.available(), reason="compiled lane not built")
@pytest.mark.parametrize("polarization", [Polarization.P, Polarization.UNPOLARIZED])
def test_mixed_bundle_with_coatings_misses_and_total_reflection(
        polarization: Polarization, calls: dict[str, int], monkeypatch: pytest.MonkeyPatch) -> None:
    """Misses, ground and end faces, total internal reflection and an antireflection-coated face:
    the flagged rays go through the numpy lane and everything still agrees."""
    system = _coated_pair()
    mixed = _mixed(system, polarization, n=3000)
    rays = RayBundle.create(mixed.origins, mixed.directions, 632.8, polarization=polarization)
    fast, slow = _both(system, rays, _glass, monkeypatch, calls, chunk_size=500)
    _identical(fast, slow)
    assert calls["refract"] > 0 and calls["flagged"] > 100
    assert (fast.event_kind == EVENT_TIR).sum() > 10 and (fast.n_events == 0).sum() > 50


@pytest.mark.skipif(not _lane.available(), reason="compiled lane not built")
def test_forced_reflections_leave_the_lane_for_that_event(
        calls: dict[str, int], monkeypatch: pytest.MonkeyPatch) -> None:
    system = _normal_exit_pair()
    rays = _beam_rays(632.8, Polarization.P, n=1000)
    reflect = np.where(np.arange(rays.n_rays) % 3 == 0, 2, -1)
    fast, slow = _both(system, rays, constant_index(1.5), monkeypatch, calls, reflect_at_event=reflect,
                       chunk_size=300)
    _identical(fast, slow)
    assert calls["refract"] > 0


def test_antireflection_limit_reaches_the_lane_as_a_fixed_amplitude() -> None:
    """The coated face passes 1 - R_max for both polarisations where the uncoated face passes its
    Fresnel transmission T_p at the traced incidence (Smith, Modern Optical Engineering, Eq. 11.1)."""
    coated = _coated_pair()
    phi, apex, _ = cf.normal_exit_prism(magnification=math.sqrt(3.0), n=1.5)
    bare = prism_chain(apex_rad=[apex, apex], incidence_rad=[phi, phi], senses=[1, -1], index_of=_glass,
                       diameter_mm=(1.0, 3.0))
    rays = RayBundle.create(np.zeros((2, 3)), (0.0, 0.0, 1.0), 632.8, polarization=Polarization.P)
    n = float(_glass("", np.array([632.8]))[0])
    res = trace(bare, rays, index_of=_glass)
    assert res.event_face[0, 1] == 2  # the coated face is the second one met
    t_p = float(cf.fresnel_powers(res.event_aoi_rad[0, 1], n, 1.0)[3])
    ratio = trace(coated, rays, index_of=_glass).power / res.power
    assert np.allclose(ratio, (1 - 0.005) / t_p, rtol=1e-12, atol=0)
