"""The design spec as frozen value objects (no YAML here; see ``prismfab.spec.load``).

Units are in the field names. Every optional field has the default a practising engineer would
assume. ``Spec.lines`` maps a dotted field path to its 1-based YAML (line, column), so later
stages (solvers, writers) can name the line when they reject a value.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum

from prismfab.model import Polarization

__all__ = [
    "Alignment",
    "AnamorphicPairDesign",
    "AnamorphicSingleDesign",
    "BeamSpec",
    "BrewsterDesign",
    "CoatingSpec",
    "CustomDesign",
    "Design",
    "DispersingDesign",
    "Fabrication",
    "Family",
    "FoldDesign",
    "FoldType",
    "Grade",
    "ImperfectionNotation",
    "Lock",
    "LockedPrism",
    "OutputMode",
    "Project",
    "Requirements",
    "SheetSpec",
    "Spec",
    "WedgeDesign",
]


class Family(Enum):
    """Prism design families."""

    ANAMORPHIC_SINGLE = "anamorphic-single"
    ANAMORPHIC_PAIR = "anamorphic-pair"
    BREWSTER = "brewster"
    DISPERSING = "dispersing"
    FOLD = "fold"
    WEDGE = "wedge"
    CUSTOM = "custom"


class OutputMode(Enum):
    """Where the output beam goes relative to the input."""

    DEVIATED = "deviated"  # whatever direction the prism gives (single prism, no reflection)
    PARALLEL = "parallel"  # output parallel to the input
    COLLINEAR = "collinear"  # parallel and on the input axis


class FoldType(Enum):
    """Fold prism types."""

    RIGHT_ANGLE = "right-angle"  # 90 deg by one reflection at the hypotenuse
    PENTA = "penta"  # constant 90 deg, two coated reflections
    DOVE = "dove"  # image rotation, in line
    RETRO = "retro"  # 180 deg by two internal reflections (entry and exit through the hypotenuse)


class Grade(Enum):
    """Default tolerance class of the fabrication (class values are common practice)."""

    COMMERCIAL = "commercial"
    PRECISION = "precision"
    HIGH_PRECISION = "high-precision"


class ImperfectionNotation(Enum):
    """How surface imperfections are written on the drawing."""

    ISO_10110_7 = "iso10110-7"
    MIL_PRF_13830B = "mil-prf-13830b"


@dataclass(frozen=True, slots=True)
class Project:
    """Title-block and quote data."""

    title: str
    drawing_prefix: str
    quantity: int = 1
    company: str = ""
    drawn_by: str = ""
    checked_by: str = ""
    approved_by: str = ""
    date: str = ""  # ISO 8601 date of issue; empty = the revision record's date
    part_titles: tuple[str, ...] = ()  # optional per-prism titles, in beam order


@dataclass(frozen=True, slots=True)
class Alignment:
    """Alignment allowance the clear apertures and tolerances must absorb."""

    decenter_mm: float = 0.1
    tilt_mrad: float = 1.0


@dataclass(frozen=True, slots=True)
class BeamSpec:
    """The input beam."""

    wavelength_nm: float
    band_nm: tuple[float, float]
    diameter_in_plane_mm: float
    diameter_out_of_plane_mm: float
    polarization: Polarization = Polarization.P
    divergence_in_plane_mrad: float = 0.0
    divergence_out_of_plane_mrad: float = 0.0
    alignment: Alignment = field(default_factory=Alignment)


@dataclass(frozen=True, slots=True)
class AnamorphicSingleDesign:
    """One prism that changes the in-plane width by ``magnification``.

    ``output`` DEVIATED: plain two-face prism; PARALLEL: an internal reflection makes the output
    parallel to the input; COLLINEAR: also on the input axis (entry height solved).
    ``entry_aoi_deg`` None = solve (normal exit); a value fixes the entry incidence.
    ``exit_tilt_deg``: anti-feedback tilt of the (near-)normal face, degrees (0 = exactly normal);
    the magnification is re-balanced after the tilt.
    """

    magnification: float
    material: str
    output: OutputMode = OutputMode.DEVIATED
    entry_aoi_deg: float | None = None
    exit_tilt_deg: float = 1.0


@dataclass(frozen=True, slots=True)
class AnamorphicPairDesign:
    """Two prisms, output parallel to the input, in-plane magnification M (<1 compresses).

    Args:
        magnification: target M.
        materials: one or two material keys (one = both prisms alike).
        achromatic: zero first-order angular dispersion at the design wavelength.
        normal_exit: exit faces at (near) normal incidence.
        exit_tilt_deg: anti-feedback tilt of normal exit faces (0 = exactly normal).
        separation_mm: chief-ray path between the prisms (None = compact, solver picks).
        tuning_range: (M_min, M_max) the pair must reach by rotating the prisms, or None.
    """

    magnification: float
    materials: tuple[str, ...]
    achromatic: bool = False
    normal_exit: bool = True
    exit_tilt_deg: float = 1.0
    separation_mm: float | None = None
    tuning_range: tuple[float, float] | None = None


@dataclass(frozen=True, slots=True)
class BrewsterDesign:
    """Brewster-cut prism at minimum deviation for p light; or a Brewster pair (GDD)."""

    material: str
    pair: bool = False
    separation_mm: float = 100.0  # apex-to-apex, pair only


@dataclass(frozen=True, slots=True)
class DispersingDesign:
    """Dispersing prism at minimum deviation: exactly one of the three targets is given."""

    material: str
    apex_deg: float | None = None
    dispersion_mrad_per_nm: float | None = None
    resolving_power: float | None = None
    littrow: bool = False  # coated back face, light returns near its path


@dataclass(frozen=True, slots=True)
class FoldDesign:
    """Fold prisms."""

    material: str
    type: FoldType = FoldType.RIGHT_ANGLE
    coat_reflecting_faces: bool | None = None  # None = coat only where TIR fails


@dataclass(frozen=True, slots=True)
class WedgeDesign:
    """A wedge for a required deviation (exact), optionally a pair (Risley)."""

    material: str
    deviation_deg: float
    pair: bool = False
    incidence_deg: float = 0.0
    thickness_mm: float | None = None  # centre thickness; None = from the beam


@dataclass(frozen=True, slots=True)
class CustomDesign:
    """A user polygon with face roles, traced and packaged as given.

    Either ``vertices_mm`` (CCW section, part frame) or ``angles_deg`` + ``first_side_mm``.
    ``roles`` has one entry per face (side i from vertex i to i+1).
    Pose: rotation about the system y axis and position of the datum vertex.
    """

    material: str
    roles: tuple[str, ...]
    vertices_mm: tuple[tuple[float, float], ...] = ()
    angles_deg: tuple[float, ...] = ()
    first_side_mm: float | None = None
    height_mm: float | None = None
    rotation_deg: float = 0.0
    position_mm: tuple[float, float] = (0.0, 0.0)  # (x, z) in the system frame


Design = (
    AnamorphicSingleDesign
    | AnamorphicPairDesign
    | BrewsterDesign
    | DispersingDesign
    | FoldDesign
    | WedgeDesign
    | CustomDesign
)


@dataclass(frozen=True, slots=True)
class Requirements:
    """What the system can tolerate; drives the drawing tolerances."""

    pointing_mrad: float = 1.0
    magnification_pct: float = 2.0
    offset_mm: float = 0.5
    wavefront_waves_pv: float = 0.25  # transmitted wavefront budget per part, waves PV
    wavefront_wavelength_nm: float = 632.8
    yield_target: float = 0.95


@dataclass(frozen=True, slots=True)
class CoatingSpec:
    """A coating requirement for the faces of one role."""

    type: str = "antireflection"  # antireflection | mirror | none
    reflectance_max_pct: float | None = 0.5
    reflectance_min_pct: float | None = None


@dataclass(frozen=True, slots=True)
class Fabrication:
    """Fabrication choices."""

    grade: Grade = Grade.PRECISION
    clear_aperture_margin: float = 1.5
    bevel_mm: float = 0.3
    coatings: tuple[tuple[str, CoatingSpec], ...] = (("default", CoatingSpec()),)
    imperfection_notation: ImperfectionNotation = ImperfectionNotation.ISO_10110_7
    min_face_mm: float = 3.0
    max_face_mm: float = 150.0
    angle_tolerance_arcsec: float | None = None  # explicit values override derived classes
    pyramidal_tolerance_arcsec: float | None = None

    def coating_for(self, role: str) -> CoatingSpec:
        """The coating spec for a face role value ("entry", "exit", ...), or the default."""
        table = dict(self.coatings)
        return table.get(role, table.get("default", CoatingSpec()))


@dataclass(frozen=True, slots=True)
class SheetSpec:
    """Drawing-sheet choices."""

    template: str = "a3-landscape"
    projection: str = "first-angle"  # first-angle | third-angle
    decimal_comma: bool = False


@dataclass(frozen=True, slots=True)
class LockedPrism:
    """One solved prism as recorded by ``prismfab solve --write-lock``.

    Args:
        name: prism name ("P1").
        material: catalogue key.
        height_mm: prism height.
        vertices_mm: section polygon in the part frame (CCW, vertex 0 at the origin).
        rotation: pose rotation matrix, row by row (part frame -> system frame).
        translation_mm: pose translation, system frame.
    """

    name: str
    material: str
    height_mm: float
    vertices_mm: tuple[tuple[float, float], ...]
    rotation: tuple[tuple[float, float, float], ...]
    translation_mm: tuple[float, float, float]


@dataclass(frozen=True, slots=True)
class Lock:
    """Solved geometry pinned in the spec, so a later solve gives exactly the same prisms.

    Args:
        prismfab_version: version that wrote the lock.
        family: design family the lock was solved for.
        inputs: (section, digest) pairs: a short hash of each input the geometry depends on
            ("beam", "design", "fabrication", "materials"); the solver refuses a lock whose
            inputs changed since it was written.
        prisms: the prisms in beam order.
    """

    prismfab_version: str
    family: str
    inputs: tuple[tuple[str, str], ...]
    prisms: tuple[LockedPrism, ...]


@dataclass(frozen=True, slots=True)
class Spec:
    """A validated design spec.

    Args:
        format: spec format version (1).
        project, beam, design, requirements, fabrication, sheet: the sections.
        materials_file: an extra user catalogue (absolute path), or "".
        source: file the spec came from ("" for in-memory specs).
        lines: (dotted path, line, column) for every field that came from YAML.
        lock: solved geometry pinned by ``prismfab solve --write-lock``, or None.
    """

    project: Project
    beam: BeamSpec
    design: Design
    requirements: Requirements = field(default_factory=Requirements)
    fabrication: Fabrication = field(default_factory=Fabrication)
    sheet: SheetSpec = field(default_factory=SheetSpec)
    family: Family = Family.ANAMORPHIC_PAIR
    format: int = 1
    materials_file: str = ""
    source: str = ""
    lines: tuple[tuple[str, int, int], ...] = ()
    lock: Lock | None = None

    def line_of(self, path: str) -> int | None:
        """1-based YAML line of a field (or of its nearest parent that has one)."""
        table = {p: ln for p, ln, _ in self.lines}
        while path:
            if path in table:
                return table[path]
            path = path.rpartition(".")[0]
        return None
