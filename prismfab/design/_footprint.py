"""Traced beam footprints: the sized-over conditions, their trace, and the clear aperture.

A design is sized over every condition of ``beam_groups`` (band wavelengths x tuning states x
alignment cases), each a chief ray and two 1/e^2 edge rays. ``trace_groups`` traces them
through ``Placed`` sections, ``footprints`` reads where the edge rays meet one face, and
``clear_aperture`` is the union of those footprints scaled by the spec's margin.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np

from prismfab.design._trace2d import (
    Hit,
    PlanePath,
    Section,
    resume_plane,
    section_edges,
    trace_plane_edges,
)
from prismfab.model import FaceRole
from prismfab.spec.types import Spec

__all__ = ["Placed", "RayGroup", "beam_groups", "clear_aperture", "footprints", "trace_groups"]


def clear_aperture(footprints: Sequence[tuple[float, float]], margin: float) -> tuple[float, float]:
    """Union of the footprints, each scaled about its centre by ``margin``; (low, high) in mm."""
    lo = min(0.5 * (a + b) - margin * 0.5 * (b - a) for a, b in footprints)
    hi = max(0.5 * (a + b) + margin * 0.5 * (b - a) for a, b in footprints)
    return lo, hi



@dataclass(frozen=True, slots=True)
class RayGroup:
    """Three rays of one traced condition: chief ray first, then the two 1/e^2 edge rays.

    Args:
        state: tuning state index (0 = nominal).
        wavelength_nm: wavelength.
        case: alignment case: "nominal", "decenter+", "decenter-", "tilt+", "tilt-".
        rays: (start point in plane coordinates, direction rad) per ray.
    """

    state: int
    wavelength_nm: float
    case: str
    rays: tuple[tuple[np.ndarray, float], ...]


def beam_groups(spec: Spec, *, start_z_mm: float, states: int = 1,
                pivot_z_mm: float | None = None) -> tuple[RayGroup, ...]:
    """The conditions a design is sized over: band x tuning states x alignment cases.

    The input chief ray is the system z axis. Edge rays sit at +/- the in-plane 1/e^2 radius
    and lean outwards by half the full in-plane divergence; tilted cases lean by the alignment
    tilt.

    Args:
        spec: the spec (beam, band, alignment allowance).
        start_z_mm: z where the rays start (upstream of every prism).
        states: number of tuning states.
        pivot_z_mm: z of the plane where the beam has its stated diameter and about which the
            divergence and the alignment tilt lean the rays (the first entry face). None: the
            start plane itself. Leaning about a plane far upstream would turn an angular
            allowance into a decentre of ``tilt x distance`` at the prism.
    """
    b = spec.beam
    half = b.diameter_in_plane_mm / 2.0
    div = b.divergence_in_plane_mrad * 1e-3 / 2.0
    dec, tilt = b.alignment.decenter_mm, b.alignment.tilt_mrad * 1e-3
    cases = {"nominal": (0.0, 0.0), "decenter+": (dec, 0.0), "decenter-": (-dec, 0.0),
             "tilt+": (0.0, tilt), "tilt-": (0.0, -tilt)}
    wls = [b.wavelength_nm] + [w for w in b.band_nm if abs(w - b.wavelength_nm) > 1e-9]
    wls = list(dict.fromkeys(wls))
    out = []
    for state in range(states):
        for wl in wls:
            for case, (dx, dt) in cases.items():
                if case != "nominal" and dx == 0.0 and dt == 0.0:
                    continue
                lever = 0.0 if pivot_z_mm is None else pivot_z_mm - start_z_mm
                rays = [(np.array([start_z_mm, x0 - lever * math.tan(a)]), a)
                        for x0, a in ((dx, dt), (dx - half, dt - div), (dx + half, dt + div))]
                out.append(RayGroup(state, wl, case, tuple(rays)))
    return tuple(out)


@dataclass(frozen=True, slots=True)
class Placed:
    """A prism section at its nominal place, with how it moves over the tuning states.

    Args:
        vertices: (n, 2) CCW section in plane coordinates, nominal state.
        roles: role per face.
        index: n(wavelength_nm).
        pivot: rotation centre for tuning, plane coordinates.
        rotations_rad: rotation per tuning state (state 0 = 0).
    """

    vertices: np.ndarray
    roles: tuple[FaceRole, ...]
    index: Callable[[float], float]
    pivot: np.ndarray = field(default_factory=lambda: np.zeros(2))
    rotations_rad: tuple[float, ...] = (0.0,)

    def vertices_at(self, state: int) -> np.ndarray:
        """The section vertices in tuning state ``state``."""
        a = self.rotations_rad[state] if state < len(self.rotations_rad) else 0.0
        v = self.vertices
        if a:
            c, s = math.cos(a), math.sin(a)
            rot = np.array([[c, -s], [s, c]])
            v = (v - self.pivot) @ rot.T + self.pivot
        return v

    def section(self, state: int, wavelength_nm: float) -> Section:
        """The section in tuning state ``state`` at a wavelength."""
        return Section(self.vertices_at(state), self.roles, self.index(wavelength_nm))


def trace_groups(placed: Sequence[Placed], groups: Sequence[RayGroup], *, sequential: bool = False
                 ) -> list[tuple[RayGroup, tuple]]:
    """Trace every ray of every group through the placed prisms; (group, paths) pairs.

    ``sequential`` meets the prisms in list order (see ``_trace2d.trace_plane``).
    """
    out = []
    cache: dict[tuple[int, float], tuple[list[Section], list]] = {}
    edges: dict[int, list] = {}  # edge data per tuning state (the index does not change it)
    for g in groups:
        key = (g.state, g.wavelength_nm)
        if key not in cache:
            secs_ = [p.section(g.state, g.wavelength_nm) for p in placed]
            if g.state not in edges:
                edges[g.state] = section_edges(secs_)
            cache[key] = (secs_, edges[g.state])
        secs, geo = cache[key]
        if sequential and len(secs) > 1:
            out.append((g, tuple(_sequential_trace(secs, geo, start, th) for start, th in g.rays)))
        else:
            out.append((g, tuple(trace_plane_edges(secs, geo, start, th, sequential=sequential)
                                  for start, th in g.rays)))
    return out


_PREFIXES: dict[tuple, PlanePath] = {}
"""Traces through a first section alone, by (section, ray): sizing the second prism of a pair
traces the same rays through the same, already sized first prism many times over."""
_PREFIXES_MAX = 4096


def _sequential_trace(secs: list[Section], geo: list, start: np.ndarray, theta_rad: float
                      ) -> PlanePath:
    """A sequential trace through ``secs``, the part through ``secs[0]`` looked up when known."""
    first = secs[0]
    key = (first.vertices.tobytes(), first.roles, first.index, float(start[0]), float(start[1]),
           theta_rad)
    prefix = _PREFIXES.get(key)
    if prefix is None:
        if len(_PREFIXES) >= _PREFIXES_MAX:
            _PREFIXES.clear()
        prefix = trace_plane_edges(secs[:1], geo[:1], start, theta_rad, sequential=True)
        _PREFIXES[key] = prefix
    return resume_plane(secs, geo, prefix)


def footprints(traced: Sequence[tuple[RayGroup, tuple]], section: int, face: int,
               coord: Callable[[Hit], float]) -> list[tuple[float, float]]:
    """Per condition, (low, high) of the edge-ray hits on one face, in the coordinate ``coord``.

    A condition whose edge rays do not both meet the face is skipped; the chief ray must.
    A face the beam crosses more than once (ENTRY_EXIT, e.g. a retro prism's hypotenuse) gives
    one footprint per pass, so the margin scales each beam, not the gap between them.
    """
    out = []
    for _g, paths in traced:
        passes: dict[int, list[float]] = {}
        for path in paths[1:]:
            hs = [coord(h) for h in path.hits if h.section == section and h.face == face]
            for j, v in enumerate(hs):
                passes.setdefault(j, []).append(v)
        for _j, pos in sorted(passes.items()):
            if len(pos) >= 2:
                out.append((min(pos), max(pos)))
    return out


def _reached(traced: Sequence[tuple[RayGroup, tuple]], section: int, face: int) -> bool:
    """True when every ray of every condition meets the face at least once."""
    return all(any(h.section == section and h.face == face for h in path.hits)
               for _g, paths in traced for path in paths)

