"""Unit tests of prismfab.materials: formulas, lookup, user catalogue files, the command."""

from __future__ import annotations

import dataclasses
import json
import os
import pickle
import re
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

import prismfab.materials as pm
from prismfab.cli import main
from prismfab.errors import MaterialError
from prismfab.materials.catalogue import Material, shipped
from prismfab.materials.formulas import (
    Dispersion,
    glass_code,
    polynomial,
    sellmeier_c,
    sellmeier_constant,
)

SHIPPED_FILE = Path(pm.__file__).parent / "data" / "catalogue.yaml"

GOOD_USER_FILE = """\
format: 1
materials:
  test crown:
    type: crown
    formula: sellmeier-c
    coefficients:
      B: [1.03961212, 0.231792344, 1.01046945]
      C_um2: [0.00600069867, 0.0200179144, 103.560653]
    range_um: [0.4, 2.0]
    temperature_c: 22
    source: unit-test entry
    aliases: [tc-1]
  "517642":
    code: "517642"
    type: borosilicate crown
    formula: sellmeier-c
    coefficients:
      B: [1.03961212, 0.231792344, 1.01046945]
      C_um2: [0.00600069867, 0.0200179144, 103.560653]
    range_um: [0.35, 2.5]
    temperature_c: 20
    source: melt sheet of the unit test
"""


def write(tmp_path: Path, text: str, name: str = "user.yaml") -> str:
    path = tmp_path / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return str(path)


def entry(**fields: str) -> str:
    """A one-entry user file; fields replace the defaults, and the value 'DROP' removes one."""
    base = {
        "formula": "sellmeier-c",
        "coefficients": "{B: [1.0], C_um2: [0.01]}",
        "range_um": "[0.4, 2.0]",
        "source": "unit test",
    }
    base.update(fields)
    body = "".join(f"    {k}: {v}\n" for k, v in base.items() if v != "DROP")
    return "format: 1\nmaterials:\n  my glass:\n" + body


# --- formulas ------------------------------------------------------------------------------


def test_scalar_in_float_out_array_in_array_out() -> None:
    """n, dn/dλ and group index keep the input's kind and shape."""
    m = pm.get("fused silica")
    assert type(m.n(632.8)) is float
    assert type(m.n(np.float64(632.8))) is float
    grid = np.array([[500.0, 600.0], [700.0, 800.0]])
    for method in (m.n, m.dn_dlambda_per_um, m.group_index):
        out = method(grid)
        assert isinstance(out, np.ndarray) and out.shape == (2, 2)
        assert out[1, 0] == pytest.approx(method(700.0), rel=1e-15)
    assert m.n([500.0, 600.0]).shape == (2,)


@pytest.mark.parametrize("material", shipped().materials, ids=lambda m: m.key)
def test_analytic_dn_dlambda_matches_central_difference(material: Material) -> None:
    """The analytic derivative agrees with a central difference across the valid range."""
    low, high = material.range_nm
    lam = np.geomspace(low * 1.01, high * 0.99, 9)
    h_nm = lam * 1e-5
    numeric = (material.n(lam + h_nm) - material.n(lam - h_nm)) / (2 * h_nm * 1e-3)
    np.testing.assert_allclose(material.dn_dlambda_per_um(lam), numeric, rtol=1e-5, atol=1e-9)


def test_group_index_is_derivative_of_n_sigma() -> None:
    """n_g = d(nσ)/dσ (σ = 1/λ) equals n − λ dn/dλ."""
    m = pm.get("785257")
    lam_um = 0.78
    sigma, h = 1 / lam_um, 1e-5
    n_sigma = lambda s: s * m.n(1000.0 / s)  # noqa: E731
    numeric = (n_sigma(sigma + h) - n_sigma(sigma - h)) / (2 * h)
    assert m.group_index(780.0) == pytest.approx(numeric, abs=1e-8)
    assert m.group_index(780.0) > m.n(780.0)  # normal dispersion


def test_sellmeier_constant_and_polynomial_forms() -> None:
    """The extra-constant and polynomial forms evaluate as documented."""
    lam = 1.3
    sc = sellmeier_constant(0.25, [1.0], [0.01])
    assert sc.n_squared(lam) == pytest.approx(1 + 0.25 + lam**2 / (lam**2 - 0.01), rel=1e-15)
    poly = polynomial([2.0, 0.01, 0.02, 0.003, 0.0004], [0.05], [0.3])
    expected = 2.0 + 0.01 * lam**2 + 0.02 / lam**2 + 0.003 / lam**4 + 0.0004 / lam**6
    expected += 0.05 / (lam**2 - 0.09)
    assert poly.n_squared(lam) == pytest.approx(expected, rel=1e-15)
    assert poly.dn2_dlambda(lam) == pytest.approx(
        (poly.n_squared(lam + 1e-6) - poly.n_squared(lam - 1e-6)) / 2e-6, rel=1e-7
    )


def test_dispersion_rejects_mismatched_terms() -> None:
    """A Dispersion with more B than C values cannot be built."""
    with pytest.raises(ValueError, match="differ in length"):
        Dispersion(1.0, b=(1.0, 2.0), c_um2=(0.01,))
    assert sellmeier_c([1.0], [0.01]).poles_um2 == (0.01,)


@pytest.mark.parametrize(
    ("nd", "vd", "code"),
    [(1.5168, 64.17, "517642"), (1.62004, 36.37, "620364"), (1.0015, 99.94, "002999")],
)
def test_glass_code_rounds_half_up(nd: float, vd: float, code: str) -> None:
    """Both halves of the code round to nearest; 1.6200 and 36.37 give 620364."""
    assert glass_code(nd, vd) == code


def test_glass_code_refuses_what_does_not_fit() -> None:
    """nd ≥ 2 or vd ≥ 100 has no six-digit code."""
    with pytest.raises(ValueError, match="do not fit three digits"):
        glass_code(2.4, 30.0)
    with pytest.raises(MaterialError, match="six-digit glass code of magnesium fluoride"):
        _ = pm.get("magnesium fluoride (o)").glass_code


# --- lookup --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("name", "key"),
    [
        ("fused silica", "fused silica"),
        ("Fused  Silica", "fused silica"),
        ("CaF2", "calcium fluoride"),
        ("517642", "517642"),
        ("517642 Borosilicate Crown", "517642"),
        ("785258 dense flint", "785258"),
        ("sapphire (O)", "sapphire (o)"),
        ("sapphire ( e )", "sapphire (e)"),
        ("sapphire, extraordinary ray", "sapphire (e)"),
        ("MgF2 (e)", "magnesium fluoride (e)"),
        ("Si", "silicon"),
        ("ZnSe", "zinc selenide"),
    ],
)
def test_get_accepts_key_name_code_and_aliases(name: str, key: str) -> None:
    """Lookup ignores case and spacing and accepts every documented name."""
    assert pm.get(name).key == key


def test_unknown_name_suggests_the_closest() -> None:
    """An unknown name gives a 'did you mean' and the spec field."""
    with pytest.raises(MaterialError) as info:
        pm.get("calcium flouride", path="design.material")
    assert str(info.value) == (
        "field 'design.material' names an unknown material 'calcium flouride'; did you mean "
        "'calcium fluoride'? 'prismfab materials' lists the catalogue."
    )
    assert info.value.path == "design.material"


def test_bare_birefringent_name_is_refused_with_both_rays() -> None:
    """'sapphire' must say which ray; 'quartz' may also mean fused silica."""
    with pytest.raises(MaterialError, match=r"'sapphire \(o\)', 'sapphire \(e\)'"):
        pm.get("sapphire")
    with pytest.raises(MaterialError, match="'fused silica', 'crystalline quartz \\(o\\)'"):
        pm.get("Quartz")
    assert [m.key for m in pm.search("mgf2")] == ["magnesium fluoride (o)", "magnesium fluoride (e)"]


def test_search_matches_every_word() -> None:
    """search finds by type, source and code words; empty query lists all."""
    assert [m.key for m in pm.search("flint")] == ["785257", "785258", "620364"]
    assert [m.key for m in pm.search("dense flint")] == ["785257", "785258"]
    assert {m.key for m in pm.search("malitson")} >= {"fused silica", "calcium fluoride"}
    assert pm.search("") == pm.catalogue()
    assert pm.search("no such thing") == ()


def test_catalogue_is_clean() -> None:
    """Keys are lowercase and unique; ambiguity lists point at real keys; no code on crystals."""
    materials = pm.catalogue()
    keys = [m.key for m in materials]
    assert len(keys) == len(set(keys)) == 15
    assert all(k == k.lower() for k in keys)
    assert all(m.source and m.citation for m in materials)
    cat = shipped()
    assert all(set(v) <= set(keys) and v for v in cat.ambiguous.values())
    assert [m.key for m in materials if m.code] == ["517642", "785257", "785258", "620364"]


def test_material_is_frozen_hashable_and_pickles() -> None:
    """Material is an immutable value that survives a process boundary."""
    m = pm.get("517642")
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.key = "x"  # type: ignore[misc]
    assert pickle.loads(pickle.dumps(m)) == m
    assert hash(m) == hash(pickle.loads(pickle.dumps(m)))
    assert pm.get("517642") is m  # cached


# --- ranges --------------------------------------------------------------------------------


def test_check_range_names_material_and_range() -> None:
    """Out of range: the message names the field, material, range and source."""
    m = pm.get("fused silica")
    m.check_range([210.0, 632.8, 3710.0])  # ends are inside
    with pytest.raises(MaterialError) as info:
        m.check_range(np.array([632.8, 4000.0]), path="beam.wavelengths_nm")
    assert str(info.value) == (
        "field 'beam.wavelengths_nm' asks for 4000 nm, outside the valid range of fused silica "
        "(210–3710 nm, Malitson 1965); use a wavelength from 210 to 3710 nm, or a material whose "
        "data cover it ('prismfab materials' lists the ranges)."
    )
    assert np.isfinite(m.n(4000.0))  # n() itself does not check (tracer speed)


def test_reference_lines_outside_range_raise() -> None:
    """nd of silicon is not defined by an infrared formula."""
    with pytest.raises(MaterialError, match="asks for nd of silicon, but the d line"):
        _ = pm.get("silicon").nd
    with pytest.raises(MaterialError, match="F line"):
        _ = pm.get("zinc selenide").vd


# --- user catalogue files ------------------------------------------------------------------


def test_user_file_extends_and_overrides(tmp_path: Path) -> None:
    """A user file adds entries and replaces shipped ones with the same key."""
    path = write(tmp_path, GOOD_USER_FILE)
    added = pm.get("TC-1", catalogue_file=path)
    assert (added.key, added.type, added.temperature_c, added.origin) == (
        "test crown", "crown", 22.0, path)
    replaced = pm.get("517642 borosilicate crown", catalogue_file=path)
    assert replaced.range_nm == (350.0, 2500.0) and replaced.source == "melt sheet of the unit test"
    keys = [m.key for m in pm.catalogue(path)]
    assert keys[1] == "517642" and keys[-1] == "test crown" and len(keys) == 16
    assert pm.get("517642").range_nm == (400.0, 2000.0)  # the shipped one is untouched


def test_user_file_is_reread_after_an_edit(tmp_path: Path) -> None:
    """An edited user file is parsed again (cache keyed by modification time and size)."""
    path = write(tmp_path, GOOD_USER_FILE)
    assert pm.get("test crown", catalogue_file=path).temperature_c == 22.0
    Path(path).write_text(GOOD_USER_FILE.replace("temperature_c: 22", "temperature_c: 25"))
    stat = os.stat(path)
    os.utime(path, ns=(stat.st_atime_ns, stat.st_mtime_ns + 10_000_000))
    assert pm.get("test crown", catalogue_file=path).temperature_c == 25.0


def test_header_example_is_a_valid_user_file(tmp_path: Path) -> None:
    """The example in the shipped file's header loads as documented."""
    header = SHIPPED_FILE.read_text(encoding="utf-8").split("Example (a user file)")[1]
    block = header.split("# Provenance")[0].splitlines()[2:]
    text = "\n".join(line[4:] for line in block if line.startswith("#   "))
    path = write(tmp_path, text)
    m = pm.get("my melt 517642", catalogue_file=path)
    assert m.glass_code == "517642" and m.name == "517642 borosilicate crown"


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (entry(formula="sellmeir-c"), r"user.yaml:4: field 'materials.my glass.formula' is "
         r"'sellmeir-c', which is not a known formula; use one of sellmeier-c, "),
        (entry(coefficients="{B: [0.696, 0.408, 0.897], resonance_um: [0.068, 0.116, 9.9]}"),
         r"user.yaml:5: field 'materials.my glass.coefficients.resonance_um' is not a coefficient "
         r"of sellmeier-c .*resonance wavelengths belong to formula sellmeier-resonance"),
        # resonance wavelengths written as C (not squared): poles land at 0.26 and 3.15 µm
        (entry(coefficients="{B: [0.696, 0.408, 0.897], C_um2: [0.068, 0.116, 9.896]}",
               range_um="[0.21, 3.71]"),
         r"user.yaml:5: field 'materials.my glass.coefficients' puts a pole at 0.260768 um, inside "
         r"the valid range 0.21–3.71 um; check whether the paper prints C in um2"),
        (entry(coefficients="{B: [1.0, 2.0], C_um2: [0.01]}"),
         r"field 'materials.my glass.coefficients.C_um2' needs as many values as 'B' \(2\), got 1"),
        (entry(coefficients="{B: [1.0], C_um2: [abc]}"),
         r"user.yaml:5: field 'materials.my glass.coefficients.C_um2.0' must be a number, got 'abc'"),
        (entry(source="DROP"), r"user.yaml:3: field 'materials.my glass' has no 'source'"),
        (entry(sorce="x"), r"field 'materials.my glass.sorce' is not a material field; did you "
         r"mean 'source'\?"),
        (entry(range_um="[2.0, 0.4]"), r"field 'materials.my glass.range_um' must be \[low, high\]"),
        (entry(code='"51764"'), r"field 'materials.my glass.code' must be six digits"),
        (entry(code='"620364"', coefficients="{B: [1.03961212, 0.231792344, 1.01046945], "
               "C_um2: [0.00600069867, 0.0200179144, 103.560653]}"),
         r"field 'materials.my glass.code' is 620364, but the coefficients give nd = 1.51680, "
         r"vd = 64.17 \(code 517642\)"),
        (entry(dn_dt_per_k="1.0e-5"), r"field 'materials.my glass' gives one of 'dn_dt_per_k' and "
         r"'dn_dt_source' without the other; add 'dn_dt_source:'"),
        (entry(expansion_per_k="7", expansion_source="x"),
         r"field 'materials.my glass.expansion_per_k' is 7, too large for a value per K"),
        ("format: 1\nmaterials:\n  a: {formula: x}\n  a: {formula: y}\n",
         r"user.yaml:4: field 'materials.a' appears twice"),
        ("format: 2\nmaterials: {}\n", r"field 'format' must be 1, got 2"),
        ("format: 1\nmaterials:\n  x: [1, 2\n", r"user.yaml:4: field 'materials_file' is not valid YAML"),
        ("", r"field 'materials_file' is empty"),
    ],
)
def test_bad_user_file_names_file_entry_and_field(tmp_path: Path, text: str, expected: str) -> None:
    """Each mistake in a user file gives a MaterialError naming file, line, entry and field."""
    path = write(tmp_path, text)
    with pytest.raises(MaterialError, match=expected) as info:
        pm.catalogue(path)
    assert str(info.value).startswith(path)


def test_exponent_without_dot_is_read_as_a_number(tmp_path: Path) -> None:
    """'1e-5' (a string to YAML 1.1) is accepted as a number."""
    path = write(tmp_path, entry(dn_dt_per_k="1e-5", dn_dt_source="unit test"))
    assert pm.get("my glass", catalogue_file=path).dn_dt_per_k == 1e-5


def test_missing_user_file(tmp_path: Path) -> None:
    """A missing user file names the path and the spec field."""
    with pytest.raises(MaterialError, match=r"field 'materials_file' points to '.*nope.yaml', "
                       r"which cannot be read"):
        pm.get("fused silica", catalogue_file=str(tmp_path / "nope.yaml"))


# --- import weight -------------------------------------------------------------------------


def test_import_is_light() -> None:
    """Importing and using the catalogue loads neither scipy nor a CAD/PDF library."""
    code = (
        "import sys, prismfab.materials as pm\n"
        "assert 'yaml' not in sys.modules\n"
        "pm.get('fused silica').n(633.0)\n"
        "heavy = {'scipy', 'cadquery', 'OCP', 'reportlab', 'ezdxf', 'matplotlib'}\n"
        "print(sorted(heavy & set(sys.modules)))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


# --- command line --------------------------------------------------------------------------


def test_cli_lists_the_catalogue(capsys: pytest.CaptureFixture[str]) -> None:
    """'prismfab materials' prints one aligned row per material."""
    assert main(["materials"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert re.split(r"\s{2,}", out[0]) == ["key", "name", "nd", "vd", "range nm", "source"]
    row = next(line for line in out if line.startswith("517642"))
    assert re.split(r"\s{2,}", row) == [
        "517642", "517642 borosilicate crown", "1.516800", "64.17", "400-2000", "representative set"]
    silicon = next(line for line in out if line.startswith("silicon "))
    assert re.split(r"\s{2,}", silicon)[2:4] == ["-", "-"]
    assert len(out) == 1 + 15 + 1


def test_cli_single_match_shows_details(capsys: pytest.CaptureFixture[str]) -> None:
    """A query naming one material prints its formula, source and thermal data."""
    assert main(["materials", "fused", "silica", "--wavelength-nm", "1064"]) == 0
    out = capsys.readouterr().out
    assert "n(1064 nm)" in out and "1.449631" in out
    assert "resonance_um = 0.0684043, 0.1162414, 9.896161" in out
    assert "valid range  210-3710 nm at 20 °C" in out
    assert "dn/dT        1e-05 per K" in out


def test_cli_json(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    """--json gives every fact, with None for undefined values, user entries included."""
    path = write(tmp_path, GOOD_USER_FILE)
    assert main(["materials", "crown", "--json", "--materials-file", path]) == 0
    rows = json.loads(capsys.readouterr().out)
    assert [r["key"] for r in rows] == ["517642", "test crown"]
    assert rows[0]["glass_code"] == "517642" and rows[0]["range_nm"] == [350.0, 2500.0]
    assert main(["materials", "silicon", "--json", "--wavelength-nm", "1550"]) == 0
    si = json.loads(capsys.readouterr().out)[0]
    assert si["nd"] is None and si["n_at_nm"][0][1] == pytest.approx(3.477724, abs=2e-6)


def test_cli_no_match_and_bad_file(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    """No match and a broken user file both exit 2 with one paragraph on stderr."""
    assert main(["materials", "calcium flouride"]) == 2
    assert "did you mean 'calcium fluoride'?" in capsys.readouterr().err
    path = write(tmp_path, entry(formula="nonsense"))
    assert main(["materials", "--materials-file", path]) == 2
    err = capsys.readouterr().err
    assert err.startswith("prismfab materials: error: ") and "Traceback" not in err
