"""Small builders of prism systems for tests and benchmarks, independent of the design solvers.

Geometry is given in the system x-z plane (the plane of incidence) and turned into a ``Prism``
with a ``Pose.in_plane`` placement, so the part-frame conventions are exercised as well.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from prismfab.model import Beam, Face, FaceRole, Polarization, Pose, Prism, System
from prismfab.optics.trace import IndexFunction, RayBundle, trace

__all__ = ["constant_index", "prism_chain", "prism_from_points"]


def constant_index(n: float) -> IndexFunction:
    """``index_of`` returning ``n`` for every material and wavelength."""

    def index_of(material: str, wavelengths_nm: np.ndarray) -> np.ndarray:
        return np.full(np.shape(wavelengths_nm), n)

    return index_of


def prism_from_points(
    name: str, points_xz: Sequence[tuple[float, float]], roles: Sequence[FaceRole], *,
    height_mm: float = 10.0, material: str = "test", angle_rad: float = 0.0,
) -> Prism:
    """A prism whose section corners sit at system-frame (x, z) points (mm), centred on y = 0.

    ``roles[i]`` is the role of the side from point i to point i+1. The order may be either
    sense; it is reversed (roles kept on their sides) if needed to make the part section
    counter-clockwise. ``angle_rad`` sets the pose rotation (any value gives the same solid).
    """
    pts = [(float(x), float(z)) for x, z in points_xz]
    pose = Pose.in_plane(angle_rad=angle_rad, x_mm=pts[0][0], z_mm=pts[0][1], height_mm=height_mm)
    rot = np.asarray(pose.rotation)
    t = np.asarray(pose.translation_mm)
    part = [tuple(((np.array([x, 0.0, z]) - t) @ rot)[:2]) for x, z in pts]
    area = sum(part[i][0] * part[i - 1][1] - part[i - 1][0] * part[i][1] for i in range(len(part)))
    roles = list(roles)
    if area > 0.0:  # clockwise: reverse, keeping each role on its side
        n = len(part)
        part = [part[(-j) % n] for j in range(n)]
        roles = [roles[(-j - 1) % n] for j in range(n)]
    part = [(0.0, 0.0)] + [(float(x), float(y)) for x, y in part[1:]]
    faces = tuple(Face(chr(ord("A") + i), r) for i, r in enumerate(roles))
    return Prism(name, material, tuple(part), faces, height_mm, pose)  # type: ignore[arg-type]


def _chief_after(system: System, index_of: IndexFunction, wavelength_nm: float,
                 start: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    rays = RayBundle.create(start, system.beam.direction, wavelength_nm)
    res = trace(system, rays, index_of=index_of)
    return res.origins[0].copy(), res.directions[0].copy()


def prism_chain(
    *, apex_rad: Sequence[float], incidence_rad: Sequence[float], senses: Sequence[int],
    index_of: IndexFunction, materials: Sequence[str] | None = None, wavelength_nm: float = 632.8,
    face_mm: float = 20.0, gap_mm: float = 30.0, height_mm: float = 10.0,
    diameter_mm: tuple[float, float] = (1.0, 1.0), polarization: Polarization = Polarization.P,
    band_nm: tuple[float, float] | None = None,
) -> System:
    """Triangular prisms in a row, each placed so the traced chief ray meets its entry face at
    ``incidence_rad[m]``.

    ``senses[m]`` = +1 puts the apex of prism m on the +x side of the incoming ray (it deviates
    the beam towards -x), -1 mirrors it. The beam starts at the origin along +z. Each prism has
    an entry face (length ``face_mm``, hit at its middle), a ground base and an exit face.
    """
    count = len(apex_rad)
    materials = list(materials) if materials is not None else ["test"] * count
    beam = Beam(wavelength_nm=wavelength_nm, band_nm=band_nm or (wavelength_nm, wavelength_nm),
                diameter_in_plane_mm=diameter_mm[0], diameter_out_of_plane_mm=diameter_mm[1],
                polarization=polarization)
    prisms: list[Prism] = []
    point, direction = np.zeros(3), np.array([0.0, 0.0, 1.0])
    for m in range(count):
        system = System("test", tuple(prisms), beam)
        if prisms:
            point, direction = _chief_after(system, index_of, wavelength_nm, np.zeros(3))
        hit = point + gap_mm * direction
        theta = math.atan2(direction[0], direction[2])
        prisms.append(_triangle(
            f"P{m + 1}", hit=(hit[0], hit[2]), theta=theta, apex=apex_rad[m], phi1=incidence_rad[m],
            sense=senses[m], face_mm=face_mm, height_mm=height_mm, material=materials[m],
            angle_rad=0.37 * (m + 1),
        ))
    return System("test", tuple(prisms), beam)


def _triangle(name: str, *, hit: tuple[float, float], theta: float, apex: float, phi1: float,
              sense: int, face_mm: float, height_mm: float, material: str, angle_rad: float) -> Prism:
    """Entry face through ``hit`` at incidence ``phi1`` for a ray at in-plane angle ``theta``."""
    c, s = math.cos(theta), math.sin(theta)

    def to_system(xl: float, zl: float) -> tuple[float, float]:
        xl *= sense
        return hit[0] + xl * c + zl * s, hit[1] - xl * s + zl * c

    te = (math.cos(phi1), math.sin(phi1))  # entry face direction, towards the apex
    tx = (-math.cos(apex - phi1), math.sin(apex - phi1))  # exit face direction, away from the apex
    va = (0.5 * face_mm * te[0], 0.5 * face_mm * te[1])
    ve = (va[0] - face_mm * te[0], va[1] - face_mm * te[1])
    vx = (va[0] + 1.5 * face_mm * tx[0], va[1] + 1.5 * face_mm * tx[1])
    pts = [to_system(*va), to_system(*ve), to_system(*vx)]
    return prism_from_points(name, pts, (FaceRole.ENTRY, FaceRole.GROUND, FaceRole.EXIT),
                             height_mm=height_mm, material=material, angle_rad=angle_rad)
