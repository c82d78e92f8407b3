"""The one table of spec fields, used both to validate YAML and to export the JSON Schema.

``SPEC`` describes every key a spec file may hold: its kind (number, text, choice, list,
section), bounds, whether it is required, and a one-line description with units. The loader
(``prismfab.spec.load``) walks the YAML against this table; ``prismfab.spec.schema`` renders
the same table as a JSON Schema. Defaults are not repeated here: they live in the value objects
of ``prismfab.spec.types`` (``Section.model``), except where a YAML key has no same-named field.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum
from typing import Any

from prismfab.model import FaceRole, Polarization
from prismfab.spec import types as t

__all__ = [
    "COATING_KEYS",
    "COATING_TYPES",
    "FAMILY_SECTIONS",
    "NO_DEFAULT",
    "SPEC",
    "Choice",
    "Field",
    "Flag",
    "Kind",
    "ListOf",
    "Number",
    "Section",
    "Text",
    "Variant",
]

NO_DEFAULT: Any = object()
"""Marker: the field's default comes from the section's model (or it has none)."""


@dataclass(frozen=True)
class Number:
    """A finite number, optionally whole, with bounds (inclusive unless ``exclusive_*``)."""

    minimum: float | None = None
    maximum: float | None = None
    exclusive_minimum: float | None = None
    exclusive_maximum: float | None = None
    integer: bool = False


@dataclass(frozen=True)
class Text:
    """A string; ``pattern`` is a regular expression the whole text must match."""

    pattern: str | None = None
    pattern_rule: str = ""
    nonempty: bool = False
    max_length: int = 200


@dataclass(frozen=True)
class Flag:
    """true or false."""


@dataclass(frozen=True)
class Choice:
    """One of a fixed set of words (mapped to ``enum`` when given)."""

    values: tuple[str, ...]
    enum: type[Enum] | None = None


@dataclass(frozen=True)
class ListOf:
    """A list of items of one kind."""

    item: Kind
    min_items: int = 0
    max_items: int | None = None


@dataclass(frozen=True)
class Field:
    """One key of a section.

    Args:
        name: the YAML key.
        kind: what the value must be.
        doc: one line with the unit, shown in the schema and in error fixes.
        required: the key must be present.
        nullable: ``null`` is accepted and means "let prismfab choose".
        example: a value shown in the fix of a "missing" error.
        default: the schema default when it cannot be read from the section's model.
    """

    name: str
    kind: Kind
    doc: str
    required: bool = False
    nullable: bool = False
    example: str = ""
    default: Any = NO_DEFAULT


@dataclass(frozen=True)
class Section:
    """A mapping with fixed keys; ``model`` supplies the defaults of same-named fields."""

    fields: tuple[Field, ...]
    model: type | None = None
    doc: str = ""

    def field(self, name: str) -> Field | None:
        """The field called ``name``, or None."""
        return next((f for f in self.fields if f.name == name), None)


@dataclass(frozen=True)
class Variant:
    """A mapping whose ``key`` (a choice) selects which section describes the rest."""

    key: str
    cases: tuple[tuple[str, Section], ...]
    doc: str = ""


Kind = Number | Text | Flag | Choice | ListOf | Section | Variant

_POS = Number(exclusive_minimum=0.0)
_NONNEG = Number(minimum=0.0)
_PCT = Number(minimum=0.0, maximum=100.0)
_WAVELENGTH = Number(minimum=100.0, maximum=30000.0)
_MAGNIFICATION = Number(exclusive_minimum=0.0)
_MATERIAL = Text(nonempty=True)
_MATERIAL_DOC = "material name or six-digit glass code, e.g. \"517642\" or \"fused silica\""
_ROLE_VALUES = tuple(r.value for r in FaceRole)

COATING_TYPES = ("antireflection", "mirror", "none")
"""Coating types a spec may ask for."""
COATING_KEYS = ("default", *_ROLE_VALUES)
"""Keys of ``fabrication.coatings``: ``default`` and each face role."""


def _in_out(doc: str, kind: Number, *, required: bool, default: Any = NO_DEFAULT) -> Section:
    return Section(
        (
            Field("in_plane", kind, f"{doc} in the plane of incidence (x)", required=required,
                  example="1.2", default=default),
            Field("out_of_plane", kind, f"{doc} out of plane (y, prism height)",
                  required=required, example="3.6", default=default),
        ),
        doc=doc,
    )


_PROJECT = Section(
    (
        Field("title", Text(nonempty=True), "title of the assembly, for the title blocks",
              required=True, example="Fluorescence reader beam circularizer"),
        Field("drawing_prefix", Text(r"[A-Za-z0-9][A-Za-z0-9_-]{0,39}",
                                     "letters, digits, '-' and '_' only (at most 40), "
                                     "starting with a letter or digit", nonempty=True),
              "drawing number prefix; parts become PREFIX-01, PREFIX-02, ...", required=True,
              example="FR-2041"),
        Field("quantity", Number(minimum=1, maximum=1_000_000, integer=True),
              "number of sets to quote"),
        Field("company", Text(), "company named in the title blocks"),
        Field("drawn_by", Text(), "name in the 'drawn by' field"),
        Field("checked_by", Text(), "name in the 'checked by' field"),
        Field("approved_by", Text(), "name in the 'approved by' field"),
        Field("date", Text(r"(\d{4}-\d{2}-\d{2})?", "an ISO 8601 date YYYY-MM-DD, or \"\""),
              "date of issue, YYYY-MM-DD (empty: the revision record's date)"),
        Field("part_titles", ListOf(Text(nonempty=True), max_items=8),
              "optional title per prism, in beam order"),
    ),
    model=t.Project,
    doc="title-block and quote data",
)

_BEAM = Section(
    (
        Field("wavelength_nm", _WAVELENGTH, "design wavelength in nm (vacuum)", required=True,
              example="780"),
        Field("band_nm", ListOf(_WAVELENGTH, 2, 2),
              "[low, high] band in nm the design must hold over (default: the design wavelength)",
              example="[775, 785]"),
        Field("diameter_mm", _in_out("1/e^2 beam diameter in mm", Number(
            exclusive_minimum=0.0, maximum=500.0), required=True), "1/e^2 beam diameters in mm",
              required=True, example="{in_plane: 1.2, out_of_plane: 3.6}"),
        Field("polarization", Choice(tuple(p.value for p in Polarization), Polarization),
              "input polarisation relative to the plane of incidence"),
        Field("divergence_mrad", _in_out("full-angle 1/e^2 divergence in mrad", Number(
            minimum=0.0, maximum=500.0), required=False, default=0.0),
              "full-angle 1/e^2 divergence in mrad"),
        Field("alignment", Section(
            (
                Field("decenter_mm", Number(minimum=0.0, maximum=50.0),
                      "beam decentre the clear apertures must absorb, mm"),
                Field("tilt_mrad", Number(minimum=0.0, maximum=100.0),
                      "beam tilt the clear apertures must absorb, mrad"),
            ),
            model=t.Alignment,
        ), "alignment allowance of the input beam"),
    ),
    doc="the input beam",
)

_ANAMORPHIC_PAIR = Section(
    (
        Field("magnification", _MAGNIFICATION,
              "in-plane magnification M (output width / input width; < 1 compresses)",
              required=True, example="3.0"),
        Field("materials", ListOf(_MATERIAL, 1, 2), "one or two materials, in beam order",
              example="[\"517642\"]"),
        Field("material", _MATERIAL, "one material for both prisms (instead of 'materials')"),
        Field("achromatic", Flag(), "zero first-order angular dispersion at the design wavelength"),
        Field("normal_exit", Flag(), "exit faces at (near) normal incidence"),
        Field("exit_tilt_deg", Number(minimum=0.0, maximum=10.0),
              "anti-feedback tilt of the normal exit faces, degrees"),
        Field("separation_mm", Number(exclusive_minimum=0.0, maximum=1000.0),
              "chief-ray path between the prisms in mm (null: compact)", nullable=True),
        Field("tuning_range", ListOf(_MAGNIFICATION, 2, 2),
              "[M_min, M_max] the pair must reach by rotating the prisms", nullable=True),
    ),
    model=t.AnamorphicPairDesign,
)

_ANAMORPHIC_SINGLE = Section(
    (
        Field("magnification", _MAGNIFICATION, "in-plane magnification M", required=True,
              example="2.0"),
        Field("material", _MATERIAL, _MATERIAL_DOC, required=True, example="\"517642\""),
        Field("output", Choice(tuple(m.value for m in t.OutputMode), t.OutputMode),
              "deviated, parallel (internal reflection) or collinear with the input"),
        Field("entry_aoi_deg", Number(minimum=0.0, exclusive_maximum=90.0),
              "fixed entry angle of incidence in degrees (null: solve for normal exit)",
              nullable=True),
        Field("exit_tilt_deg", Number(minimum=0.0, maximum=10.0),
              "anti-feedback tilt of the normal face, degrees (M re-balanced after the tilt)"),
    ),
    model=t.AnamorphicSingleDesign,
)

_BREWSTER = Section(
    (
        Field("material", _MATERIAL, _MATERIAL_DOC, required=True, example="\"fused silica\""),
        Field("pair", Flag(), "a Brewster prism pair (group-delay dispersion control)"),
        Field("separation_mm", Number(exclusive_minimum=0.0, maximum=5000.0),
              "apex-to-apex separation of a pair, mm"),
    ),
    model=t.BrewsterDesign,
)

_DISPERSING = Section(
    (
        Field("material", _MATERIAL, _MATERIAL_DOC, required=True, example="\"620364\""),
        Field("apex_deg", Number(exclusive_minimum=0.0, maximum=120.0),
              "apex angle in degrees (one of the three targets)", nullable=True),
        Field("dispersion_mrad_per_nm", Number(exclusive_minimum=0.0, maximum=100.0),
              "angular dispersion at minimum deviation, mrad/nm (one of the three targets)",
              nullable=True),
        Field("resolving_power", Number(exclusive_minimum=0.0, maximum=1e7),
              "resolving power lambda/dlambda (one of the three targets)", nullable=True),
        Field("littrow", Flag(), "coated back face: light returns near its own path"),
    ),
    model=t.DispersingDesign,
)

_FOLD = Section(
    (
        Field("material", _MATERIAL, _MATERIAL_DOC, required=True, example="\"517642\""),
        Field("type", Choice(tuple(f.value for f in t.FoldType), t.FoldType), "fold prism type"),
        Field("coat_reflecting_faces", Flag(),
              "coat the reflecting faces (null: only where TIR fails)", nullable=True),
    ),
    model=t.FoldDesign,
)

_WEDGE = Section(
    (
        Field("material", _MATERIAL, _MATERIAL_DOC, required=True, example="\"fused silica\""),
        Field("deviation_deg", Number(exclusive_minimum=0.0, maximum=45.0),
              "required beam deviation in degrees (for a pair: the maximum, wedges aligned)",
              required=True, example="2.0"),
        Field("pair", Flag(), "a rotating wedge pair (beam steering)"),
        Field("incidence_deg", Number(minimum=0.0, maximum=80.0),
              "angle of incidence on the first face, degrees"),
        Field("thickness_mm", Number(exclusive_minimum=0.0, maximum=500.0),
              "centre thickness in mm (null: from the beam)", nullable=True),
    ),
    model=t.WedgeDesign,
)

_XY = ListOf(Number(minimum=-10000.0, maximum=10000.0), 2, 2)
_CUSTOM = Section(
    (
        Field("material", _MATERIAL, _MATERIAL_DOC, required=True, example="\"517642\""),
        Field("roles", ListOf(Choice(_ROLE_VALUES), 3, 12),
              "one role per face (side i runs from vertex i to vertex i+1)", required=True,
              example="[entry, exit, ground]"),
        Field("vertices_mm", ListOf(_XY, 3, 12),
              "section vertices [[x, y], ...] in mm, counter-clockwise, part frame"),
        Field("angles_deg", ListOf(Number(exclusive_minimum=0.0, exclusive_maximum=180.0), 3, 12),
              "interior angles in degrees, counter-clockwise from vertex 0"),
        Field("first_side_mm", Number(exclusive_minimum=0.0, maximum=1000.0),
              "length of side 0 in mm (with angles_deg)", nullable=True),
        Field("height_mm", Number(exclusive_minimum=0.0, maximum=1000.0),
              "prism height in mm (null: from the beam)", nullable=True),
        Field("rotation_deg", Number(minimum=-360.0, maximum=360.0),
              "rotation of the part about the system y axis, degrees"),
        Field("position_mm", _XY, "(x, z) of vertex 0 in the system frame, mm"),
    ),
    model=t.CustomDesign,
)

FAMILY_SECTIONS: tuple[tuple[str, Section], ...] = (
    (t.Family.ANAMORPHIC_SINGLE.value, _ANAMORPHIC_SINGLE),
    (t.Family.ANAMORPHIC_PAIR.value, _ANAMORPHIC_PAIR),
    (t.Family.BREWSTER.value, _BREWSTER),
    (t.Family.DISPERSING.value, _DISPERSING),
    (t.Family.FOLD.value, _FOLD),
    (t.Family.WEDGE.value, _WEDGE),
    (t.Family.CUSTOM.value, _CUSTOM),
)
"""Family name -> the section of its design fields (the keys besides ``family``)."""

_REQUIREMENTS = Section(
    (
        Field("pointing_mrad", Number(exclusive_minimum=0.0, maximum=1000.0),
              "allowed output pointing error, mrad"),
        Field("magnification_pct", Number(exclusive_minimum=0.0, maximum=100.0),
              "allowed magnification error, percent"),
        Field("offset_mm", Number(exclusive_minimum=0.0, maximum=100.0),
              "allowed lateral offset error of the output beam, mm"),
        Field("wavefront_waves_pv", Number(exclusive_minimum=0.0, maximum=10.0),
              "transmitted wavefront budget per part, waves PV"),
        Field("wavefront_wavelength_nm", _WAVELENGTH,
              "test wavelength of the wavefront budget, nm"),
        Field("yield_target", Number(exclusive_minimum=0.0, exclusive_maximum=1.0),
              "fraction of assemblies that must meet the requirements"),
    ),
    model=t.Requirements,
    doc="what the system can tolerate; drives the drawing tolerances",
)

_COATING = Section(
    (
        Field("type", Choice(COATING_TYPES), "antireflection, mirror or none"),
        Field("reflectance_max_pct", _PCT,
              "largest reflectance per surface, percent (antireflection; default 0.5)",
              nullable=True),
        Field("reflectance_min_pct", _PCT, "smallest reflectance, percent (mirror; default 99)",
              nullable=True),
    ),
    model=t.CoatingSpec,
)

_FABRICATION = Section(
    (
        Field("grade", Choice(tuple(g.value for g in t.Grade), t.Grade),
              "default tolerance class"),
        Field("clear_aperture_margin", Number(minimum=1.0, maximum=5.0),
              "clear aperture >= margin x traced 1/e^2 footprint (+ alignment allowance)"),
        Field("bevel_mm", Number(minimum=0.0, maximum=5.0), "protective bevel width, mm"),
        Field("coatings", Section(tuple(Field(k, _COATING, f"coating of {k} faces")
                                        for k in COATING_KEYS)),
              "coating per face role; 'default' applies to every optical face not named",
              default={"default": {"type": "antireflection", "reflectance_max_pct": 0.5}}),
        Field("surface_imperfections",
              Choice(tuple(n.value for n in t.ImperfectionNotation), t.ImperfectionNotation),
              "notation of surface imperfections on the drawing",
              default=t.ImperfectionNotation.ISO_10110_7.value),
        Field("min_face_mm", Number(exclusive_minimum=0.0, maximum=1000.0),
              "smallest face length the shop should be asked for, mm"),
        Field("max_face_mm", Number(exclusive_minimum=0.0, maximum=2000.0),
              "largest face length allowed, mm"),
        Field("angle_tolerance_arcsec", Number(exclusive_minimum=0.0, maximum=3600.0),
              "explicit angle tolerance, arcsec (null: derived)", nullable=True),
        Field("pyramidal_tolerance_arcsec", Number(exclusive_minimum=0.0, maximum=3600.0),
              "explicit pyramidal tolerance, arcsec (null: derived)", nullable=True),
    ),
    model=t.Fabrication,
    doc="fabrication choices",
)

_SHEET = Section(
    (
        Field("template", Choice(("a3-landscape", "a4-landscape")), "drawing sheet size"),
        Field("projection", Choice(("first-angle", "third-angle")),
              "projection method (ISO 5456-2)"),
        Field("decimal_comma", Flag(), "write decimals with a comma on the drawings"),
    ),
    model=t.SheetSpec,
    doc="drawing-sheet choices",
)

_HEX16 = Text(r"[0-9a-f]{16}", "16 lower-case hexadecimal digits", nonempty=True)
_LOCKED_PRISM = Section(
    (
        Field("name", Text(nonempty=True), "prism name", required=True, example="P1"),
        Field("material", _MATERIAL, "catalogue key of the material", required=True),
        Field("height_mm", Number(exclusive_minimum=0.0, maximum=2000.0), "prism height, mm",
              required=True),
        Field("vertices_mm", ListOf(_XY, 3, 16), "section vertices in the part frame, mm",
              required=True),
        Field("rotation", ListOf(ListOf(Number(minimum=-1.0, maximum=1.0), 3, 3), 3, 3),
              "pose rotation matrix, row by row", required=True),
        Field("translation_mm", ListOf(Number(minimum=-1e5, maximum=1e5), 3, 3),
              "pose translation in the system frame, mm", required=True),
    ),
    doc="one solved prism",
)
_LOCK = Section(
    (
        Field("prismfab_version", Text(nonempty=True, max_length=40),
              "prismfab version that wrote the lock", required=True, example="\"0.1.0\""),
        Field("family", Choice(tuple(f.value for f in t.Family)),
              "design family the lock was solved for", required=True),
        Field("inputs", Section(tuple(Field(k, _HEX16, f"digest of the {k} inputs",
                                            required=True)
                                      for k in ("beam", "design", "fabrication", "materials"))),
              "digests of the inputs the geometry depends on", required=True),
        Field("prisms", ListOf(_LOCKED_PRISM, 1, 8), "the solved prisms, in beam order",
              required=True),
    ),
    doc="solved geometry written by 'prismfab solve --write-lock'",
)

SPEC = Section(
    (
        Field("format", Number(minimum=1, maximum=1, integer=True), "spec format version (1)",
              required=True, example="1", default=1),
        Field("project", _PROJECT, _PROJECT.doc, required=True,
              example="{title: ..., drawing_prefix: ...}"),
        Field("beam", _BEAM, _BEAM.doc, required=True, example="{wavelength_nm: ..., ...}"),
        Field("design", Variant("family", FAMILY_SECTIONS, "the prism family and its targets"),
              "the prism family and its targets", required=True,
              example="{family: anamorphic-pair, ...}"),
        Field("requirements", _REQUIREMENTS, _REQUIREMENTS.doc),
        Field("fabrication", _FABRICATION, _FABRICATION.doc),
        Field("sheet", _SHEET, _SHEET.doc),
        Field("materials_file", Text(nonempty=True),
              "extra material catalogue (YAML), relative to the spec file"),
        Field("lock", _LOCK, _LOCK.doc),
    ),
    doc="prismfab design spec",
)
"""The whole spec."""
