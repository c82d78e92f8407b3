"""Ghosts: the partial reflections of the chief ray at the refracting faces it crosses.

First order: one partial reflection at every refracting face of the chief ray's path. Second
order: a first-order ghost partially reflected once more at a refracting face on its own path
(the double reflections that travel on near the output beam, or back to the source).

Each ghost is traced exactly: the chief ray is followed to the face, reflected there with the
Fresnel amplitude for its polarisation (uncoated face) or with the square root of the coating's
stated reflectance limit (antireflection-coated face: the ghost starts with that limit, an upper
bound), and traced onward (refraction, total internal reflection, absorption) like any other ray.
Where it ends decides its destination:

* "source": it leaves the system within ``back_reflection_mrad`` of the reversed input beam and
  its axis crosses the source plane within one input-beam diameter (the larger 1/e² diameter) of
  the input axis, so the two beams overlap there: back into the laser (a warning: feedback, mode
  hops, and a stray-light hazard);
* "backward": within that angle, but clear of the source (a retroreflector's returns, displaced
  like its output beam);
* "forward": it leaves within 90 degrees of the input direction;
* "sideways": it leaves in any other direction, or through a TIR face that fails;
* "trapped": it is absorbed on a ground or end face, or still bouncing after the event cap.
"""

from __future__ import annotations

import math

import numpy as np

from prismfab.model import Ghost, System
from prismfab.optics.beam import beam_frame
from prismfab.optics.trace import (
    EVENT_PARTIAL,
    EVENT_REFRACT,
    STATUS_EXITED,
    STATUS_LEAKED,
    IndexFunction,
    RayBundle,
    TraceResult,
    trace,
)

__all__ = ["ghost_warning", "ghosts"]


def ghosts(
    system: System, chief: TraceResult, ray: int, *, wavelength_nm: float,
    back_reflection_mrad: float, index_of: IndexFunction, max_events: int = 16, order: int = 2,
) -> tuple[Ghost, ...]:
    """First-order ghosts of ray ``ray`` of ``chief``, then (``order`` 2) the second-order ones.

    Args:
        system: the traced system.
        chief: a trace containing the chief ray.
        ray: index of the chief ray in ``chief``.
        wavelength_nm: its wavelength.
        back_reflection_mrad: angle to the reversed input beam below which a ghost counts as
            returning to the source.
        index_of: the index function used for ``chief``.
        max_events: event cap of the ghost traces.
        order: 1 or 2.
    """
    kinds = chief.event_kind[ray]
    events = [k for k in range(int(chief.n_events[ray])) if kinds[k] == EVENT_REFRACT]
    if not events:
        return ()
    first = _trace_ghosts(system, [(k,) for k in events], wavelength_nm, index_of, max_events)
    out = _ghosts_of(first, [(k,) for k in events], wavelength_nm, back_reflection_mrad, system)
    if order < 2:
        return out
    pairs = [(k1, k2) for j, k1 in enumerate(events)
             for k2 in range(k1 + 1, int(first.n_events[j])) if first.event_kind[j, k2] == EVENT_REFRACT]
    if not pairs:
        return out
    second = _trace_ghosts(system, pairs, wavelength_nm, index_of, max_events)
    return out + _ghosts_of(second, pairs, wavelength_nm, back_reflection_mrad, system)


def _trace_ghosts(system: System, reflect: list[tuple[int, ...]], wavelength_nm: float,
                  index_of: IndexFunction, max_events: int) -> TraceResult:
    """The chief ray once per entry of ``reflect``, partially reflected at those events."""
    beam = system.beam
    _, _, ez = beam_frame(beam)
    start = np.asarray(beam.origin_mm, float)
    bundle = RayBundle.create(np.broadcast_to(start, (len(reflect), 3)), ez, wavelength_nm,
                              polarization=beam.polarization)
    return trace(system, bundle, max_events=max_events, index_of=index_of, reflect_at_event=np.array(reflect))


def _ghosts_of(res: TraceResult, reflect: list[tuple[int, ...]], wavelength_nm: float,
               back_reflection_mrad: float, system: System) -> tuple[Ghost, ...]:
    """One ghost per traced row whose forced reflections all took place."""
    beam = system.beam
    _, _, ez = beam_frame(beam)
    source = np.asarray(beam.origin_mm, float)
    reach_mm = max(beam.diameter_in_plane_mm, beam.diameter_out_of_plane_mm)
    kinds, prisms, faces = res.event_kind, res.event_prism, res.event_face
    out = []
    for j, events in enumerate(reflect):
        if any(k >= kinds.shape[1] or kinds[j, k] != EVENT_PARTIAL for k in events):
            continue  # the ghost took another path (it missed a face or reflected totally first)
        d = res.directions[j]
        angle = math.atan2(float(np.linalg.norm(np.cross(d, ez))), float(-d @ ez)) * 1e3
        dest = _destination(int(res.status[j]), angle, float(d @ ez), back_reflection_mrad)
        if dest == "source" and _offset_at_source(res.origins[j], d, source, ez) > reach_mm:
            dest = "backward"
        where = [(res.solids[int(prisms[j, k])].name, res.solids[int(prisms[j, k])].labels[int(faces[j, k])])
                 for k in events]
        second = where[1] if len(where) > 1 else ("", "")
        out.append(Ghost(
            prism=where[0][0], face=where[0][1], wavelength_nm=wavelength_nm,
            power_fraction=float(res.power[j]), direction=(float(d[0]), float(d[1]), float(d[2])),
            angle_to_source_mrad=angle, destination=dest, warning=dest == "source",
            second_prism=second[0], second_face=second[1],
        ))
    return tuple(out)


def _offset_at_source(point: np.ndarray, d: np.ndarray, source: np.ndarray, ez: np.ndarray) -> float:
    """Distance (mm) from the input axis where a returning ray crosses the source plane."""
    along = float(d @ ez)
    if along >= 0.0:
        return math.inf
    s = float((source - point) @ ez) / along
    miss = point + s * d - source
    return float(np.linalg.norm(miss - (miss @ ez) * ez))


def _destination(status: int, angle_to_source_mrad: float, cos_forward: float, limit_mrad: float) -> str:
    if status == STATUS_EXITED:
        if angle_to_source_mrad <= limit_mrad:
            return "source"
        return "forward" if cos_forward > 0.0 else "sideways"
    return "sideways" if status == STATUS_LEAKED else "trapped"


def ghost_warning(ghost: Ghost, limit_mrad: float) -> str:
    """One sentence about a ghost that returns to the source."""
    return (
        f"the reflection from {ghost.where} ({ghost.power_fraction * 100:.3g} % "
        f"of the input) returns {ghost.angle_to_source_mrad:.3g} mrad from the reversed input beam, "
        f"inside the {limit_mrad:g} mrad back-reflection limit: tilt that face by 0.5-2 deg, "
        "coat it, or add an isolator; treat the return as a stray beam under IEC 60825-1 / ANSI Z136.1"
    )
