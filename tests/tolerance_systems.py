"""Hand-built prism systems for the parts and tolerance tests (no solver needed).

Each builder places a prism so that a chosen internal chief-ray direction is reached from a
given system-frame input ray, by reverse Snell refraction at the entry face. The geometry is
exact; the indices are plain numbers chosen by the test (n = 1.5 is the usual textbook value).
"""

from __future__ import annotations

import math

import numpy as np

from prismfab.model import Beam, Coating, CoatingType, Face, FaceRole, Polarization, Pose, Prism, System


def _normal(vertices, i):  # type: ignore[no-untyped-def]
    (x0, y0), (x1, y1) = vertices[i], vertices[(i + 1) % len(vertices)]
    n = np.array([y1 - y0, -(x1 - x0)])
    return n / np.linalg.norm(n)


def _outside_direction(d_in: np.ndarray, normal: np.ndarray, n: float) -> np.ndarray:
    """External incoming direction that refracts into the internal direction d_in (2D)."""
    # reverse the internal ray, refract it out of the glass (n -> 1), reverse again
    r = -d_in
    nn = normal if float(r @ normal) < 0 else -normal
    c = -float(r @ nn)
    k = 1.0 - n**2 * (1.0 - c**2)
    t = n * r + (n * c - math.sqrt(k)) * nn
    return -t / np.linalg.norm(t)


def aim(vertices, faces, *, n: float, entry_face: int, along: float, internal_dir,  # type: ignore[no-untyped-def]
        at_sys=(0.0, 20.0), dir_sys=(0.0, 1.0), height_mm: float = 10.0, name: str = "P1",
        material: str = "517642") -> Prism:
    """Place a prism so that the system ray (at_sys (x, z), dir_sys (x, z)) enters face
    ``entry_face`` at fraction ``along`` of its length and continues along ``internal_dir``."""
    v = np.array(vertices, float)
    p0, p1 = v[entry_face], v[(entry_face + 1) % len(v)]
    hit = p0 + along * (p1 - p0)
    d_ext = _outside_direction(np.array(internal_dir, float) / np.linalg.norm(internal_dir),
                               _normal(vertices, entry_face), n)
    phi = math.atan2(d_ext[1], d_ext[0])
    target = math.atan2(dir_sys[0], dir_sys[1])  # system direction angle from +z towards +x
    angle = target - phi
    probe = Pose.in_plane(angle_rad=angle, x_mm=0.0, z_mm=0.0, height_mm=height_mm)
    hx, _, hz = probe.apply((hit[0], hit[1], height_mm / 2.0))
    pose = Pose.in_plane(angle_rad=angle, x_mm=at_sys[0] - hx, z_mm=at_sys[1] - hz, height_mm=height_mm)
    return Prism(name, material, tuple((float(a), float(b)) for a, b in v), tuple(faces), height_mm, pose)


def beam(wavelength_nm: float = 780.0, band=(775.0, 785.0), pol=Polarization.P) -> Beam:  # type: ignore[no-untyped-def]
    return Beam(wavelength_nm=wavelength_nm, band_nm=band, diameter_in_plane_mm=1.0,
                diameter_out_of_plane_mm=3.0, polarization=pol)


def wedge(apex_deg: float, n: float, *, width_mm: float = 20.0, thick_mm: float = 5.0) -> System:
    """Wedge: entry face D at normal incidence, exit face B inclined by the apex angle."""
    a = math.radians(apex_deg)
    w, t = width_mm, thick_mm
    verts = ((0.0, 0.0), (t, 0.0), (t - w * math.tan(a), w), (0.0, w))
    faces = (Face("A", FaceRole.GROUND), Face("B", FaceRole.EXIT), Face("C", FaceRole.GROUND),
             Face("D", FaceRole.ENTRY))
    p = aim(verts, faces, n=n, entry_face=3, along=0.5, internal_dir=(1.0, 0.0))
    return System("wedge", (p,), beam())


def brewster(n: float, *, leg_mm: float = 12.0) -> System:
    """Brewster entry on the hypotenuse, normal exit (M = n; Tunable Lasers Handbook, ch. 3)."""
    apex = math.atan(1.0 / n)
    b = leg_mm * math.tan(apex)
    verts = ((0.0, 0.0), (b, 0.0), (0.0, leg_mm))
    faces = (Face("A", FaceRole.GROUND, note="mounting base"),
             Face("B", FaceRole.ENTRY, Coating(CoatingType.NONE, reason="Brewster")),
             Face("C", FaceRole.EXIT))
    p = aim(verts, faces, n=n, entry_face=1, along=0.45, internal_dir=(-1.0, 0.0))
    return System("anamorphic-single", (p,), beam())


def equilateral(n: float, *, side_mm: float = 20.0) -> System:
    """60 degree prism at minimum deviation: internal ray parallel to the base."""
    s = side_mm
    verts = ((0.0, 0.0), (s, 0.0), (s / 2.0, s * math.sqrt(3.0) / 2.0))
    faces = (Face("A", FaceRole.GROUND), Face("B", FaceRole.EXIT), Face("C", FaceRole.ENTRY))
    p = aim(verts, faces, n=n, entry_face=2, along=0.5, internal_dir=(1.0, 0.0))
    return System("dispersing", (p,), beam())


def brewster_pair(n: float, *, gap_mm: float = 25.0) -> System:
    """Two Brewster prisms in opposite sense: output parallel to the input, M = n**2."""
    first = brewster(n).prisms[0]
    apex = math.atan(1.0 / n)
    delta = math.atan(n) - apex  # deviation of one prism
    leg = 12.0
    b = leg * math.tan(apex)
    # mirror image of the section (Y -> -Y), re-ordered counter-clockwise
    verts = ((0.0, 0.0), (0.0, -leg), (b, 0.0))
    faces = (Face("A", FaceRole.EXIT), Face("B", FaceRole.ENTRY, Coating(CoatingType.NONE, reason="Brewster")),
             Face("C", FaceRole.GROUND, note="mounting base"))
    # output of the first prism: leaves its normal exit face deviated by -delta or +delta
    from prismfab.design.perturb import find_path

    path = find_path(System("x", (first,), beam()), np.array([n]))
    exit_pt = np.array(path.hits_mm[-1])
    d = np.array(path.points_mm[-1]) - exit_pt
    d /= np.linalg.norm(d)
    at = exit_pt + gap_mm * d
    second = aim(verts, faces, n=n, entry_face=1, along=0.55, internal_dir=(-1.0, 0.0),
                 at_sys=(at[0], at[2]), dir_sys=(d[0], d[2]), name="P2", height_mm=14.0)
    assert abs(abs(math.atan2(d[0], d[2])) - delta) < 1e-9
    return System("anamorphic-pair", (first, second), beam())


def right_angle(n: float, *, leg_mm: float = 15.0) -> System:
    """Right-angle fold prism: normal entry on leg C, internal reflection on B, exit on leg A."""
    verts = ((0.0, 0.0), (leg_mm, 0.0), (0.0, leg_mm))
    faces = (Face("A", FaceRole.EXIT), Face("B", FaceRole.TIR), Face("C", FaceRole.ENTRY))
    p = aim(verts, faces, n=n, entry_face=2, along=0.5, internal_dir=(1.0, 0.0))
    return System("fold", (p,), beam())


def spec_for(system: System, **changes):  # type: ignore[no-untyped-def]
    """A minimal valid Spec around a hand-built system (requirements/fabrication overridable)."""
    from dataclasses import replace

    from prismfab.spec.types import BeamSpec, Fabrication, Project, Requirements, Spec, WedgeDesign

    b = system.beam
    spec = Spec(project=Project(title="Test bench", drawing_prefix="TB-7"),
                beam=BeamSpec(b.wavelength_nm, b.band_nm, b.diameter_in_plane_mm,
                              b.diameter_out_of_plane_mm, b.polarization),
                design=WedgeDesign(material="517642", deviation_deg=1.0),
                requirements=Requirements(), fabrication=Fabrication())
    return replace(spec, **changes)
