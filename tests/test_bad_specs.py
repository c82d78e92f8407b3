"""Bad input never gives a traceback: every corpus file is refused with exit code 2 and one
paragraph that names the field, its YAML line and the fix; nothing is written."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from prismfab.cli import main
from prismfab.errors import SpecError
from prismfab.spec import load
from prismfab.spec.load import MAX_BYTES, load_spec, load_spec_text, templates_dir

CORPUS = Path(__file__).parent / "bad_specs"

# file -> (field path, 1-based line or None, words that must appear in the message)
# Lines follow the corpus files: line 1 is the "# bad input" comment, then the base spec
# (format 2, project 3-6, beam 7-11, design 12-15, fabrication 16-18).
EXPECTED: dict[str, tuple[str, int | None, tuple[str, ...]]] = {
    "absurd_magnification": ("design.magnification", 14, ("(500)", "between 0.1 and 10")),
    "alias_bomb": ("", 4, ("more than 16 YAML aliases", "write the values out")),
    "alias_bomb_in_field": ("", 25, ("YAML aliases",)),
    "band_above_material": ("beam.band_nm.1", 9, ("2100 nm", "400", "2000", "design.materials.0")),
    "band_excludes_wavelength": ("beam.wavelength_nm", 8, ("[790, 800]", "contains")),
    "band_scalar": ("beam.band_nm", 9, ("must be a list", "[a, b]")),
    "band_three_values": ("beam.band_nm", 9, ("3 items", "exactly 2")),
    "birefringent_bare_name": ("design.material", 14, ("sapphire (o)", "sapphire (e)")),
    "bool_as_number": ("design.magnification", 14, ("truth value", "'yes'", "write a number")),
    "coating_mirror_max": ("fabrication.coatings.mirror.reflectance_max_pct", 20,
                           ("mirror", "reflectance_min_pct")),
    "coating_none_reflectance": ("fabrication.coatings.default.reflectance_max_pct", 20,
                                 ("type: none", "remove it")),
    "coating_type_unknown": ("fabrication.coatings.default.type", 20,
                             ("'antireflective'", "did you mean 'antireflection'")),
    "coating_unknown_role": ("fabrication.coatings.hypotenuse", 20,
                             ("not a known key", "internal-reflection")),
    "comments_only": ("", None, ("is empty", "prismfab init")),
    "control_character": ("", 4, ("character YAML does not allow", "delete control")),
    "custom_angles_sum": ("design.angles_deg", 15, ("190", "180")),
    "custom_both_sections": ("design.vertices_mm", 15, ("not both", "one of the two")),
    "custom_clockwise": ("design.vertices_mm", 15, ("clockwise", "reverse their order")),
    "custom_no_exit": ("design.roles", 16, ("leaves", "'exit'")),
    "custom_nonconvex": ("design.vertices_mm.2", 15, ("non-convex", "vertex 2", "move or remove")),
    "custom_repeated_vertex": ("design.vertices_mm.2", 15, ("repeats vertex 1", "remove")),
    "custom_roles_mismatch": ("design.roles", 16, ("3 entries", "4 sides", "exactly 4 roles")),
    "custom_star": ("design.vertices_mm", 15, ("crosses itself", "counter-clockwise")),
    "custom_unknown_role": ("design.roles.2", 16, ("'hypotenuse'", "internal-reflection")),
    "custom_vertex_one_coordinate": ("design.vertices_mm.1", 15, ("1 item", "exactly 2")),
    "date_invalid": ("project.date", 7, ("2026-13-40", "YYYY-MM-DD")),
    "diameter_scalar": ("beam.diameter_mm", 10, ("mapping", "'key: value'")),
    "dispersing_no_target": ("design", 12, ("apex_deg", "resolving_power", "exactly one")),
    "dispersing_two_targets": ("design.resolving_power", 16, ("design.apex_deg", "exactly one")),
    "duplicate_key": ("beam.wavelength_nm", 10, ("twice", "first on line 8", "delete one")),
    "duplicate_section": ("beam", 19, ("twice", "first on line 7")),
    "empty": ("", None, ("is empty", "prismfab init")),
    "exit_tilt_too_large": ("design.exit_tilt_deg", 16, ("at most 10", "'45'")),
    "fold_unknown_type": ("design.type", 15, ("'periscope'", "right-angle", "penta")),
    "format_2": ("format", 2, ("must be 1", "'2'")),
    "format_missing": ("format", 2, ("is missing", "add 'format: 1'")),
    "format_text": ("format", 2, ("whole number", "'one'")),
    "huge_integer": ("design.magnification", 14, ("finite",)),
    "inf_diameter": ("beam.diameter_mm.in_plane", 10, ("finite", "'.inf'", "infinity")),
    "key_not_text": ("beam", 12, ("key '1'", "not a word")),
    "material_and_materials": ("design.material", 16, ("conflicts", "either 'material'")),
    "materials_file_missing": ("materials_file", 19, ("no-such-glass.yaml", "does not exist",
                                                      "relative to the spec file")),
    "materials_three": ("design.materials", 15, ("3 items", "1 to 2")),
    "merge_key": ("sheet", 20, ("merge key", "write the keys out")),
    "min_face_above_max": ("fabrication.min_face_mm", 19, ("60 mm", "50 mm", "smaller")),
    "missing_diameter_axis": ("beam.diameter_mm.out_of_plane", 10, ("is missing",
                                                                    "add 'out_of_plane")),
    "missing_family": ("design.family", 12, ("is missing", "anamorphic-pair", "brewster")),
    "missing_project": ("project", 2, ("is missing", "add 'project")),
    "missing_wavelength": ("beam.wavelength_nm", 7, ("is missing", "add 'wavelength_nm",
                                                     "under 'beam'")),
    "nan_wavelength": ("beam.wavelength_nm", 8, ("finite", "'.nan'", "NaN")),
    "nan_word": ("beam.wavelength_nm", 8, ("must be a number", "'nan'")),
    "negative_diameter": ("beam.diameter_mm.out_of_plane", 10, ("greater than 0", "'-3.6'")),
    "negative_magnification": ("design.magnification", 14, ("greater than 0", "'-3'")),
    "nested_too_deep": ("", 8, ("nested", "four levels")),
    "not_utf8": ("", None, ("not UTF-8", "save the file as UTF-8")),
    "null_required": ("beam.wavelength_nm", 8, ("is empty", "give a value")),
    "number_as_bool": ("design.achromatic", 16, ("true or false", "'1'")),
    "number_as_polarization": ("beam.polarization", 11, ("'1'", "p, s, unpolarized")),
    "part_titles_too_many": ("project.part_titles", 7, ("3 titles", "2 prisms", "at most 2")),
    "prefix_space": ("project.drawing_prefix", 5, ("'FR 2041'", "letters, digits")),
    "prefix_traversal": ("project.drawing_prefix", 5, ("'../../x'", "letters, digits")),
    "python_tag": ("project.title", 4, ("single value", "plain text")),
    "quantity_fraction": ("project.quantity", 6, ("whole number", "'2.5'")),
    "quantity_zero": ("project.quantity", 6, ("at least 1", "'0'")),
    "quoted_number": ("beam.wavelength_nm", 8, ("must be a number", "remove the quotes")),
    "requirement_negative": ("requirements.pointing_mrad", 20, ("greater than 0", "'-1'")),
    "reversed_band": ("beam.band_nm", 9, ("reversed", "[775, 785]")),
    "section_as_list": ("beam", 8, ("mapping", "not a list")),
    "sheet_template_unknown": ("sheet.template", 20, ("'a2-portrait'", "a3-landscape")),
    "tab_indent": ("", 6, ("not valid YAML", "spaces, not tabs")),
    "top_is_list": ("", 2, ("mapping of sections", "not a list")),
    "top_is_text": ("", 2, ("mapping of sections", "'this is not a spec'")),
    "tuning_excludes_magnification": ("design.magnification", 14, ("[1.5, 2.5]",
                                                                   "inside the tuning range")),
    "tuning_reversed": ("design.tuning_range", 16, ("[3.5, 2.5]", "smaller magnification first")),
    "two_documents": ("", 19, ("more than one document", "delete the '---' line")),
    "unit_magnification": ("design.magnification", 14, ("is 1", "family: wedge")),
    "unknown_family": ("design.family", 13, ("'anamorphic-triple'",
                                             "did you mean 'anamorphic-single'")),
    "unknown_grade": ("fabrication.grade", 17, ("'precise'", "did you mean 'precision'")),
    "unknown_key_beam": ("beam.wavelenght_nm", 8, ("not a known key",
                                                    "did you mean 'wavelength_nm'")),
    "unknown_key_other_family": ("design.magnification", 15, ("belongs to", "anamorphic-pair",
                                                              "material, pair")),
    "unknown_key_top": ("fabriction", 16, ("not a known key", "did you mean 'fabrication'")),
    "unknown_material_code": ("design.materials.0", 15, ("unknown material '517462'",
                                                         "did you mean '517642'")),
    "unknown_material_name": ("design.materials.0", 15, ("unknown material 'fused silca'",
                                                         "did you mean 'fused silica'")),
    "unknown_polarization": ("beam.polarization", 11, ("'circular'", "p, s, unpolarized")),
    "wavelength_below_material": ("beam.wavelength_nm", 8, ("300 nm", "400", "2000",
                                                            "design.materials.0")),
    "wavelength_micrometres": ("beam.wavelength_nm", 8, ("at least 100", "780 nm")),
    "wedge_missing_deviation": ("design.deviation_deg", 12, ("is missing", "add 'deviation_deg")),
    "wrong_type_wavelength": ("beam.wavelength_nm", 8, ("must be a number", "'seven-eighty'")),
    "yaml_syntax": ("", 10, ("not valid YAML", "starts on line 9", "brackets")),
    "yield_one": ("requirements.yield_target", 20, ("less than 1", "'1.0'")),
    "zero_diameter": ("beam.diameter_mm.in_plane", 10, ("greater than 0", "'0'")),
}


def _squash(text: str) -> str:
    return re.sub(r"\s+", "", text)


def test_corpus_and_table_match() -> None:
    """Every corpus file has an expectation and every expectation a file (at least 60)."""
    files = sorted(p.stem for p in CORPUS.glob("*.yaml"))
    assert sorted(EXPECTED) == files
    assert len(files) >= 60


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_bad_spec_is_refused_with_field_line_and_fix(name: str) -> None:
    """load_spec raises a SpecError that names the field path, the line and the fix."""
    path, line, words = EXPECTED[name]
    with pytest.raises(SpecError) as info:
        load_spec(CORPUS / f"{name}.yaml")
    err = info.value
    assert (path, line) == (err.path, err.line)
    text = str(err)
    for word in words:
        assert word in text
    if path:
        assert f"field '{path}'" in text
    if line is not None:
        assert f"{name}.yaml:{line}:" in text
    assert err.fix


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_pure_python_parser_gives_the_same_field_and_line(name: str, monkeypatch) -> None:
    """Without libyaml (the pure-Python parser) each file fails on the same field and line."""
    monkeypatch.setattr(load, "_PARSER", yaml.SafeLoader)
    path, line, words = EXPECTED[name]
    with pytest.raises(SpecError) as info:
        load_spec(CORPUS / f"{name}.yaml")
    assert (path, line) == (info.value.path, info.value.line)
    for word in words:
        assert word in str(info.value)


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_check_command_exits_2_with_one_paragraph(name: str, tmp_path: Path, capsys) -> None:
    """`prismfab check` exits 2, prints one paragraph without traceback, writes nothing."""
    spec = tmp_path / f"{name}.yaml"
    shutil.copyfile(CORPUS / f"{name}.yaml", spec)
    before = sorted(tmp_path.rglob("*"))
    assert 2 == main(["check", str(spec)])
    out, err = capsys.readouterr()
    assert "" == out
    assert err.startswith("prismfab check: error: ")
    assert "Traceback" not in err
    assert "\n\n" not in err.strip()
    path, line, words = EXPECTED[name]
    flat = _squash(err)
    for word in (*words, *([f"'{path}'"] if path else []),
                 *([f"{name}.yaml:{line}:"] if line is not None else [])):
        assert _squash(word) in flat
    assert before == sorted(tmp_path.rglob("*"))


def test_fifty_megabyte_file_is_refused_before_parsing(tmp_path: Path, capsys) -> None:
    """A 50 MB file is refused on its size, without being read."""
    big = tmp_path / "big.yaml"
    with big.open("wb") as handle:  # sparse: the loader must not read it (zeros are not YAML)
        handle.truncate(50 * 1024 * 1024)
    assert 2 == main(["check", str(big)])
    err = capsys.readouterr().err
    assert "is too large" in err
    assert str(MAX_BYTES) in err
    assert ["big.yaml"] == [p.name for p in tmp_path.iterdir()]


def test_oversized_text_is_refused() -> None:
    """load_spec_text refuses text over the size limit."""
    with pytest.raises(SpecError, match="too large"):
        load_spec_text("#" * (MAX_BYTES + 1))


@pytest.mark.parametrize("argv", [["check", "no-such-spec.yaml"], ["check", "."]])
def test_missing_file_or_folder_is_bad_input(argv: list[str], tmp_path: Path, monkeypatch,
                                             capsys) -> None:
    """A path that is not a spec file exits 2 with one line saying so."""
    monkeypatch.chdir(tmp_path)
    assert 2 == main(argv)
    err = capsys.readouterr().err
    assert "cannot be read" in err
    assert "Traceback" not in err


_GOOD = (templates_dir() / "specs" / "anamorphic-pair.yaml").read_text(encoding="utf-8")
_TOKENS = [*"abfmnpty_019.-:[]{},&*!|>'\"#\n \t\x07", "format", "beam", "design", "family",
           "wavelength_nm", ": ", "\n  ", "- ", ".nan", ".inf", "~", "<<", "---", "&a", "*a",
           "!!python/name:os.system", "yes", "1e3", "-0.0", "anamorphic-pair", "custom"]
_YAMLISH = st.lists(st.sampled_from(_TOKENS), max_size=60).map("".join)


@st.composite
def _mutated_good_spec(draw: st.DrawFn) -> str:
    text = _GOOD
    for _ in range(draw(st.integers(1, 4))):
        start = draw(st.integers(0, len(text)))
        stop = draw(st.integers(start, min(len(text), start + 40)))
        text = text[:start] + draw(_YAMLISH) + text[stop:]
    return text


def _only_spec_errors(text: str) -> None:
    try:
        load_spec_text(text, source="fuzz.yaml")
    except SpecError as err:
        assert str(err).startswith("fuzz.yaml")


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_YAMLISH)
def test_fuzz_random_text_raises_only_spec_errors(text: str) -> None:
    """Random YAML-ish text either loads or raises SpecError, nothing else."""
    _only_spec_errors(text)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_mutated_good_spec())
def test_fuzz_mutated_spec_raises_only_spec_errors(text: str) -> None:
    """Random edits of a good spec either load or raise SpecError, nothing else."""
    _only_spec_errors(text)
