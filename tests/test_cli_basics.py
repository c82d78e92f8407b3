"""The spec commands: `prismfab init`, `check` and `schema`, run in-process."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from prismfab.cli import main
from prismfab.spec import json_schema, load_spec
from prismfab.spec.load import templates_dir
from prismfab.spec.types import Family


def test_schema_prints_the_json_schema(capsys) -> None:
    """`prismfab schema` prints json_schema() as JSON."""
    assert 0 == main(["schema"])
    assert json_schema() == json.loads(capsys.readouterr().out)


def test_schema_output_is_stable(capsys) -> None:
    """Two runs print the same bytes (sorted keys)."""
    main(["schema"])
    first = capsys.readouterr().out
    main(["schema"])
    assert first == capsys.readouterr().out


@pytest.mark.parametrize("family", [f.value for f in Family])
def test_init_writes_the_starter_spec(family: str, tmp_path: Path, capsys) -> None:
    """`prismfab init FAMILY -o FILE` writes the template, which then checks clean."""
    target = tmp_path / "my.yaml"
    assert 0 == main(["init", family, "-o", str(target)])
    template = templates_dir() / "specs" / f"{family}.yaml"
    assert template.read_bytes() == target.read_bytes()
    assert f"prismfab check {target}" in capsys.readouterr().out
    assert 0 == main(["check", str(target)])
    assert ["my.yaml"] == [p.name for p in tmp_path.iterdir()]


def test_init_default_name_in_current_folder(tmp_path: Path, monkeypatch) -> None:
    """Without -o the file is FAMILY.yaml in the current folder."""
    monkeypatch.chdir(tmp_path)
    assert 0 == main(["init", "wedge"])
    assert Family.WEDGE is load_spec(tmp_path / "wedge.yaml").family


def test_init_refuses_to_overwrite(tmp_path: Path, capsys) -> None:
    """An existing file is kept, exit 2, and the message names --force."""
    target = tmp_path / "spec.yaml"
    target.write_text("mine\n", encoding="utf-8")
    assert 2 == main(["init", "fold", "-o", str(target)])
    err = capsys.readouterr().err
    assert "already exists" in err and "--force" in err
    assert "mine\n" == target.read_text(encoding="utf-8")
    assert 0 == main(["init", "fold", "-o", str(target), "--force"])
    assert Family.FOLD is load_spec(target).family


def test_init_unknown_family_is_bad_input(tmp_path: Path, capsys) -> None:
    """An unknown family exits 2 and lists the choices; nothing is written."""
    assert 2 == main(["init", "trapezoid", "-o", str(tmp_path / "x.yaml")])
    assert "anamorphic-pair" in capsys.readouterr().err
    assert [] == list(tmp_path.iterdir())


def test_init_into_missing_folder_cannot_write(tmp_path: Path, capsys) -> None:
    """A target in a folder that does not exist is an output error (exit 4), no traceback."""
    assert 4 == main(["init", "brewster", "-o", str(tmp_path / "no" / "such" / "x.yaml")])
    err = capsys.readouterr().err
    assert "cannot write" in err and "Traceback" not in err
    assert [] == list(tmp_path.iterdir())


def test_check_summary_names_family_materials_and_targets(capsys) -> None:
    """The summary paragraph names the family, the glass, the wavelengths and the target."""
    path = templates_dir() / "specs" / "anamorphic-pair.yaml"
    spec = load_spec(path)
    assert 0 == main(["check", str(path)])
    out = capsys.readouterr().out
    flat = " ".join(out.split())
    assert "anamorphic-pair, 2 prisms" in flat
    assert "517642 borosilicate crown" in flat
    assert f"band {spec.beam.band_nm[0]:g}-{spec.beam.band_nm[1]:g} nm" in flat
    assert f"in-plane magnification {spec.design.magnification:g}" in flat
    assert "\n\n" not in out


def test_help_lists_the_spec_commands(capsys) -> None:
    """Top-level help shows init, check and schema."""
    assert 0 == main(["--help"])
    out = capsys.readouterr().out
    for name in ("init", "check", "schema"):
        assert name in out
