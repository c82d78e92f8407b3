"""Revision letters, revision records and the change list in drawing words."""

from __future__ import annotations

import dataclasses

import pytest

from prismfab.package.diff import changes, format_changes
from prismfab.package.revisions import (
    RevisionRecord,
    index_of,
    letter_at,
    next_letter,
    read_records,
    revision_table,
)
from prismfab.package.snapshot import part_snapshot, snapshot
from tests.fixtures import sample_part, sample_solution


def test_letters_skip_the_six_excluded_letters() -> None:
    """Single letters run A..Y without I, O, Q, S, X, Z (ASME Y14.35 convention, from memory)."""
    singles = [letter_at(i) for i in range(20)]
    assert "".join(singles) == "ABCDEFGHJKLMNPRTUVWY"
    assert not set("IOQSXZ") & set("".join(letter_at(i) for i in range(2000)))


def test_after_y_comes_aa_then_ab_and_ay_then_ba() -> None:
    """Y -> AA -> AB; AY -> BA; YY -> AAA (same convention as above)."""
    assert next_letter("Y") == "AA"
    assert next_letter("AA") == "AB"
    assert next_letter("AY") == "BA"
    assert next_letter("YY") == "AAA"
    assert next_letter(None) == "A"
    assert next_letter("H") == "J"
    assert next_letter("R") == "T"


def test_index_of_inverts_letter_at_and_refuses_excluded_letters() -> None:
    """index_of(letter_at(i)) == i; letters with I or O are not revision letters."""
    assert all(index_of(letter_at(i)) == i for i in range(1000))
    for bad in ("I", "AO", "", "a"):
        with pytest.raises(ValueError):
            index_of(bad)


def _modified(solution, **part_changes):  # type: ignore[no-untyped-def]
    part = dataclasses.replace(solution.parts[0], **part_changes)
    return dataclasses.replace(solution, parts=(part,))


def test_angle_and_tolerance_changes_are_written_as_on_the_drawing() -> None:
    """A moved vertex gives 'angle B–C old → new' in d°mm′ss″; a tighter tolerance "±1′ → ±30″"."""
    base = sample_solution()
    part = base.parts[0]
    (x0, y0), (x1, y1), (x2, y2) = part.prism.vertices_mm
    prism = dataclasses.replace(part.prism, vertices_mm=((x0, y0), (x1 * 1.01, y1), (x2, y2)))
    tol = dataclasses.replace(part.tolerances, angle_arcsec=30.0)
    new = _modified(base, prism=prism, tolerances=tol)
    lines = format_changes(changes(snapshot(base), snapshot(new)))
    angle_lines = [ln for ln in lines if ln.startswith("P1 angle ") and "tolerance" not in ln]
    # vertex 1 (faces A–B) and vertex 2 (faces B–C) move; vertex 0 stays at 90°
    assert [ln.split(" ")[2] for ln in angle_lines] == ["A–B", "B–C"]
    assert all("→" in ln and "°" in ln for ln in angle_lines)
    assert "P1 angle tolerance ±1′ → ±30″" in lines


def test_material_and_spec_changes() -> None:
    """Material change names the glass codes; a spec target change names the field."""
    base = sample_solution()
    new = _modified(base, material_code="785257", material_name="785257 dense flint")
    new = dataclasses.replace(new, spec=dataclasses.replace(
        new.spec, design=dataclasses.replace(new.spec.design, magnification=1.6)))
    lines = format_changes(changes(snapshot(base), snapshot(new)))
    assert lines[0] == "magnification 1.51 → 1.60"
    assert "P1 material 517642 → 785257" in lines


def test_unchanged_design_has_no_changes_and_sub_resolution_moves_are_not_reported() -> None:
    """Same snapshot -> no change; an angle moved by 0.01″ prints the same and is not listed."""
    base = sample_solution()
    assert changes(snapshot(base), snapshot(base)) == ()
    part = base.parts[0]
    (x0, y0), (x1, y1), (x2, y2) = part.prism.vertices_mm
    prism = dataclasses.replace(part.prism, vertices_mm=((x0, y0), (x1 + 1e-9, y1), (x2, y2)))
    assert changes(snapshot(base), snapshot(_modified(base, prism=prism))) == ()


def test_face_length_and_aperture_changes_use_the_tolerance_decimals() -> None:
    """Face lengths print with the decimals of a ±0.1 mm tolerance (one)."""
    a = part_snapshot(sample_part())
    b = {**a, "faces": {**a["faces"], "C": {**a["faces"]["C"], "length_mm": 12.44,
                                             "clear_aperture_mm": [6.5, 6.0]}}}
    base = {"spec": {}, "parts": {"P1": a}}
    new = {"spec": {}, "parts": {"P1": b}}
    lines = format_changes(changes(base, new))
    assert "P1 face C length 12.0 → 12.4 mm" in lines
    assert "P1 face C clear aperture 6.0 × 6.0 → 6.5 × 6.0 mm" in lines


def test_revision_table_per_part_lists_own_and_system_changes() -> None:
    """A part's table shows its own changes without its name, then the system-level ones."""
    recs = (
        RevisionRecord("A", "2026-01-02", "h1", {}, (), "C. Lead"),
        RevisionRecord("B", "2026-02-03", "h2", {}, (("", "magnification 3.00 → 3.20"),
                                                    ("P1", "material 517642 → 785257"),
                                                    ("P2", "angle tolerance ±60″ → ±30″")),
                       "C. Lead"),
    )
    assert revision_table(recs, "P1") == (
        ("A", "First issue", "2026-01-02", "C. Lead"),
        ("B", "material 517642 → 785257; magnification 3.00 → 3.20", "2026-02-03", "C. Lead"),
    )
    only_p3 = RevisionRecord("C", "2026-03-01", "h3", {}, (("P3", "height 10.0 → 11.0 mm"),))
    assert revision_table((*recs, only_p3), "P1")[-1][1] == \
        "Reissued with the set; no change to this part"


def test_records_round_trip_through_revision_folders(tmp_path) -> None:  # type: ignore[no-untyped-def]
    """Records written as revision.json are read back in letter order; foreign folders are ignored."""
    from prismfab.package.revisions import RECORD_FILE, dumps

    for letter in ("B", "A", "AA"):
        (tmp_path / letter).mkdir()
        rec = RevisionRecord(letter, "2026-01-01", letter * 3, {"x": 1}, (("", "c"),))
        (tmp_path / letter / RECORD_FILE).write_text(dumps(rec.to_json()))
    (tmp_path / "notes").mkdir()
    (tmp_path / ".stage-C-1").mkdir()
    got = read_records(tmp_path)
    assert [r.letter for r in got] == ["A", "B", "AA"]
    assert got[0] == RevisionRecord("A", "2026-01-01", "AAA", {"x": 1}, (("", "c"),))
