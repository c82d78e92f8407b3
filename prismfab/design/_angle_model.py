"""The chief-ray angle model: directions through two-face refracting prisms, positions ignored.

Closed-form solvers (anamorphic pairs and singles, Brewster and dispersing prisms) solve their
unknowns with this model before any prism is placed; the exact 2D trace (``design._trace2d``)
then verifies the placed sections. Angles are in rad, from +z towards +x in the beam plane.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

__all__ = ["AngleEvent", "PrismAngles", "angular_dispersion", "propagate_angles"]


@dataclass(frozen=True, slots=True)
class PrismAngles:
    """Orientation of one refracting prism for the chief-ray angle model.

    Args:
        beta_rad: direction of the entry face's inward normal (into the glass), from +z
            towards +x, system frame.
        apex_rad: apex angle between entry and exit faces.
        sense: +1 when the apex lies on the +x side of the ray (the prism deviates towards -x),
            -1 for the mirror image. The exit face's outward normal points along
            ``beta + sense * apex``.
    """

    beta_rad: float
    apex_rad: float
    sense: int = 1

    @property
    def exit_normal_rad(self) -> float:
        """Direction of the exit face's outward normal."""
        return self.beta_rad + self.sense * self.apex_rad

    def rotated(self, delta_rad: float) -> PrismAngles:
        """The same prism turned by ``delta_rad`` about the y axis."""
        return PrismAngles(self.beta_rad + delta_rad, self.apex_rad, self.sense)


@dataclass(frozen=True, slots=True)
class AngleEvent:
    """One refraction in the angle model: signed incidence and refraction angles (rad), index pair."""

    incidence_rad: float
    refraction_rad: float
    n1: float
    n2: float

    @property
    def k(self) -> float:
        """Beam-width ratio out/in at this face, ``cos(refraction) / cos(incidence)``."""
        return math.cos(self.refraction_rad) / math.cos(self.incidence_rad)


def _refract_angle(theta: float, normal_rad: float, n1: float, n2: float) -> tuple[float, AngleEvent]:
    """Refract a direction at a face whose normal (along the travel) points at ``normal_rad``."""
    inc = math.remainder(theta - normal_rad, 2 * math.pi)
    s = n1 * math.sin(inc) / n2
    if abs(s) >= 1.0:
        raise ValueError("total internal reflection")
    ref = math.asin(s)
    return normal_rad + ref, AngleEvent(inc, ref, n1, n2)


def propagate_angles(theta_in_rad: float, prisms: Sequence[PrismAngles], indices: Sequence[float]
                     ) -> tuple[float, float, tuple[AngleEvent, ...]]:
    """Chief-ray direction through a sequence of two-face refracting prisms (positions ignored).

    Args:
        theta_in_rad: input direction.
        prisms: prism orientations in beam order.
        indices: refractive index of each prism at the wavelength.

    Returns:
        (output direction, in-plane magnification = product of the face ratios k, events: entry
        and exit refraction of each prism in order).

    Raises:
        ValueError: the ray is totally reflected or misses a face's front side.
    """
    theta = theta_in_rad
    events: list[AngleEvent] = []
    mag = 1.0
    for pr, n in zip(prisms, indices, strict=True):
        theta, ev1 = _refract_angle(theta, pr.beta_rad, 1.0, n)
        theta, ev2 = _refract_angle(theta, pr.exit_normal_rad, n, 1.0)
        for ev in (ev1, ev2):
            if abs(ev.incidence_rad) >= math.pi / 2:
                raise ValueError("the ray meets a face from behind")
            mag *= ev.k
        events += (ev1, ev2)
    return theta, mag, tuple(events)


def angular_dispersion(theta_in_rad: float, prisms: Sequence[PrismAngles],
                       indices: Sequence[float], dn_dlambda: Sequence[float]) -> float:
    """First-order angular dispersion d(theta_out)/d(lambda) of a prism sequence (rad per unit
    of ``dn_dlambda``'s wavelength).

    This is the multiple-prism recursion of Duarte and Piper (Am. J. Phys. 51 (1983); Duarte
    (ed.), Tunable Lasers Handbook, ch. 2, Eqs. 11-15) written face by face in signed angles:
    differentiating ``n1 sin i = n2 sin r`` with ``i = theta - N`` gives
    ``d theta' = (n1 cos i d theta + sin i dn1 - sin r dn2) / (n2 cos r)``, which, chained over
    the entry and exit faces, reproduces ``H2 dn + (k1 k2)^-1 (H1 dn +/- d phi_prev)`` with the
    orientation sign carried by the signed angles.
    """
    _theta, _mag, events = propagate_angles(theta_in_rad, prisms, indices)
    d = 0.0
    for j, dn in enumerate(dn_dlambda):
        for ev, dn1, dn2 in ((events[2 * j], 0.0, dn), (events[2 * j + 1], dn, 0.0)):
            i, r = ev.incidence_rad, ev.refraction_rad
            d = (ev.n1 * math.cos(i) * d + math.sin(i) * dn1 - math.sin(r) * dn2) / (
                ev.n2 * math.cos(r))
    return d
