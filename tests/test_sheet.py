"""The PDF writers: text read back with an independent reader, and byte-identical rebuilds."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.fixtures import sample_info, sample_part, sample_solution

pypdf = pytest.importorskip("pypdf")


def _text(path: Path) -> str:
    reader = pypdf.PdfReader(str(path))
    return "\n".join(page.extract_text() for page in reader.pages)


def _spec_pdf(tmp_path: Path, name: str = "spec.pdf") -> Path:
    from reportlab.lib.pagesizes import A4
    from reportlab.platypus import SimpleDocTemplate

    from prismfab.sheet.fabrication import specification_story
    from prismfab.sheet.layout import ensure_fonts

    ensure_fonts()
    path = tmp_path / name
    SimpleDocTemplate(str(path), pagesize=A4, invariant=1).build(
        specification_story(sample_part(), sample_info()))
    return path


def test_specification_states_every_face_requirement(tmp_path: Path) -> None:
    """Every ISO 10110 string, coating line, tolerance and caution is in the extracted text."""
    text = " ".join(_text(_spec_pdf(tmp_path)).split())
    part = sample_part()
    for face in part.faces:
        if face.polished:
            assert face.surface_form in text
            assert face.surface_imperfections in text
            assert face.coating_text in text
    for indication in part.material_indications:
        assert indication in text
    assert "±1′" in text and "≤ 1′" in text and "± 0.10 mm" in text
    assert "97.0 %" in text
    assert "IEC 60825-1" in text and "ANSI Z136.1" in text
    assert "Melt data requested" in text


def test_system_report_lists_performance_ghosts_and_safety(tmp_path: Path) -> None:
    """The report carries per-wavelength figures, the ghost flag and the safety notes."""
    from prismfab.sheet import system_report

    path = system_report(sample_solution(), tmp_path / "report.pdf")
    text = " ".join(_text(path).split())
    for wl in ("780", "775", "785"):
        assert wl in text
    assert "1.51100" in text
    assert "BACK REFLECTION" in text
    assert "IEC 60825-1" in text
    assert not list(tmp_path.glob("*.part"))


def test_system_report_is_byte_identical_across_runs(tmp_path: Path) -> None:
    """Two writes of the same solution give the same bytes (reportlab invariant mode)."""
    from prismfab.sheet import system_report

    a = system_report(sample_solution(), tmp_path / "a.pdf").read_bytes()
    b = system_report(sample_solution(), tmp_path / "b.pdf").read_bytes()
    assert a == b
