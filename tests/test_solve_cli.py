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
    """The table names each prism; the lock file is still a loadable spec."""
    from prismfab.spec.load import load_spec

    lock = tmp_path / "locked.yaml"
    assert main(["solve", str(SPECS / "brewster.yaml"), "--write-lock", str(lock)]) == 0
    out = capsys.readouterr().out
    assert "P1" in out and "system (brewster)" in out
    assert "# solved:" in lock.read_text(encoding="utf-8")
    assert load_spec(lock).family.value == "brewster"


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
