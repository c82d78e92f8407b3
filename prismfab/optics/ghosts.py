"""First-order ghosts: the partial reflection of the chief ray at every refracting face it crosses.

Each ghost is traced exactly: the chief ray is followed to the face, reflected there with the
Fresnel amplitude for its polarisation (uncoated face) or with the square root of the coating's
stated reflectance limit (antireflection-coated face: the ghost starts with that limit, an upper
bound), and traced onward (refraction, total internal reflection, absorption) like any other ray.
Where it ends decides its destination:

* "source": it leaves the system within ``back_reflection_mrad`` of the reversed input beam,
  i.e. back into the laser (a warning: feedback, mode hops, and a stray-light hazard);
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

__all__ = ["first_order_ghosts", "ghost_warning"]


def first_order_ghosts(
    system: System, chief: TraceResult, ray: int, *, wavelength_nm: float,
    back_reflection_mrad: float, index_of: IndexFunction, max_events: int = 16,
) -> tuple[Ghost, ...]:
    """Ghosts from every refracting face crossed by ray ``ray`` of ``chief``.

    Args:
        system: the traced system.
        chief: a trace containing the chief ray.
        ray: index of the chief ray in ``chief``.
        wavelength_nm: its wavelength.
        back_reflection_mrad: angle to the reversed input beam below which a ghost counts as
            returning to the source.
        index_of: the index function used for ``chief``.
        max_events: event cap of the ghost trace.
    """
    kinds = chief.event_kind[ray]
    events = [k for k in range(int(chief.n_events[ray])) if kinds[k] == EVENT_REFRACT]
    if not events:
        return ()
    beam = system.beam
    _, _, ez = beam_frame(beam)
    start = np.asarray(beam.origin_mm, float)
    bundle = RayBundle.create(np.broadcast_to(start, (len(events), 3)), ez, wavelength_nm,
                              polarization=beam.polarization)
    res = trace(system, bundle, max_events=max_events, index_of=index_of,
                reflect_at_event=np.array(events))
    prisms, faces = chief.event_prism[ray], chief.event_face[ray]
    out = []
    for j, k in enumerate(events):
        if res.event_kind[j, k] != EVENT_PARTIAL:
            continue  # the ghost ray took another path (cannot happen for a deterministic trace)
        d = res.directions[j]
        angle = math.atan2(float(np.linalg.norm(np.cross(d, ez))), float(-d @ ez)) * 1e3
        dest = _destination(int(res.status[j]), angle, float(d @ ez), back_reflection_mrad)
        solid = res.solids[int(prisms[k])]
        out.append(Ghost(
            prism=solid.name, face=solid.labels[int(faces[k])], wavelength_nm=wavelength_nm,
            power_fraction=float(res.power[j]), direction=(float(d[0]), float(d[1]), float(d[2])),
            angle_to_source_mrad=angle, destination=dest, warning=dest == "source",
        ))
    return tuple(out)


def _destination(status: int, angle_to_source_mrad: float, cos_forward: float, limit_mrad: float) -> str:
    if status == STATUS_EXITED:
        if angle_to_source_mrad <= limit_mrad:
            return "source"
        return "forward" if cos_forward > 0.0 else "sideways"
    return "sideways" if status == STATUS_LEAKED else "trapped"


def ghost_warning(ghost: Ghost, limit_mrad: float) -> str:
    """One sentence about a ghost that returns to the source."""
    return (
        f"the reflection from {ghost.prism} face {ghost.face} ({ghost.power_fraction * 100:.3g} % "
        f"of the input) returns {ghost.angle_to_source_mrad:.3g} mrad from the reversed input beam, "
        f"inside the {limit_mrad:g} mrad back-reflection limit: tilt that face by 0.5-2 deg, "
        "coat it, or add an isolator; treat the return as a stray beam under IEC 60825-1 / ANSI Z136.1"
    )
