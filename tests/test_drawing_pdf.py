"""PDF backend: the same Sheet drawn with reportlab, read back with pypdf."""

from __future__ import annotations

import io
import re
from pathlib import Path

import pytest

from prismfab.drawing import layout_part
from prismfab.drawing.sheet import AngularDim, Sheet
from tests.drawing_parts import fold_prism
from tests.fixtures import sample_info, sample_part


def _pdf(sheet: Sheet) -> bytes:
    from reportlab.pdfgen.canvas import Canvas

    from prismfab.drawing.pdf import PT_PER_MM, draw_sheet

    buf = io.BytesIO()
    c = Canvas(buf, pagesize=(sheet.width_mm * PT_PER_MM, sheet.height_mm * PT_PER_MM), invariant=1)
    draw_sheet(c, sheet)
    c.showPage()
    c.save()
    return buf.getvalue()


@pytest.fixture(scope="module")
def sheet() -> Sheet:
    return layout_part(sample_part(), sample_info())


def _text(data: bytes) -> str:
    from pypdf import PdfReader

    page = PdfReader(io.BytesIO(data)).pages[0]
    return re.sub(r"\s+", " ", page.extract_text())


def test_pdf_is_byte_identical(sheet: Sheet) -> None:
    """Invariant mode: two renders give the same bytes."""
    assert _pdf(sheet) == _pdf(layout_part(sample_part(), sample_info()))


def test_pdf_page_size_and_font(sheet: Sheet) -> None:
    """A3 landscape page at exact size, DejaVu Sans embedded as a subset."""
    from pypdf import PdfReader

    data = _pdf(sheet)
    page = PdfReader(io.BytesIO(data)).pages[0]
    assert pytest.approx(420.0, abs=0.01) == float(page.mediabox.width) * 25.4 / 72  # ISO 216 A3
    assert pytest.approx(297.0, abs=0.01) == float(page.mediabox.height) * 25.4 / 72
    assert b"DejaVuSans" in data


def test_pdf_text_holds_every_tolerance_and_iso_string(sheet: Sheet) -> None:
    """Selectable text carries the tolerances, ISO 10110 codes and cautions of the drawing."""
    text = _text(_pdf(sheet))
    part = sample_part()
    must = [a.text for a in sheet.of_type(AngularDim)]  # type: ignore[union-attr]
    must += ["7.94 ±0.10", "10.00 ±0.10", "CA 6.0", "(14.39)", "(12.00)"]
    must += [f.surface_form for f in part.faces if f.polished]  # ISO 10110-5
    must += [f.surface_imperfections for f in part.faces if f.polished]  # ISO 10110-7
    must += list(part.material_indications)  # ISO 10110-2, -3, -4
    must += ["nd = 1.5168 ±0.0005", "νd = 64.17 ±0.8 %", "ISO 2768-mK", "ISO 8015",
             "IEC 60825-1", "ANSI Z136.1", "EX-1001-01", "Brewster expander prism", "±1′",
             "uncoated: Brewster", "bevel 0.3 max × 45°"]
    for s in must:
        assert s in text, s


def test_pdf_third_angle_fold(tmp_path: Path) -> None:
    """A third-angle sheet of another part draws without error and carries its tolerances."""
    sheet = layout_part(fold_prism(), sample_info(), projection="third-angle")
    data = _pdf(sheet)
    (tmp_path / "fold.pdf").write_bytes(data)
    text = _text(data)
    assert "90° ±30″" in text and "20.00 ±0.10" in text
