"""``prismfab solve``: JSON keys, exit codes, lock file."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from prismfab.cli import main

SPECS = Path(__file__).resolve().parents[1] / "templates" / "specs"


def test_solve_json_keys(capsys):
    """--json prints one object with the documented stable keys."""
    assert main(["solve", str(SPECS / "anamorphic-pair.yaml"), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert set(data) == {"prisms", "system"}
    p = data["prisms"][0]
    assert {"name", "material", "n", "interior_angles_deg", "height_mm", "faces",
            "tolerances"} <= set(p)
    assert {"label", "role", "length_mm", "clear_aperture_mm", "aoi_deg"} <= set(p["faces"][0])
    s = data["system"]
    assert {"magnification_in_plane", "magnification_out_of_plane", "wavelengths_nm",
            "pointing_mrad", "lateral_offset_mm", "transmission", "warnings"} <= set(s)
    assert len(s["pointing_mrad"]) == len(s["wavelengths_nm"]) == len(s["transmission"])
    assert s["magnification_in_plane"] == pytest.approx(3.0, rel=1e-6)


def test_solve_table_and_lock(tmp_path, capsys):
    """The table names each prism; the lock file is a loadable spec with a lock section."""
    from prismfab.spec.load import load_spec

    lock = tmp_path / "locked.yaml"
    assert main(["solve", str(SPECS / "brewster.yaml"), "--write-lock", str(lock)]) == 0
    out = capsys.readouterr().out
    assert "P1" in out and "system (brewster)" in out
    spec = load_spec(lock)
    assert spec.family.value == "brewster" and spec.lock is not None
    assert spec.lock.prisms[0].name == "P1"


@pytest.mark.parametrize("family", ["anamorphic-pair", "anamorphic-single", "brewster",
                                    "dispersing"])
def test_lock_reproduces_the_prisms(tmp_path, family):
    """solve -> lock -> load -> solve gives identical prisms; re-locking changes nothing."""
    from prismfab.design import solve
    from prismfab.spec.load import load_spec

    lock, again = tmp_path / "locked.yaml", tmp_path / "again.yaml"
    assert main(["solve", str(SPECS / f"{family}.yaml"), "--json", "--write-lock", str(lock)]) == 0
    assert main(["solve", str(lock), "--json", "--write-lock", str(again)]) == 0
    assert solve(load_spec(lock)).prisms == solve(load_spec(SPECS / f"{family}.yaml")).prisms
    assert again.read_text(encoding="utf-8") == lock.read_text(encoding="utf-8")


def test_lock_refuses_changed_inputs(tmp_path, capsys):
    """A lock written for another magnification is refused (exit 2) naming the section."""
    import re

    lock = tmp_path / "locked.yaml"
    assert main(["solve", str(SPECS / "anamorphic-pair.yaml"), "--write-lock", str(lock)]) == 0
    capsys.readouterr()
    text = lock.read_text(encoding="utf-8")
    changed = re.sub(r"(\n\s*magnification:)\s*[0-9.]+", r"\1 2.5", text, count=1)
    assert changed != text
    lock.write_text(changed, encoding="utf-8")
    assert main(["solve", str(lock)]) == 2
    err = capsys.readouterr().err
    assert "lock.inputs" in err and "design" in err


def test_lock_geometry_is_honoured(tmp_path):
    """A locked geometry that this version would not solve is kept exactly, with a warning."""
    from prismfab.design import solve
    from prismfab.spec.load import load_spec

    lock = tmp_path / "locked.yaml"
    assert main(["solve", str(SPECS / "anamorphic-single.yaml"), "--json",
                 "--write-lock", str(lock)]) == 0
    spec = load_spec(lock)
    v = spec.lock.prisms[0].vertices_mm
    grown = tuple((round(x * 1.02, 9), round(y * 1.02, 9)) for x, y in v)
    text = lock.read_text(encoding="utf-8")
    old = "vertices_mm: [" + ", ".join(f"[{x!r}, {y!r}]" for x, y in v) + "]"
    assert old in text
    lock.write_text(text.replace(old, "vertices_mm: [" + ", ".join(
        f"[{x!r}, {y!r}]" for x, y in grown) + "]"), encoding="utf-8")
    system = solve(load_spec(lock))
    assert system.prisms[0].vertices_mm == grown
    assert any("geometry taken from the lock" in w for w in system.warnings)


def test_unreachable_target_exits_2(tmp_path, capsys):
    """An unreachable magnification exits 2 with one paragraph naming the field."""
    text = (SPECS / "anamorphic-single.yaml").read_text(encoding="utf-8")
    import re

    bad = re.sub(r"(\n\s*magnification:)\s*[0-9.]+", r"\1 40.0", text, count=1)
    spec = tmp_path / "bad.yaml"
    spec.write_text(bad, encoding="utf-8")
    assert main(["solve", str(spec)]) == 2
    err = capsys.readouterr().err
    assert "design.magnification" in err and "reachable" in err
