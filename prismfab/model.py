"""The value objects every stage hands to the next.

Pipeline: ``Spec`` (prismfab.spec) -> ``System`` (design solver) -> ``Performance`` (optics
measurement) -> ``Part`` per prism (sizing and tolerancing) -> writers. All objects here are
frozen; a changed copy is made with ``dataclasses.replace``. numpy never appears in a field:
points and matrices are tuples, so objects hash, compare exactly and pickle across processes.

Frames (see DEVELOPERS.md):
  * System frame: the input beam travels along +z; x lies in the plane of incidence (the in-plane
    axis that anamorphic prisms magnify); y is out of plane (prism height).
  * Part frame: origin on datum vertex of the lower end face (datum A), principal section in the
    XY plane, height along +Z. A ``Pose`` maps part-frame points to the system frame.

Faces of a prism are the sides of its section polygon: face ``i`` runs from vertex ``i`` to vertex
``i + 1`` (cyclic), the polygon is counter-clockwise seen from +Z, so the outward normal of face
``i`` is the edge direction turned clockwise by 90 degrees. Labels are letters A, B, C, ...
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from enum import Enum

__all__ = [
    "ANGLE_TOL_RAD",
    "LENGTH_TOL_MM",
    "Beam",
    "Coating",
    "CoatingType",
    "DocumentInfo",
    "Face",
    "FaceRole",
    "Ghost",
    "Part",
    "PartFace",
    "Performance",
    "Polarization",
    "Pose",
    "Prism",
    "System",
    "Tolerances",
    "Vec2",
    "Vec3",
    "WavelengthResult",
]

LENGTH_TOL_MM = 1e-9
"""Two lengths closer than this are the same length (geometry checks)."""
ANGLE_TOL_RAD = 1e-12
"""Two angles closer than this are the same angle (geometry checks)."""

Vec2 = tuple[float, float]
Vec3 = tuple[float, float, float]
Mat3 = tuple[Vec3, Vec3, Vec3]


class FaceRole(Enum):
    """What a face does to the beam."""

    ENTRY = "entry"
    EXIT = "exit"
    ENTRY_EXIT = "entry-exit"  # the beam enters and leaves through it (retro, Littrow)
    TIR = "internal-reflection"
    MIRROR = "mirror"  # coated reflector
    GROUND = "ground"  # not optical: absorbs or scatters; mounting and apex flats

    @property
    def is_optical(self) -> bool:
        """True for every face the beam uses."""
        return self is not FaceRole.GROUND

    @property
    def transmits(self) -> bool:
        """True where light crosses the face (refraction)."""
        return self in (FaceRole.ENTRY, FaceRole.EXIT, FaceRole.ENTRY_EXIT)

    @property
    def reflects(self) -> bool:
        """True where the beam is turned back into the glass."""
        return self in (FaceRole.TIR, FaceRole.MIRROR)


class Polarization(Enum):
    """Input polarisation relative to the plane of incidence (the system x-z plane)."""

    P = "p"
    S = "s"
    UNPOLARIZED = "unpolarized"


class CoatingType(Enum):
    """Coating function of a face."""

    NONE = "none"
    ANTIREFLECTION = "antireflection"
    MIRROR = "mirror"  # protected metal or dielectric high reflector


@dataclass(frozen=True, slots=True)
class Coating:
    """A coating requirement, written the way ISO 9211-2 asks.

    Args:
        type: coating function.
        reflectance_max_pct: per-surface reflectance limit for antireflection, in percent.
        reflectance_min_pct: reflectance floor for a mirror, in percent.
        reason: why a face is left uncoated ("internal reflection", "Brewster"), if it is.
    """

    type: CoatingType = CoatingType.NONE
    reflectance_max_pct: float | None = None
    reflectance_min_pct: float | None = None
    reason: str = ""


@dataclass(frozen=True, slots=True)
class Pose:
    """A rigid placement: part frame -> system frame.

    ``system_point = rotation @ part_point + translation_mm``. ``rotation`` is a proper
    orthonormal matrix stored row by row.
    """

    rotation: Mat3 = ((1.0, 0.0, 0.0), (0.0, 1.0, 0.0), (0.0, 0.0, 1.0))
    translation_mm: Vec3 = (0.0, 0.0, 0.0)

    @classmethod
    def in_plane(cls, *, angle_rad: float, x_mm: float, z_mm: float, height_mm: float) -> Pose:
        """The usual placement of a prism whose principal section is the system x-z plane.

        At ``angle_rad = 0`` part +X maps to system +z and part +Y to system +x; part +Z (the
        height) always maps to system +y, so the frame stays right-handed. The part's mid-height
        sits on the beam plane y = 0.

        Args:
            angle_rad: rotation of the part about the system y axis, from part +X along +z,
                positive turning +z towards +x.
            x_mm, z_mm: where the part-frame origin (datum vertex) lands, in the system frame.
            height_mm: prism height; the part is centred on y = 0.
        """
        c, s = math.cos(angle_rad), math.sin(angle_rad)
        # Columns are the images of part X (s, 0, c), Y (c, 0, -s) and Z = X x Y = (0, 1, 0).
        rot = ((s, c, 0.0), (0.0, 0.0, 1.0), (c, -s, 0.0))
        return cls(rotation=rot, translation_mm=(x_mm, -height_mm / 2.0, z_mm))

    def apply(self, point: Sequence[float]) -> Vec3:
        """Map one part-frame point (mm) to the system frame."""
        r, t = self.rotation, self.translation_mm
        x, y, z = point
        return (
            r[0][0] * x + r[0][1] * y + r[0][2] * z + t[0],
            r[1][0] * x + r[1][1] * y + r[1][2] * z + t[1],
            r[2][0] * x + r[2][1] * y + r[2][2] * z + t[2],
        )

    def apply_vector(self, vector: Sequence[float]) -> Vec3:
        """Map one part-frame direction to the system frame (rotation only)."""
        r = self.rotation
        x, y, z = vector
        return (
            r[0][0] * x + r[0][1] * y + r[0][2] * z,
            r[1][0] * x + r[1][1] * y + r[1][2] * z,
            r[2][0] * x + r[2][1] * y + r[2][2] * z,
        )


@dataclass(frozen=True, slots=True)
class Face:
    """One side face of a prism.

    Args:
        label: letter shown on the drawing ("A", "B", ...).
        role: what the face does.
        coating: the coating requirement (``Coating()`` = uncoated).
        note: short free text, e.g. "apex flat", "Brewster entry".
    """

    label: str
    role: FaceRole
    coating: Coating = field(default_factory=Coating)
    note: str = ""


@dataclass(frozen=True, slots=True)
class Prism:
    """A prism as the optics see it: a convex section polygon extruded along its height.

    Args:
        name: system-unique name, e.g. "P1".
        material: catalogue key of the material (see prismfab.materials).
        vertices_mm: section polygon in the part frame XY plane, counter-clockwise seen from +Z,
            convex. Vertex 0 is the datum vertex and sits at the origin.
        faces: ``faces[i]`` is the side face on the edge from vertex i to vertex i+1.
        height_mm: extent along part +Z (lower end face, datum A, at Z = 0).
        pose: placement in the system frame.
    """

    name: str
    material: str
    vertices_mm: tuple[Vec2, ...]
    faces: tuple[Face, ...]
    height_mm: float
    pose: Pose = field(default_factory=Pose)

    def __post_init__(self) -> None:
        if len(self.vertices_mm) < 3:
            raise ValueError(f"prism {self.name}: a section needs at least 3 vertices")
        if len(self.faces) != len(self.vertices_mm):
            raise ValueError(
                f"prism {self.name}: {len(self.vertices_mm)} vertices need "
                f"{len(self.vertices_mm)} faces, got {len(self.faces)}"
            )
        if not self.height_mm > 0:
            raise ValueError(f"prism {self.name}: height_mm must be > 0, got {self.height_mm}")

    def face_length_mm(self, index: int) -> float:
        """Length of side face ``index`` in the section (mm)."""
        (x0, y0), (x1, y1) = self.vertices_mm[index], self.vertices_mm[(index + 1) % len(self.vertices_mm)]
        return math.hypot(x1 - x0, y1 - y0)

    def interior_angle_rad(self, index: int) -> float:
        """Interior angle of the section at vertex ``index`` (radians)."""
        n = len(self.vertices_mm)
        px, py = self.vertices_mm[index - 1]
        vx, vy = self.vertices_mm[index]
        nx, ny = self.vertices_mm[(index + 1) % n]
        a = math.atan2(py - vy, px - vx)
        b = math.atan2(ny - vy, nx - vx)
        return (a - b) % (2 * math.pi)

    def face_index(self, label: str) -> int:
        """Index of the face with this label."""
        for i, f in enumerate(self.faces):
            if f.label == label:
                return i
        raise KeyError(f"prism {self.name} has no face {label!r}")


@dataclass(frozen=True, slots=True)
class Beam:
    """The input beam, in the system frame.

    Args:
        wavelength_nm: design wavelength (vacuum).
        band_nm: (low, high) band the design must hold over; equal values for one line.
        diameter_in_plane_mm: 1/e^2 diameter along x (plane of incidence).
        diameter_out_of_plane_mm: 1/e^2 diameter along y.
        polarization: relative to the plane of incidence.
        divergence_in_plane_mrad, divergence_out_of_plane_mrad: full-angle 1/e^2 divergence.
        alignment_mm: lateral alignment allowance the clear apertures must absorb.
        alignment_mrad: angular alignment allowance.
        origin_mm: a point on the chief ray.
        direction: unit chief-ray direction (default +z).
    """

    wavelength_nm: float
    band_nm: tuple[float, float]
    diameter_in_plane_mm: float
    diameter_out_of_plane_mm: float
    polarization: Polarization = Polarization.P
    divergence_in_plane_mrad: float = 0.0
    divergence_out_of_plane_mrad: float = 0.0
    alignment_mm: float = 0.0
    alignment_mrad: float = 0.0
    origin_mm: Vec3 = (0.0, 0.0, 0.0)
    direction: Vec3 = (0.0, 0.0, 1.0)

    @property
    def wavelengths_nm(self) -> tuple[float, ...]:
        """Design wavelength first, then the band edges (without repeats)."""
        out = [self.wavelength_nm]
        for w in self.band_nm:
            if all(abs(w - o) > 1e-9 for o in out):
                out.append(w)
        return tuple(out)


@dataclass(frozen=True, slots=True)
class System:
    """A solved prism system: prisms at their poses, and the beam they were solved for.

    Args:
        family: the design family value (e.g. "anamorphic-pair").
        prisms: in the order the beam meets them.
        beam: the input beam.
        facts: solver facts worth reporting, as (name, value, unit) triples, e.g.
            ("separation", 12.3, "mm"), ("entry incidence P1", 70.1, "deg").
        tuning: for adjustable systems, rows of (magnification, rotation of each prism in deg).
        warnings: solver warnings, plain sentences.
        clear_apertures: per optical face, the clear aperture the sizing used:
            (prism name, face label, width along the face, width along the height, centre along
            the face from its start vertex, centre along the height from datum A), mm. Covers the
            traced 1/e^2 footprint x margin over the band, the tuning range and the alignment
            allowance.
        aoi_ranges_deg: per optical face, (prism, face, nominal, min, max) chief-ray incidence
            over the band and the tuning range, deg.
        materials_file: the user material catalogue the prism materials are looked up in (the
            spec's ``materials_file``), or "" for the shipped catalogue only.
        tuning_columns: what each column of the ``tuning`` rows holds, with its unit, e.g.
            ("relative rotation of the wedges (deg)", "pair deviation (deg)") for a wedge pair;
            empty = the anamorphic convention (magnification, rotation of each prism in deg).
    """

    family: str
    prisms: tuple[Prism, ...]
    beam: Beam
    facts: tuple[tuple[str, float, str], ...] = ()
    tuning: tuple[tuple[float, ...], ...] = ()
    warnings: tuple[str, ...] = ()
    clear_apertures: tuple[tuple[str, str, float, float, float, float], ...] = ()
    aoi_ranges_deg: tuple[tuple[str, str, float, float, float], ...] = ()
    materials_file: str = ""
    tuning_columns: tuple[str, ...] = ()

    def tuning_labels(self) -> tuple[str, ...]:
        """What each column of the ``tuning`` rows holds, with its unit."""
        if self.tuning_columns:
            return self.tuning_columns
        return ("magnification M",) + tuple(f"rotation of {p.name} (deg)" for p in self.prisms)


@dataclass(frozen=True, slots=True)
class Ghost:
    """A reflected path (a stray beam): one partial reflection (first order) or two (second).

    Args:
        prism: name of the prism whose face reflects (first).
        face: label of the reflecting face (first).
        wavelength_nm: wavelength traced.
        power_fraction: power of the ghost relative to the input.
        direction: unit direction where it leaves the system (or at its last face).
        angle_to_source_mrad: angle between the ghost and the reversed input beam.
        destination: "source" (back into the laser), "backward" (reversed but clear of the source),
            "forward", "sideways", or "trapped".
        warning: true when it returns within the back-reflection limit of the source.
        second_prism, second_face: where a second-order ghost reflects the second time ("" for
            a first-order ghost).
    """

    prism: str
    face: str
    wavelength_nm: float
    power_fraction: float
    direction: Vec3
    angle_to_source_mrad: float
    destination: str
    warning: bool = False
    second_prism: str = ""
    second_face: str = ""

    @property
    def order(self) -> int:
        """1 for one partial reflection, 2 for two."""
        return 2 if self.second_face else 1

    @property
    def where(self) -> str:
        """The reflecting faces in words, e.g. "P1 face C" or "P2 face A and then P1 face B"."""
        first = f"{self.prism} face {self.face}"
        return first if not self.second_face else f"{first} and then {self.second_prism} face {self.second_face}"

    @property
    def path(self) -> str:
        """The reflecting faces in order, e.g. "P1 C" or "P2 A, then P1 B"."""
        first = f"{self.prism} {self.face}"
        return first if not self.second_face else f"{first}, then {self.second_prism} {self.second_face}"


@dataclass(frozen=True, slots=True)
class WavelengthResult:
    """What the traced system does at one wavelength.

    Args:
        wavelength_nm: the wavelength.
        magnification_in_plane: output/input 1/e^2 width in the plane of incidence.
        magnification_out_of_plane: the same out of plane.
        pointing_mrad: angle of the output chief ray to the input direction (signed, in plane).
        pointing_out_of_plane_mrad: the out-of-plane component.
        lateral_offset_mm: displacement of the output chief ray from the input axis, in plane.
        transmission: power transmitted by the chief path (Fresnel, for the input polarisation).
        dispersion_rad_per_um: d(output angle)/d(lambda).
        aoi_deg: per (prism name, face label), angle of incidence of the chief ray (outside for
            entry faces, inside for exit and reflecting faces), deg.
        tir_margin_deg: per (prism name, face label) of reflecting faces, internal angle of
            incidence minus the critical angle, deg (negative = TIR lost).
        footprint_mm: per (prism name, face label), the traced 1/e^2 footprint on the face as
            (centre along the face from its start vertex, width along the face, centre along the
            height from the lower end face, width along the height).
    """

    wavelength_nm: float
    magnification_in_plane: float
    magnification_out_of_plane: float
    pointing_mrad: float
    pointing_out_of_plane_mrad: float
    lateral_offset_mm: float
    transmission: float
    dispersion_rad_per_um: float
    aoi_deg: tuple[tuple[str, str, float], ...]
    tir_margin_deg: tuple[tuple[str, str, float], ...]
    footprint_mm: tuple[tuple[str, str, float, float, float, float], ...]


@dataclass(frozen=True, slots=True)
class Performance:
    """The traced system, per wavelength (design wavelength first), plus its ghosts."""

    results: tuple[WavelengthResult, ...]
    ghosts: tuple[Ghost, ...] = ()
    chief_ray_mm: tuple[Vec3, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def design(self) -> WavelengthResult:
        """The result at the design wavelength."""
        return self.results[0]


@dataclass(frozen=True, slots=True)
class Tolerances:
    """Tolerances of one part, derived from the system requirements.

    Args:
        angle_arcsec: +/- on every functional interior angle.
        pyramidal_arcsec: largest tilt of an optical face out of the principal section.
        length_mm: +/- on face lengths.
        height_mm: +/- on the height.
        nd_tolerance: +/- on the refractive index (melt).
        vd_tolerance_pct: +/- on the Abbe number, percent.
        surface_form_fringes: (power, irregularity) PV fringes at ``test_wavelength_nm``.
        test_wavelength_nm: test wavelength of the surface form.
        yield_fraction: Monte Carlo yield of the system with these tolerances.
        driving: which requirement drives the tightest tolerance, in words.
        grade: "commercial", "precision", "high-precision" or "explicit".
        cost_index: relative cost (commercial = 1.0), common practice.
        looser_yield: per tolerance name, the yield if it were one class looser.
    """

    angle_arcsec: float
    pyramidal_arcsec: float
    length_mm: float
    height_mm: float
    nd_tolerance: float
    vd_tolerance_pct: float
    surface_form_fringes: tuple[float, float]
    test_wavelength_nm: float = 632.8
    yield_fraction: float = 1.0
    driving: str = ""
    grade: str = "precision"
    cost_index: float = 1.0
    looser_yield: tuple[tuple[str, float], ...] = ()


@dataclass(frozen=True, slots=True)
class PartFace:
    """Fabrication data of one side face of a part (same order as ``Prism.faces``).

    Args:
        label: face letter.
        role: what the face does.
        length_mm: face length in the section.
        clear_aperture_mm: (along the face, along the height), or None for ground faces.
        clear_aperture_centre_mm: (along the face from its start vertex, along the height from
            datum A) of the clear-aperture rectangle's centre.
        aoi_deg: (nominal, min, max) chief-ray incidence over band and tuning, deg.
        polished: True for optical faces; False = fine ground.
        surface_form: ISO 10110-5 indication, e.g. ``3/ 1(0.5); λ = 632.8 nm``.
        surface_imperfections: ISO 10110-7 ``5/ ...`` or MIL-PRF-13830B ``40-20``.
        coating: the coating requirement.
        coating_text: the requirement in words, per ISO 9211-2 (band, AOI range, polarisation,
            limit), or "uncoated: internal reflection" / "uncoated: Brewster".
    """

    label: str
    role: FaceRole
    length_mm: float
    clear_aperture_mm: tuple[float, float] | None
    clear_aperture_centre_mm: tuple[float, float] | None
    aoi_deg: tuple[float, float, float] | None
    polished: bool
    surface_form: str
    surface_imperfections: str
    coating: Coating
    coating_text: str


@dataclass(frozen=True, slots=True)
class Part:
    """A prism ready for fabrication: final geometry plus everything the drawing states.

    Args:
        number: part number, e.g. "FR-2041-01".
        title: part title for the title block (ISO 7200 limit 25 characters is advised).
        quantity: how many to make.
        prism: final sized geometry (apex flats included as ground faces), at its system pose.
        faces: fabrication data per side face.
        material_name: generic name or glass code plus type.
        material_code: six-digit code, or "" for crystals.
        nd, vd: catalogue values.
        material_indications: ISO 10110 material codes, e.g. ("0/10", "1/2×0.10", "2/2;3").
        bevel_mm: protective bevel face width (45°-type callout) on bevelled edges.
        bevelled_edges: edges that get the bevel, named by the two faces they join; the end
            faces are "TOP" (Z = height) and "BOTTOM" (Z = 0, datum A).
        sharp_edges: edges that must stay sharp, with the permitted chip size in ``notes``.
        datums: (letter, what) pairs, e.g. ("A", "lower end face"), ("B", "face C").
        tolerances: the derived tolerances.
        functional_angles: vertex indices whose interior angle is functional (others auxiliary).
        ray_path_mm: nominal chief-ray path in the part frame section (X, Y) points, entry to exit,
            including outside lead-in and lead-out segments.
        polarization_note: e.g. "p: E-field in the principal section" (empty when it does not matter).
        notes: part-specific drawing notes.
    """

    number: str
    title: str
    quantity: int
    prism: Prism
    faces: tuple[PartFace, ...]
    material_name: str
    material_code: str
    nd: float
    vd: float
    material_indications: tuple[str, ...]
    bevel_mm: float
    bevelled_edges: tuple[tuple[str, str], ...]
    sharp_edges: tuple[tuple[str, str], ...]
    datums: tuple[tuple[str, str], ...]
    tolerances: Tolerances
    functional_angles: tuple[int, ...]
    ray_path_mm: tuple[Vec2, ...] = ()
    polarization_note: str = ""
    notes: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class DocumentInfo:
    """Title-block and revision data of one drawing (ISO 7200 fields).

    Args:
        number: identification number (the part number), e.g. "FR-2041-01".
        title: title of the part.
        revision: revision index, e.g. "A".
        date: date of issue, ISO 8601 ("2026-12-01").
        company: legal owner.
        drawn_by: creator.
        checked_by: checker (optional in ISO 7200).
        approved_by: approval person.
        document_type: e.g. "Fabrication drawing".
        sheet: segment/sheet number, e.g. "1/2".
        revisions: revision table rows, oldest first: (revision, description, date, approved by).
        scenario: project title, shown as the drawing's subtitle.
    """

    number: str
    title: str
    revision: str = "A"
    date: str = ""
    company: str = ""
    drawn_by: str = ""
    checked_by: str = ""
    approved_by: str = ""
    document_type: str = "Fabrication drawing"
    sheet: str = "1/2"
    revisions: tuple[tuple[str, str, str, str], ...] = ()
    scenario: str = ""
