"""Batch variants, the process-pool batch, its summary, and the watch loop."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from prismfab.errors import SpecError
from prismfab.package.batch import Row, run_batch, summary_csv, write_summary
from prismfab.package.variants import expand, parse_sweep, with_value
from prismfab.package.watch import watch
from prismfab.spec.load import load_spec, load_spec_text
from tests.test_package import DEMO, fake_solve, fake_writers


def test_sweep_ranges_include_the_end_and_lists_keep_their_order() -> None:
    """2:4:0.5 -> 2, 2.5, 3, 3.5, 4; '3,2.5' -> 3, 2.5."""
    assert parse_sweep("design.magnification=2:4:0.5").values == (2.0, 2.5, 3.0, 3.5, 4.0)
    assert parse_sweep("design.magnification=2:4:0.25").values[-1] == 4.0
    assert parse_sweep("requirements.pointing_mrad=3,2.5").values == (3.0, 2.5)
    for bad in ("design.magnification", "x=1:2", "x=2:1:0.5", "x=a,b", "=1"):
        with pytest.raises(SpecError, match="--vary"):
            parse_sweep(bad)


def test_with_value_replaces_one_field_and_checks_the_path() -> None:
    """Nested dataclasses.replace; unknown paths, non-number fields and fractions of integers fail."""
    spec = load_spec(DEMO)
    new = with_value(spec, "design.magnification", 3.5)
    assert new.design.magnification == 3.5 and spec.design.magnification == 3.0
    assert with_value(spec, "beam.alignment.tilt_mrad", 2.0).beam.alignment.tilt_mrad == 2.0
    assert with_value(spec, "project.quantity", 10.0).project.quantity == 10
    with pytest.raises(SpecError, match="'design.magnificaton' is not a field"):
        with_value(spec, "design.magnificaton", 3.0)
    with pytest.raises(SpecError, match="not a number field"):
        with_value(spec, "design.achromatic", 1.0)
    with pytest.raises(SpecError, match="whole number"):
        with_value(spec, "project.quantity", 2.5)


def test_variants_get_their_own_prefix_and_a_spec_file_that_rebuilds_them() -> None:
    """Each variant: prefix -V01.., spec text edited in place and valid, overrides recorded."""
    items = expand([str(DEMO)], [parse_sweep("design.magnification=2.5,3.5")])
    assert [i.inputs.spec.project.drawing_prefix for i in items] == ["RA-3107-V01", "RA-3107-V02"]
    again = load_spec_text(items[1].inputs.spec_text)
    assert again.design.magnification == 3.5
    assert again.project.drawing_prefix == "RA-3107-V02"
    assert items[1].inputs.notes == (("design.magnification", "3.5"),)
    assert items[0].inputs.sha256 != items[1].inputs.sha256


def test_a_variant_value_the_loader_refuses_fails_before_the_batch() -> None:
    """A swept value outside the spec's rules raises SpecError naming the field and line."""
    with pytest.raises(SpecError, match="design.magnification") as err:
        expand([str(DEMO)], [parse_sweep("design.magnification=1")])
    assert err.value.line == 32


def test_pool_batch_keeps_order_and_reports_errors_per_item(tmp_path: Path) -> None:
    """Two workers; the unreachable variant is an error row, the others are built."""
    items = expand([str(DEMO)], [parse_sweep("design.magnification=3,8,3.5")])
    seen: list[tuple[int, int]] = []
    rows = run_batch(items, out_dir=tmp_path, jobs=2, solve=fake_solve, writers=fake_writers,
                     preload=(), progress=lambda done, total, row: seen.append((done, total)))
    assert [r.status for r in rows] == ["built", "error", "built"]
    assert rows[1].error_type == "SolveError" and "design.magnification" in rows[1].error
    assert rows[0].folder == str(tmp_path / "RA-3107-V01" / "A")
    assert rows[2].magnification == pytest.approx(1.511)  # the fake solution's value
    assert seen == [(1, 3), (2, 3), (3, 3)]
    again = run_batch(items[:1], out_dir=tmp_path, jobs=1, solve=fake_solve, writers=fake_writers)
    assert again[0].status == "reused"


def test_workers_get_one_numeric_thread_unless_set(monkeypatch: pytest.MonkeyPatch) -> None:
    """The pool's environment pins the BLAS/OpenMP pools to one thread; a user's value wins."""
    import os

    from prismfab.package.batch import THREAD_VARIABLES, _one_thread_per_worker

    for name in THREAD_VARIABLES:
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("OMP_NUM_THREADS", "3")
    with _one_thread_per_worker():
        assert os.environ["OPENBLAS_NUM_THREADS"] == "1" and os.environ["MKL_NUM_THREADS"] == "1"
        assert os.environ["OMP_NUM_THREADS"] == "3"
    assert "OPENBLAS_NUM_THREADS" not in os.environ and os.environ["OMP_NUM_THREADS"] == "3"


def test_solve_only_writes_nothing(tmp_path: Path) -> None:
    """--solve-only gives the figures and no folder."""
    items = expand([str(DEMO)], [])
    rows = run_batch(items, out_dir=tmp_path, jobs=1, solve_only=True, solve=fake_solve)
    assert rows[0].status == "solved" and rows[0].yield_fraction == 0.97
    assert list(tmp_path.iterdir()) == []


def test_summary_files_csv_and_json(tmp_path: Path) -> None:
    """CSV with a header and one line per row; JSON numbers stay numbers; other names refused."""
    rows = [Row("a", "built", 3.0, 0.01, 0.97, 3.2, "out/A", "A"),
            Row("b", "error", error="field 'x': bad", error_type="SpecError")]
    text = summary_csv(rows)
    assert text.splitlines()[0].startswith("variant,status,magnification,pointing_mrad,yield")
    assert text.splitlines()[2].startswith("b,error,,,,")
    data = json.loads(write_summary(rows, tmp_path / "s.json").read_text())
    assert data[0]["magnification"] == 3.0
    with pytest.raises(SpecError, match=".csv or .json"):
        write_summary(rows, tmp_path / "s.txt")


def test_watch_rebuilds_on_content_change_only(tmp_path: Path) -> None:
    """Initial build; an identical rewrite builds nothing; a changed value builds B and says why."""
    spec = tmp_path / "demo.yaml"
    text = DEMO.read_text()
    spec.write_text(text)
    lines: list[str] = []
    edits = iter([text, text.replace("magnification: 3.0 ", "magnification: 3.2 ")])

    def step(_seconds: float) -> None:
        new = next(edits, None)
        if new is not None:
            spec.write_text(new)

    builds = watch(spec, out_dir=tmp_path / "out", max_polls=6, report=lines.append, sleep=step,
                   solve=fake_solve, writers=fake_writers())
    assert builds == 2
    written = [ln for ln in lines if ln.startswith("revision")]
    assert [ln.split(" ")[1] for ln in written] == ["A", "B"]
    assert "  magnification 3.00 → 3.20" in lines[-1].splitlines()


def test_watch_reports_a_bad_spec_and_goes_on(tmp_path: Path) -> None:
    """A spec error is reported as text; the loop continues."""
    spec = tmp_path / "bad.yaml"
    spec.write_text("format: 1\n")
    lines: list[str] = []
    assert watch(spec, out_dir=tmp_path, max_polls=2, report=lines.append,
                 sleep=lambda s: None) == 1
    assert lines[1].startswith("error: ") and "project" in lines[1]
