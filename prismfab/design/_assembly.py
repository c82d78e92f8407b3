"""Assembly of solved sections into prisms: materials, face coatings, placement, labels.

A family solver turns its sections (plane coordinates ``(z_mm, x_mm)``) into ``Prism`` objects
here: the catalogue material and its index, the coating each face gets from the spec and its
optics, the part frame and pose, and the face labels A, B, C, ...
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence

import numpy as np

from prismfab.errors import SolveError
from prismfab.model import Coating, CoatingType, Face, FaceRole, Pose, Prism
from prismfab.spec.types import Spec

__all__ = [
    "LABELS",
    "face_coating",
    "index_function",
    "labels",
    "material_of",
    "place_section",
    "require",
    "round_mm",
    "section_in_plane",
]

LABELS = "ABCDEFGHIJKLMNOPQRSTUVWXYZ"


def material_of(spec: Spec, material: str, *, path: str):  # -> prismfab.materials.Material
    """The catalogue material, checked over the spec's design wavelength and band.

    Raises:
        MaterialError: unknown material, or a band wavelength outside its valid range.
    """
    from prismfab import materials

    mat = materials.get(material, catalogue_file=spec.materials_file or None, path=path)
    for wl in (spec.beam.wavelength_nm, *spec.beam.band_nm):
        mat.check_range(wl, path=path)
    return mat


def index_function(spec: Spec, material: str, *, path: str) -> Callable[[float], float]:
    """``n(wavelength_nm)`` of a catalogue material, checked over the spec's band.

    Raises:
        MaterialError: unknown material, or a band wavelength outside its valid range.
    """
    mat = material_of(spec, material, path=path)
    return lambda wl: float(mat.n(wl))



def face_coating(spec: Spec, role: FaceRole, *, aoi_max_rad: float = 0.0,
                 brewster_ok: bool = False) -> Coating:
    """The coating of a face from ``spec.fabrication.coatings`` and the optics of the face.

    Rules: TIR faces stay uncoated ("internal reflection"); GROUND faces get none; a
    transmitting face that already reflects less than the requested limit uncoated (p light at
    or near Brewster's angle, ``brewster_ok``) stays uncoated ("Brewster"); MIRROR faces get the
    "mirror" entry (default reflectance >= 99.5 %, common practice); other transmitting faces get
    the entry for their role or the default.

    Args:
        spec: the spec (its fabrication.coatings table).
        role: the face role.
        aoi_max_rad: largest chief-ray incidence on the face (unused by the rules, kept for
            coating texts written later).
        brewster_ok: the uncoated face meets the reflectance limit over the band.
    """
    del aoi_max_rad
    if role is FaceRole.GROUND:
        return Coating()
    if role is FaceRole.TIR:
        return Coating(CoatingType.NONE, reason="internal reflection")
    table = dict(spec.fabrication.coatings)
    if role is FaceRole.MIRROR:
        cs = table.get("mirror")
        rmin = cs.reflectance_min_pct if cs and cs.reflectance_min_pct is not None else 99.5
        return Coating(CoatingType.MIRROR, reflectance_min_pct=rmin)
    if brewster_ok:
        return Coating(CoatingType.NONE, reason="Brewster")
    cs = spec.fabrication.coating_for(role.value)
    kind = {"antireflection": CoatingType.ANTIREFLECTION, "mirror": CoatingType.MIRROR,
            "none": CoatingType.NONE}.get(cs.type, CoatingType.ANTIREFLECTION)
    if kind is CoatingType.NONE:
        return Coating(CoatingType.NONE, reason="uncoated by request")
    return Coating(kind, reflectance_max_pct=cs.reflectance_max_pct,
                   reflectance_min_pct=cs.reflectance_min_pct)


def place_section(*, name: str, material: str, vertices_plane: np.ndarray,
                  faces: Sequence[Face], height_mm: float) -> Prism:
    """A ``Prism`` from a CCW section given in plane coordinates.

    Vertex 0 becomes the datum vertex at the part origin and face A (vertex 0 -> 1) lies along
    part +X; the pose puts the section back where it was, centred on y = 0.

    Args:
        name: prism name.
        material: catalogue key.
        vertices_plane: (n, 2) CCW polygon, plane coordinates (z, x), mm.
        faces: one per edge, labels in order.
        height_mm: extent along y.
    """
    v = np.asarray(vertices_plane, float)
    origin = v[0]
    e = v[1] - v[0]
    angle = math.atan2(e[1], e[0])
    c, s = math.cos(angle), math.sin(angle)
    rel = v - origin
    part = [(round_mm(float(c * p[0] + s * p[1])), round_mm(float(-s * p[0] + c * p[1])))
            for p in rel]
    part[0] = (0.0, 0.0)
    part[1] = (part[1][0], 0.0)
    pose = Pose.in_plane(angle_rad=angle, x_mm=float(origin[1]), z_mm=float(origin[0]),
                         height_mm=height_mm)
    return Prism(name, material, tuple(part), tuple(faces), height_mm, pose)


def round_mm(value: float) -> float:
    """Round a coordinate to 1e-9 mm so printed files do not carry float noise."""
    r = round(value, 9)
    return 0.0 if r == 0 else r


def section_in_plane(prism: Prism) -> np.ndarray:
    """The prism's section vertices in plane coordinates (z, x), from its pose."""
    pts = [prism.pose.apply((x, y, 0.0)) for x, y in prism.vertices_mm]
    return np.array([[p[2], p[0]] for p in pts])


def labels(count: int) -> tuple[str, ...]:
    """Face labels A, B, C, ... for ``count`` faces."""
    return tuple(LABELS[i] for i in range(count))


def require(condition: bool, path: str, reason: str, reachable: str | None = None) -> None:
    """Raise ``SolveError(path, reason, reachable=...)`` unless ``condition`` holds."""
    if not condition:
        raise SolveError(path, reason, reachable=reachable)
