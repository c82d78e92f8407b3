"""The spec loader: starter specs load, lines are recorded, enums mapped, defaults applied,
cross-field rules enforced, and the JSON Schema agrees with the loader's field table."""

from __future__ import annotations

import dataclasses
import pickle
from pathlib import Path
from typing import Any

import pytest
import yaml

from prismfab.cli import main
from prismfab.errors import MaterialError, SpecError
from prismfab.model import Polarization
from prismfab.spec import json_schema, load_spec, load_spec_text
from prismfab.spec import types as t
from prismfab.spec.load import templates_dir
from prismfab.spec.fields import SPEC, Section

STARTERS = sorted((templates_dir() / "specs").glob("*.yaml"))

MINIMAL = """\
format: 1
project: {title: Minimal, drawing_prefix: MIN-1}
beam:
  wavelength_nm: 780
  diameter_mm: {in_plane: 1.2, out_of_plane: 3.6}
design:
  family: anamorphic-pair
  magnification: 3.0
  material: "517642"
"""


def _with_design(body: str) -> str:
    head = MINIMAL.split("design:")[0]
    return head + "design:\n" + body


def test_every_family_has_a_starter_spec() -> None:
    """templates/specs holds one starter spec per family."""
    assert sorted(f.value for f in t.Family) == [p.stem for p in STARTERS]


@pytest.mark.parametrize("path", STARTERS, ids=lambda p: p.stem)
def test_starter_spec_loads_and_checks(path: Path, capsys) -> None:
    """Each starter spec loads, is of its family, and `check` exits 0 with a summary."""
    spec = load_spec(path)
    assert path.stem == spec.family.value
    assert str(path) == spec.source
    assert 0 == main(["check", str(path)])
    out = " ".join(capsys.readouterr().out.split())
    assert f"{path.stem}," in out
    assert f"{spec.beam.wavelength_nm:g} nm" in out


@pytest.mark.parametrize("path", STARTERS, ids=lambda p: p.stem)
def test_lines_point_at_the_keys(path: Path) -> None:
    """Every recorded field path points at the line and column where its key or value is."""
    lines = path.read_text(encoding="utf-8").splitlines()
    spec = load_spec(path)
    assert spec.lines
    for dotted, line, column in spec.lines:
        text = lines[line - 1]
        last = dotted.rpartition(".")[2]
        if last.isdigit():  # a list item: the column is inside a list on that line
            assert "[" in text[:column]
        else:
            assert last in text, (dotted, text)
    assert spec.line_of("design.family") == next(
        i for i, s in enumerate(lines, 1) if s.strip().startswith("family:"))


def test_starter_lines_cover_every_key() -> None:
    """Each key written in the pair starter has an entry in Spec.lines."""
    path = templates_dir() / "specs" / "anamorphic-pair.yaml"
    spec = load_spec(path)
    recorded = {p for p, _, _ in spec.lines}

    def walk(node: Any, prefix: str) -> None:
        if isinstance(node, dict):
            for key, value in node.items():
                dotted = f"{prefix}.{key}" if prefix else key
                assert dotted in recorded
                walk(value, dotted)

    walk(yaml.safe_load(path.read_text(encoding="utf-8")), "")


def test_enums_are_mapped() -> None:
    """Words become enums once, case-insensitively."""
    spec = load_spec_text(MINIMAL.replace("diameter_mm", "polarization: S\n  diameter_mm")
                          + "fabrication: {grade: High-Precision, "
                            "surface_imperfections: mil-prf-13830b}\n")
    assert Polarization.S is spec.beam.polarization
    assert t.Grade.HIGH_PRECISION is spec.fabrication.grade
    assert t.ImperfectionNotation.MIL_PRF_13830B is spec.fabrication.imperfection_notation
    assert t.Family.ANAMORPHIC_PAIR is spec.family
    fold = load_spec_text(_with_design("  family: fold\n  material: \"517642\"\n  type: penta\n"))
    assert t.FoldType.PENTA is fold.design.type
    single = load_spec_text(_with_design(
        "  family: anamorphic-single\n  magnification: 2\n  material: \"517642\"\n"
        "  output: collinear\n"))
    assert t.OutputMode.COLLINEAR is single.design.output


def test_defaults_are_applied() -> None:
    """Omitted sections and fields take the value objects' defaults."""
    spec = load_spec_text(MINIMAL)
    assert (780.0, 780.0) == spec.beam.band_nm
    assert t.Requirements() == spec.requirements
    assert t.Fabrication() == spec.fabrication
    assert t.SheetSpec() == spec.sheet
    assert t.Alignment() == spec.beam.alignment
    assert t.Project("Minimal", "MIN-1") == spec.project
    assert ("517642",) == spec.design.materials
    beam = spec.beam
    assert (0.0, 0.0) == (beam.divergence_in_plane_mrad, beam.divergence_out_of_plane_mrad)
    assert "" == spec.materials_file
    assert isinstance(spec.beam.wavelength_nm, float)


def test_spec_is_frozen() -> None:
    """The loaded spec cannot be changed in place."""
    spec = load_spec_text(MINIMAL)
    with pytest.raises(dataclasses.FrozenInstanceError):
        spec.format = 2  # type: ignore[misc]


def test_material_names_are_canonical_keys() -> None:
    """Any accepted spelling of a material is stored as its catalogue key."""
    text = MINIMAL.replace('material: "517642"', 'materials: ["517642 Borosilicate Crown", '
                           '"Fused  Silica"]')
    assert ("517642", "fused silica") == load_spec_text(text).design.materials


def test_unquoted_glass_code_is_accepted() -> None:
    """An unquoted six-digit code (a YAML integer) still names the glass."""
    spec = load_spec_text(MINIMAL.replace('"517642"', "785257"))
    assert ("785257",) == spec.design.materials


def test_exponent_without_sign_is_a_number() -> None:
    """'1.5e2' (text to YAML 1.1) is read as the number an engineer means."""
    spec = load_spec_text(MINIMAL + "  separation_mm: 1.5e2\n")
    assert 150.0 == spec.design.separation_mm


def test_unit_magnification_allowed_inside_a_tuning_range() -> None:
    """M = 1 is refused alone but accepted as the design point of a tunable pair."""
    text = MINIMAL.replace("magnification: 3.0", "magnification: 1.0")
    with pytest.raises(SpecError, match="changes nothing"):
        load_spec_text(text)
    spec = load_spec_text(text + "  tuning_range: [0.8, 2.5]\n")
    assert (0.8, 2.5) == spec.design.tuning_range


def test_coatings_take_type_defaults_in_role_order() -> None:
    """A mirror coating defaults to R >= 99 %; 'default' always comes first."""
    spec = load_spec_text(MINIMAL + "fabrication:\n  coatings:\n    mirror: {type: mirror}\n"
                          "    exit: {reflectance_max_pct: 0.25}\n")
    coatings = spec.fabrication.coatings
    assert ("default", "exit", "mirror") == tuple(k for k, _ in coatings)
    assert t.CoatingSpec("mirror", None, 99.0) == spec.fabrication.coating_for("mirror")
    assert t.CoatingSpec("antireflection", 0.25, None) == spec.fabrication.coating_for("exit")
    assert t.CoatingSpec() == spec.fabrication.coating_for("entry")


def test_custom_triangle_from_angles() -> None:
    """A custom section may be a triangle given by its angles and first side."""
    spec = load_spec_text(_with_design(
        "  family: custom\n  material: fused silica\n  angles_deg: [30, 60, 90]\n"
        "  first_side_mm: 20\n  roles: [entry, mirror, exit]\n  position_mm: [0, 10]\n"))
    assert (30.0, 60.0, 90.0) == spec.design.angles_deg
    assert (0.0, 10.0) == spec.design.position_mm
    assert () == spec.design.vertices_mm


def test_custom_angles_need_first_side() -> None:
    """angles_deg without first_side_mm names the missing field."""
    with pytest.raises(SpecError) as info:
        load_spec_text(_with_design("  family: custom\n  material: fused silica\n"
                                    "  angles_deg: [30, 60, 90]\n  roles: [entry, mirror, exit]\n"))
    assert "design.first_side_mm" == info.value.path


def test_dispersing_each_single_target_is_accepted() -> None:
    """Each of the three dispersing targets is enough on its own."""
    for target in ("apex_deg: 60", "dispersion_mrad_per_nm: 0.2", "resolving_power: 1500"):
        spec = load_spec_text(_with_design(f"  family: dispersing\n  material: \"620364\"\n"
                                           f"  {target}\n"))
        key, value = target.split(": ")
        assert float(value) == getattr(spec.design, key)


def test_materials_file_is_resolved_relative_to_the_spec(tmp_path: Path) -> None:
    """materials_file is found next to the spec and its entries can be used."""
    (tmp_path / "glass").mkdir()
    (tmp_path / "glass" / "melt.yaml").write_text(
        "format: 1\nmaterials:\n  lot 7 crown:\n    code: \"517642\"\n    type: borosilicate "
        "crown\n    formula: sellmeier-c\n    coefficients:\n      B: [1.03961212, 0.231792344,"
        " 1.01046945]\n      C_um2: [0.00600069867, 0.0200179144, 103.560653]\n    range_um: "
        "[0.4, 2.0]\n    temperature_c: 20\n    source: \"melt data sheet, lot 7\"\n",
        encoding="utf-8")
    spec_path = tmp_path / "spec.yaml"
    spec_path.write_text(MINIMAL.replace('"517642"', "lot 7 crown")
                         + "materials_file: glass/melt.yaml\n", encoding="utf-8")
    spec = load_spec(spec_path)
    assert str((tmp_path / "glass" / "melt.yaml").resolve()) == spec.materials_file
    assert ("lot 7 crown",) == spec.design.materials


def test_material_errors_carry_path_and_line() -> None:
    """An unknown material is a MaterialError naming design.material and its line."""
    with pytest.raises(MaterialError) as info:
        load_spec_text(_with_design("  family: brewster\n  material: unobtainium\n"),
                       source="x.yaml")
    assert ("design.material", 8) == (info.value.path, info.value.line)


@pytest.mark.parametrize("cls", [SpecError, MaterialError])
def test_errors_pickle_with_their_fields(cls: type[SpecError]) -> None:
    """SpecError and MaterialError survive pickling with every field."""
    err = cls("beam.band_nm", "is reversed", line=9, column=3, fix="write [low, high]",
              source="a.yaml")
    back = pickle.loads(pickle.dumps(err))
    assert type(err) is type(back)
    fields = ("path", "problem", "line", "column", "fix", "source")
    assert [getattr(err, f) for f in fields] == [getattr(back, f) for f in fields]
    assert str(err) == str(back)


def test_loaded_error_pickles() -> None:
    """An error raised by the loader pickles with its line."""
    with pytest.raises(SpecError) as info:
        load_spec_text(MINIMAL.replace("780", "-780"), source="m.yaml")
    back = pickle.loads(pickle.dumps(info.value))
    assert ("beam.wavelength_nm", 4, "m.yaml") == (back.path, back.line, back.source)


# ----------------------------------------------------------------------------- JSON Schema


def _conforms(value: Any, schema: dict[str, Any], root: dict[str, Any], where: str) -> None:
    """A small JSON Schema checker for the keywords json_schema() uses."""
    if "$ref" in schema:
        schema = root["$defs"][schema["$ref"].rpartition("/")[2]]
    if "oneOf" in schema:
        family = value["family"]
        matches = [s for s in schema["oneOf"]
                   if root["$defs"][s["$ref"].rpartition("/")[2]]["properties"]["family"][
                       "const"] == family]
        assert 1 == len(matches), where
        return _conforms(value, matches[0], root, where)
    if "anyOf" in schema:
        if value is None:
            return
        return _conforms(value, schema["anyOf"][0], root, where)
    if "const" in schema:
        assert schema["const"] == value, where
        return
    kind = schema["type"]
    python = {"object": dict, "array": list, "string": str, "boolean": bool,
              "number": (int, float), "integer": int}[kind]
    assert isinstance(value, python) and not (kind in ("number", "integer")
                                              and isinstance(value, bool)), where
    if kind == "object":
        assert set(value) <= set(schema["properties"]), where
        assert set(schema.get("required", ())) <= set(value), where
        for key, item in value.items():
            _conforms(item, schema["properties"][key], root, f"{where}.{key}")
    elif kind == "array":
        assert schema["minItems"] <= len(value) <= schema.get("maxItems", len(value)), where
        for i, item in enumerate(value):
            _conforms(item, schema["items"], root, f"{where}.{i}")
    elif kind == "string" and "enum" in schema:
        assert value in schema["enum"], where
    elif kind in ("number", "integer"):
        assert schema.get("minimum", value) <= value <= schema.get("maximum", value), where
        assert value > schema.get("exclusiveMinimum", value - 1), where


@pytest.mark.parametrize("path", STARTERS, ids=lambda p: p.stem)
def test_starter_specs_conform_to_the_json_schema(path: Path) -> None:
    """Each starter spec conforms to the exported schema."""
    schema = json_schema()
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    data["project"].setdefault("date", "")
    data["project"]["date"] = str(data["project"]["date"])
    if "design" in data and isinstance(data["design"].get("material"), int):
        data["design"]["material"] = str(data["design"]["material"])
    _conforms(data, schema, schema, "")


def test_schema_is_draft_2020_12_with_every_field() -> None:
    """The schema names its draft and holds every field of the table."""
    schema = json_schema()
    assert "https://json-schema.org/draft/2020-12/schema" == schema["$schema"]
    assert [f.name for f in SPEC.fields] == list(schema["properties"])
    assert sorted(f.value for f in t.Family) == sorted(schema["$defs"])
    beam = SPEC.field("beam")
    assert beam is not None and isinstance(beam.kind, Section)
    assert [f.name for f in beam.kind.fields] == list(schema["properties"]["beam"]["properties"])


def test_schema_defaults_are_the_value_object_defaults() -> None:
    """Defaults shown in the schema come from the value objects."""
    schema = json_schema()
    req = schema["properties"]["requirements"]["properties"]
    for f in dataclasses.fields(t.Requirements):
        assert f.default == req[f.name]["default"]
    pair = schema["$defs"]["anamorphic-pair"]["properties"]
    assert t.AnamorphicPairDesign.__dataclass_fields__["exit_tilt_deg"].default == \
        pair["exit_tilt_deg"]["default"]
    assert t.Grade.PRECISION.value == schema["properties"]["fabrication"]["properties"][
        "grade"]["default"]
