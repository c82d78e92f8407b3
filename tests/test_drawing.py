"""Fabrication drawing: sheet model, ISO frame and tables, DXF read-back."""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

from prismfab.drawing import dims, fmt, iso2768, layout_part
from prismfab.drawing.frame import grid_fields, grid_letters
from prismfab.drawing.layout import ISO_5455_SCALES
from prismfab.drawing.sheet import AlignedDim, AngularDim, Leader, LinearDim, Sheet, Solid, Table, Text
from prismfab.drawing.template import load_template
from prismfab.errors import SpecError
from tests.drawing_parts import apex_flat_prism, dispersing_prism, fold_prism
from tests.fixtures import sample_info, sample_part

RENDER_DIR = Path(__file__).parent / "_render"
PARTS = {"brewster": sample_part, "dispersing": dispersing_prism, "fold": fold_prism,
         "apex-flat": apex_flat_prism}


@pytest.fixture(scope="module")
def sheets() -> dict[str, Sheet]:
    out = {name: layout_part(make(), sample_info()) for name, make in PARTS.items()}
    out["brewster-a4"] = layout_part(sample_part(), sample_info(), template="a4-landscape")
    out["fold-third"] = layout_part(fold_prism(), sample_info(), projection="third-angle")
    return out


# ---- ISO 2768-1 general tolerances (tables as quoted in a secondary source) -------------------------------

@pytest.mark.parametrize(("nominal", "cls", "expected"), [
    (20.0, "m", 0.2),   # ISO 2768-1:1989 Table 1
    (20.0, "f", 0.1),   # ISO 2768-1 Table 1
    (20.0, "c", 0.5),   # ISO 2768-1 Table 1
    (20.0, "v", 1.0),   # ISO 2768-1 Table 1
    (30.0, "m", 0.2),   # ISO 2768-1 Table 1, "over 6 up to 30" includes 30
    (30.5, "m", 0.3),   # ISO 2768-1 Table 1
    (150.0, "m", 0.5),  # ISO 2768-1 Table 1
    (2.0, "v", None),   # ISO 2768-1 Table 1: no class v value below 3 mm
    (2.0, "c", 0.2),    # ISO 2768-1 Table 1: 0.2, not DIN 7168's 0.15
])
def test_iso2768_linear(nominal: float, cls: str, expected: float | None) -> None:
    """Linear general tolerances match ISO 2768-1 Table 1."""
    assert expected == iso2768.linear_tolerance_mm(nominal, cls)


def test_iso2768_chamfer_and_angular() -> None:
    """Chamfer heights (Table 2) and angles by shorter leg (Table 3) match ISO 2768-1."""
    # ISO 2768-1 Table 2, class m
    assert [0.2, 0.5, 1.0] == [iso2768.chamfer_tolerance_mm(h, "m") for h in (2.0, 5.0, 10.0)]
    # ISO 2768-1 Table 3, class m, shorter leg 25 mm: 0°30'
    assert 30.0 == iso2768.angular_tolerance_arcmin(25.0, "m")
    # ISO 2768-1 Table 3, class m: 1°, 0°20', 0°10', 0°5'
    assert [60.0, 20.0, 10.0, 5.0] == [iso2768.angular_tolerance_arcmin(x, "m")
                                       for x in (8.0, 100.0, 200.0, 500.0)]
    # ISO 2768-1 Table 3, classes c and v at 8 mm: 1°30', 3°
    assert (90.0, 180.0) == (iso2768.angular_tolerance_arcmin(8.0, "c"),
                             iso2768.angular_tolerance_arcmin(8.0, "v"))
    with pytest.raises(SpecError, match="ISO 2768-1"):
        iso2768.linear_tolerance_mm(10.0, "x")


# ---- angle and length text ---------------------------------------------------------------------

def test_angle_text_rounds_from_the_design_value() -> None:
    """DMS text rounds (never truncates) and drops zero fields; arcsec tolerance keeps seconds."""
    assert "33°29′47″ ±1′" == fmt.angle_text(33 + 29 / 60 + 46.6 / 3600, 60.0)
    assert "36°08′ ±30″" == fmt.angle_text(36 + 8 / 60, 30.0)
    assert "60° ±3′" == fmt.angle_text(59.99999999, 180.0)
    assert "60°" == fmt.dms(math.degrees(math.acos(0.5)))  # 59.99999999999999 must not read 59°59′
    assert "0°30′" == fmt.dms(0.5)  # sub-degree angles keep the leading 0° (ISO 129-1, from memory)
    assert "±10′" == fmt.angle_tolerance_text(600.0)
    assert "12.00 ±0.10" == fmt.length_text(12.0, 0.1, decimals=2)
    assert "7,94" == fmt.length_text(7.94, decimal_comma=True)


# ---- sheet, frame, grid, title block -----------------------------------------------------------

def test_sheet_sizes_and_frames() -> None:
    """A3/A4 sizes (ISO 216) and the 20/10 mm bordered frame (ISO 5457)."""
    a3, a4 = load_template("a3-landscape"), load_template("a4-landscape")
    assert (420.0, 297.0) == (a3.width_mm, a3.height_mm)  # ISO 216 A3
    assert (297.0, 210.0) == (a4.width_mm, a4.height_mm)  # ISO 216 A4
    assert (390.0, 277.0) == a3.frame_box[2:]  # ISO 5457:1999 frame on A3 landscape
    assert (20.0, 10.0, 10.0, 10.0) == (a3.border_left_mm, a3.border_right_mm, a3.border_top_mm,
                                        a3.border_bottom_mm)  # ISO 5457 borders, from memory
    assert 180.0 == a3.title_width_mm == a4.title_width_mm  # ISO 7200 block width


@pytest.mark.parametrize(("name", "long_side", "short_side"), [
    ("a3-landscape", 8, 6),  # ISO 5457:1999 grid, A3
    ("a4-landscape", 6, 4),  # ISO 5457:1999 grid, A4
])
def test_grid_zone_counts(name: str, long_side: int, short_side: int) -> None:
    """50 mm grid fields counted from the centring lines give the ISO 5457 field counts."""
    t = load_template(name)
    x0, y0, w, h = t.frame_box
    cols = grid_fields(x0, x0 + w, t.width_mm / 2, t.grid_field_mm)
    rows = grid_fields(y0, y0 + h, t.height_mm / 2, t.grid_field_mm)
    assert (long_side, short_side) == (len(cols) - 1, len(rows) - 1)


def test_grid_letters_skip_i_and_o() -> None:
    """Eight rows are A to H; a ninth would be J (ISO 5457)."""
    assert ("A", "B", "C", "D", "E", "F", "G", "H") == grid_letters(8)
    assert "J" == grid_letters(9)[-1]
    assert "O" not in grid_letters(20)


def test_title_block_has_the_iso7200_mandatory_fields(sheets: dict[str, Sheet]) -> None:
    """The 8 mandatory ISO 7200 fields are labelled and filled."""
    texts = set(sheets["brewster"].texts())
    mandatory = {"Legal owner": "Example Optics Lab", "Identification number": "EX-1001-01",
                 "Date of issue": "2026-12-01", "Sheet": "1/2", "Title": "Brewster expander prism",
                 "Approval person": "C. Approver", "Creator": "A. Drafter",
                 "Document type": "Fabrication drawing"}
    for label, value in mandatory.items():
        assert label in texts
        assert value in texts
    assert {"First issue", "A"} <= texts  # revision table row


def test_scale_is_from_iso5455_series(sheets: dict[str, Sheet]) -> None:
    """Every sheet's scale is one of the ISO 5455 scales and is printed in the title block."""
    allowed = {f"{a}:{b}" for a, b in ISO_5455_SCALES}
    for sheet in sheets.values():
        assert sheet.scale_text in allowed
        assert sheet.scale_text in sheet.texts()


def test_general_notes(sheets: dict[str, Sheet]) -> None:
    """Units, ISO 8015, ISO 2768 for non-optical features, fine ground, handling, laser safety."""
    text = " ".join(sheets["brewster"].texts())
    for phrase in ("millimetres", "ISO 8015", "ISO 2768-mK", "fine ground", "ground faces only",
                   "sharp edges", "gloves", "IEC 60825-1", "ANSI Z136.1", "laser safety officer",
                   "back reflections", "Ray path", "Pyramidal error", "≤ 1′"):
        assert phrase in text, phrase


# ISO 10110 indications, syntax per ISO 10110 parts 2-4 (material), 5 (form), 7 (imperfections)
ISO_10110 = {
    "ISO 10110-5 surface form": re.compile(r"^3/ ?(\d+(\.\d+)?|-)\((\d+(\.\d+)?)(/\d+(\.\d+)?)?\); λ = \d+(\.\d+)? nm$"),
    "ISO 10110-7 surface imperfections": re.compile(
        r"^5/ ?\d+ ?× ?\d+(\.\d+)?(; ?C ?\d+ ?× ?\d+(\.\d+)?)?(; ?L ?\d+ ?× ?\d+(\.\d+)?)?(; ?E ?\d+(\.\d+)?)?$"),
    "ISO 10110-2 stress birefringence": re.compile(r"^0/\d+$"),
    "ISO 10110-3 bubbles": re.compile(r"^1/\d+ ?× ?\d+(\.\d+)?$"),
    "ISO 10110-4 inhomogeneity and striae": re.compile(r"^2/\d;\d$"),
}


def _cells(sheet: Sheet) -> list[str]:
    return [ln for t in sheet.of_type(Table) for c in t.cells for ln in c.lines]  # type: ignore[attr-defined]


def test_iso10110_indications_in_the_face_table(sheets: dict[str, Sheet]) -> None:
    """Every ISO 10110 code of the part stands in the face table and passes the syntax check."""
    part = sample_part()
    joined = " ".join(_cells(sheets["brewster"]))
    codes = [f.surface_form for f in part.faces if f.polished]
    codes += [f.surface_imperfections for f in part.faces if f.polished]
    codes += list(part.material_indications)
    for code in codes:
        assert code in joined
        assert any(rx.match(code) for rx in ISO_10110.values()), code
    assert "nd = 1.5168 ±0.0005" in joined and "νd = 64.17 ±0.8 %" in joined
    assert "uncoated: Brewster" in joined and "fine ground" in joined


# ---- dimensions --------------------------------------------------------------------------------

@pytest.mark.parametrize("name", ["brewster", "dispersing", "fold", "brewster-a4", "fold-third"])
def test_dimensions_measure_the_model(sheets: dict[str, Sheet], name: str) -> None:
    """Paper geometry / scale equals the stated model value, for every dimension."""
    sheet = sheets[name]
    for d in sheet.of_type(AlignedDim) + sheet.of_type(LinearDim):
        a, b = d.dim_line()  # type: ignore[union-attr]
        assert math.dist(a, b) / sheet.scale == pytest.approx(d.measured_mm, abs=1e-9)  # type: ignore[union-attr]
    angles = sheet.of_type(AngularDim)
    part = {"brewster": sample_part, "brewster-a4": sample_part, "dispersing": dispersing_prism,
            "fold": fold_prism, "fold-third": fold_prism}[name]()
    n = len(part.prism.vertices_mm)
    assert n == len(angles)
    for d in angles:
        a1, a2 = d.arc_deg()  # type: ignore[union-attr]
        assert (a2 - a1) % 360 == pytest.approx(d.measured_deg, abs=1e-9)  # type: ignore[union-attr]
    assert pytest.approx(180.0 * (n - 2), abs=1e-9) == sum(d.measured_deg for d in angles)  # type: ignore[union-attr]


def test_section_is_defined_once(sheets: dict[str, Sheet]) -> None:
    """2n-3 defining dimensions; the rest auxiliary in parentheses (ISO 129-1, from memory)."""
    part = sample_part()
    plan = dims.plan_dimensions(part)
    n = len(part.prism.vertices_mm)
    defining = sum(k != "auxiliary" for k in plan.angles) + sum(k == "size" for k in plan.lengths)
    defining += sum(k != "auxiliary" for k in plan.cross_kinds)
    assert 2 * n - 3 == defining
    angles = sheets["brewster"].of_type(AngularDim)
    assert {"90° ±1′", "33°29′38″ ±1′", "(56°30′22″)"} == {a.text for a in angles}  # type: ignore[union-attr]
    for d in sheets["brewster"].of_type(AlignedDim) + angles:
        assert d.auxiliary == d.text.startswith("(")  # type: ignore[union-attr]


def test_one_text_height_for_dimensions(sheets: dict[str, Sheet]) -> None:
    """ISO 129-1: one character height for all dimensions."""
    assert 3.5 == sheets["brewster"].dimension_text_mm


def test_views_follow_the_projection_method(sheets: dict[str, Sheet]) -> None:
    """First angle: the view from the right stands left of the principal section; third: right."""
    def side_centre(sheet: Sheet) -> tuple[float, float]:
        outline = [e for e in sheet.entities if getattr(e, "layer", None) is not None
                   and e.layer.name == "OUTLINE" and hasattr(e, "points")]
        xs = [sum(p[0] for p in e.points) / len(e.points) for e in outline]  # type: ignore[attr-defined]
        return xs[1], xs[0]  # side view, main view

    side, main = side_centre(sheets["fold"])
    assert side < main
    side, main = side_centre(sheets["fold-third"])
    assert side > main


def test_projection_symbol_orientation(sheets: dict[str, Sheet]) -> None:
    """ISO 5456-2: first angle puts the circles right of the frustum, third angle left (row 35)."""
    from prismfab.drawing.frame import projection_symbol
    from prismfab.drawing.sheet import Circle, Polyline

    for projection, circles_right in (("first-angle", True), ("third-angle", False)):
        ents = projection_symbol((0.0, 0.0), projection)
        trap = next(e for e in ents if isinstance(e, Polyline))
        circle = next(e for e in ents if isinstance(e, Circle))
        small_end_x = trap.points[0][0]
        large_end_x = trap.points[1][0]
        assert small_end_x < large_end_x  # small end on the left in both symbols
        assert (circle.centre[0] > large_end_x) is circles_right


def test_datums_labels_and_callouts(sheets: dict[str, Sheet]) -> None:
    """Datums A and B with triangles, face letters, bevel and sharp-edge callouts, ray label."""
    sheet = sheets["brewster"]
    texts = sheet.texts()
    assert {"A", "B", "C"} <= set(texts)
    assert len(sheet.of_type(Solid)) >= 2
    leaders = [" ".join(e.lines) for e in sheet.of_type(Leader)]  # type: ignore[union-attr]
    assert any("bevel 0.3 max × 45°" in t for t in leaders)
    assert any("edge B/C sharp" in t and "chips ≤ 0.1 mm" in t for t in leaders)  # chip limit at the edge
    # The ray path is labelled by a leader where one fits cleanly, else by the numbered note.
    assert any("ray path for reference" in t for t in leaders) or any(
        t.startswith("Ray path, plane of incidence") for t in texts)


def test_texts_stay_inside_the_sheet(sheets: dict[str, Sheet]) -> None:
    """Nothing is placed off the paper."""
    for sheet in sheets.values():
        for t in sheet.of_type(Text):
            x, y = t.position  # type: ignore[union-attr]
            assert 0 <= x <= sheet.width_mm and 0 <= y <= sheet.height_mm


def test_bad_template_and_projection() -> None:
    """Unknown templates and projections are typed errors naming the field."""
    with pytest.raises(SpecError, match="sheet.template"):
        layout_part(sample_part(), sample_info(), template="b5-portrait")
    with pytest.raises(SpecError, match="sheet.projection"):
        layout_part(sample_part(), sample_info(), projection="second-angle")


def test_user_template_file(tmp_path: Path) -> None:
    """A user's own template file is accepted; a broken one names the field."""
    src = Path(__file__).parents[1] / "templates" / "sheets" / "a3-landscape.yaml"
    mine = tmp_path / "mine.yaml"
    mine.write_text(src.read_text(encoding="utf-8").replace("name: a3-landscape", "name: mine"),
                    encoding="utf-8")
    assert "mine" == layout_part(sample_part(), sample_info(), template=str(mine)).template
    mine.write_text("name: broken\n", encoding="utf-8")
    with pytest.raises(SpecError, match="sheet.template.paper"):
        load_template(str(mine))


# ---- DXF ---------------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def dxf_docs(sheets: dict[str, Sheet]) -> dict[str, object]:
    from prismfab.drawing import dxf

    return {name: dxf.render(sheets[name])
            for name in ("brewster", "dispersing", "fold", "brewster-a4", "apex-flat")}


@pytest.mark.parametrize("name", ["brewster", "dispersing", "fold", "brewster-a4", "apex-flat"])
def test_dxf_reads_back(tmp_path: Path, sheets: dict[str, Sheet], dxf_docs: dict[str, object],
                        name: str) -> None:
    """Audit clean; every DIMENSION measures the model value; header and styles in millimetres."""
    import ezdxf

    from prismfab.drawing import dxf

    path = dxf.save(dxf_docs[name], tmp_path / f"{name}.dxf")
    doc = ezdxf.readfile(path)
    assert not doc.audit().has_errors
    assert (4, 1, 1.0) == (doc.header["$INSUNITS"], doc.header["$MEASUREMENT"],
                           doc.header["$DIMLFAC"])
    assert "PF-MM" == doc.header["$DIMSTYLE"]
    assert 3.5 == doc.dimstyles.get("PF-MM").dxf.dimtxt
    for name_lt in ("HIDDEN", "CENTER", "PHANTOM", "DASHED"):
        assert name_lt in doc.linetypes
    assert (12.0, 1.5, 0.25, 1.5) == doc.linetypes.get("CENTER").simplified_line_pattern()  # mm
    sheet = sheets[name]
    expected = sorted([round(d.measured_mm, 6) for d in sheet.of_type(AlignedDim) + sheet.of_type(LinearDim)]  # type: ignore[union-attr]
                      + [round(d.measured_deg, 6) for d in sheet.of_type(AngularDim)])  # type: ignore[union-attr]
    got = []
    for dim in doc.modelspace().query("DIMENSION"):
        assert dim.dxf.geometry in doc.blocks  # rendered
        m = dim.get_measurement()
        if dim.dimtype in (2, 5):  # angular: degrees
            got.append(round(float(m), 6))
        else:
            lfac = dim.override().get("dimlfac", 1.0)  # 1/scale: paper length -> part length
            got.append(round(float(m) * lfac, 6))
        assert dim.dxf.text and "<>" not in dim.dxf.text  # explicit prismfab text
    assert expected == sorted(got)
    assert 0 == len(doc.modelspace().query("MLEADER"))
    assert len(doc.modelspace().query("LEADER")) == len(sheet.of_type(Leader))


def test_dxf_is_byte_identical(tmp_path: Path, dxf_docs: dict[str, object]) -> None:
    """Two saves of a fresh render give the same bytes."""
    from prismfab.drawing import dxf

    a = dxf.save(dxf.render(layout_part(sample_part(), sample_info())), tmp_path / "a.dxf")
    b = dxf.save(dxf.render(layout_part(sample_part(), sample_info())), tmp_path / "b.dxf")
    assert a.read_bytes() == b.read_bytes()


_SEED_PROBE = """
import hashlib, sys, tempfile
from pathlib import Path
from prismfab.drawing import dxf, layout_part
from tests.fixtures import sample_info, sample_part
path = Path(tempfile.mkdtemp()) / "a.dxf"
dxf.save(dxf.render(layout_part(sample_part(), sample_info())), path)
print(hashlib.sha256(path.read_bytes()).hexdigest())
"""


def test_dxf_is_byte_identical_across_hash_seeds() -> None:
    """Two processes with different string hash seeds write the same bytes (CLASSES order).

    Seed 42 orders the CLASSES section differently from seed 0 when ezdxf is left to its set
    iteration; the writer fixes the order.
    """
    import os
    import subprocess
    import sys

    root = Path(__file__).resolve().parents[1]
    digests = []
    for seed in ("0", "42"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        done = subprocess.run([sys.executable, "-c", _SEED_PROBE], capture_output=True, text=True,
                              cwd=root, env=env, timeout=120, check=True)
        digests.append(done.stdout.strip())
    assert digests[0] == digests[1]


def test_dxf_save_reports_unwritable_folder(tmp_path: Path, dxf_docs: dict[str, object]) -> None:
    """A missing folder is an OutputError and leaves nothing behind."""
    from prismfab.drawing import dxf
    from prismfab.errors import OutputError

    with pytest.raises(OutputError, match="cannot write the drawing"):
        dxf.save(dxf_docs["brewster"], tmp_path / "missing" / "x.dxf")


def test_dxf_renders_to_png(dxf_docs: dict[str, object], sheets: dict[str, Sheet]) -> None:
    """Each DXF modelspace renders with ezdxf's drawing add-on (PNG for a person to look at)."""
    import matplotlib

    matplotlib.use("Agg")
    from ezdxf.addons.drawing import matplotlib as draw

    RENDER_DIR.mkdir(exist_ok=True)
    for name, doc in dxf_docs.items():
        out = RENDER_DIR / f"drawing-{name}.png"
        sheet = sheets[name]
        draw.qsave(doc.modelspace(), str(out), dpi=90, bg="#FFFFFF",  # type: ignore[attr-defined]
                   size_inches=(sheet.width_mm / 25.4, sheet.height_mm / 25.4))
        assert out.stat().st_size > 20_000


# ---- the shop's reading of the drawing ------------------------------------------------------------

@pytest.mark.parametrize(("arcsec", "text"), [
    (30.0, "±30″"),     # under 1′: seconds (common practice)
    (2.5, "±2.5″"),     # a fraction of a second is kept, never rounded looser (common practice)
    (60.0, "±1′"),      # from 1′ on: minutes (common practice)
    (90.0, "±1′30″"),   # minutes and seconds (common practice)
    (300.0, "±5′"),     # never "±300″" (common practice)
    (3600.0, "±1°"),    # ISO 129-1 degree notation, from memory
    (5400.0, "±1°30′"),
])
def test_angle_tolerance_text_the_trade_way(arcsec: float, text: str) -> None:
    """Angular tolerances in seconds under 1′, else in degrees, minutes and seconds."""
    assert text == fmt.angle_tolerance_text(arcsec)


def test_tolerance_block_uses_trade_notation(sheets: dict[str, Sheet]) -> None:
    """The tolerance block writes minutes (±1′, ≤ 1′), never a seconds count over 59."""
    cells = _cells(sheets["brewster"])
    assert any(c.startswith("±1′ (edges") for c in cells)
    assert any(c.startswith("≤ 1′, each optical face") for c in cells)
    assert not any(re.search(r"\d{3,}″", t) for t in sheets["fold"].texts())


def _outline(sheet: Sheet, n_min: int) -> tuple[tuple[float, float], ...]:
    """The principal section's outline polyline (the main view's first wide closed polyline)."""
    from prismfab.drawing.sheet import Layer, Polyline

    for e in sheet.of_type(Polyline):
        if e.layer is Layer.OUTLINE and e.closed and len(e.points) >= n_min:  # type: ignore[union-attr]
            return e.points  # type: ignore[union-attr]
    raise AssertionError("no outline")


def _section(sheet: Sheet, part) -> tuple[tuple[float, float], ...]:  # type: ignore[no-untyped-def]
    """Paper vertices of the sharp section: the scaled polygon moved onto the dimensions' ends."""
    ends = [p for d in sheet.of_type(AlignedDim) for p in (d.p1, d.p2)]  # type: ignore[union-attr]
    v = part.prism.vertices_mm
    s = sheet.scale
    for e in ends:
        t = (e[0] - s * v[0][0], e[1] - s * v[0][1])
        pts = tuple((s * x + t[0], s * y + t[1]) for x, y in v)
        if all(any(math.dist(p, q) < 1e-6 for q in ends) for p in pts):
            return pts
    raise AssertionError("section not found")


def _on_line(p: tuple[float, float], a: tuple[float, float], b: tuple[float, float]) -> float:
    """Distance of p from the infinite line through a and b."""
    return abs((b[0] - a[0]) * (p[1] - a[1]) - (b[1] - a[1]) * (p[0] - a[0])) / math.dist(a, b)


def test_apex_flat_angle_at_the_virtual_corner(sheets: dict[str, Sheet], tmp_path: Path) -> None:
    """The angle across an apex flat is dimensioned at the faces' theoretical sharp corner.

    ISO 129-1 practice: the two faces are extended by thin
    lines to the sharp corner and the functional angle carries its tolerance there.
    """
    import ezdxf

    from prismfab.drawing import dxf

    sheet = sheets["apex-flat"]
    pts = _outline(sheet, 4)  # no bevelled side edges: the outline is the section itself
    b_face, d_face = (pts[1], pts[2]), (pts[3], pts[0])
    across = [d for d in sheet.of_type(AngularDim) if abs(d.measured_deg - 40.0) < 1e-6]  # type: ignore[union-attr]
    assert 1 == len(across)
    dim = across[0]
    assert _on_line(dim.vertex, *b_face) < 1e-6 and _on_line(dim.vertex, *d_face) < 1e-6  # type: ignore[union-attr]
    assert dim.vertex[1] > pts[2][1]  # beyond the flat  # type: ignore[union-attr]
    assert "40° ±30″" == dim.text  # type: ignore[union-attr]
    # the flat's width is a dimension with the length tolerance
    flat = [d for d in sheet.of_type(AlignedDim) if abs(d.measured_mm - 1.0) < 1e-9]  # type: ignore[union-attr]
    assert ["1.00 ±0.10"] == [d.text for d in flat]  # type: ignore[union-attr]
    # the DXF DIMENSION sits at the same corner and measures the same angle
    doc = ezdxf.readfile(dxf.save(dxf.render(sheet), tmp_path / "flat.dxf"))
    hits = [d for d in doc.modelspace().query("DIMENSION") if d.dimtype in (2, 5)
            and abs(float(d.get_measurement()) - 40.0) < 1e-6]
    assert 1 == len(hits)
    centre = hits[0].dxf.defpoint4  # 3-point angular DIMENSION: defpoint4 is the vertex
    assert math.dist((centre[0], centre[1]), dim.vertex) < 1e-6  # type: ignore[union-attr]
    # five defining dimensions for a quadrilateral section (2n - 3), the rest auxiliary
    plan = dims.plan_dimensions(apex_flat_prism())
    assert ("functional",) == plan.cross_kinds
    assert 5 == (sum(k != "auxiliary" for k in plan.angles) + sum(k == "size" for k in plan.lengths)
                 + 1)


def test_functional_angles_row_names_the_angle_across_the_flat(sheets: dict[str, Sheet]) -> None:
    """The tolerance block lists the angle across the flat with the vertex angles."""
    assert any("B/D across C" in c for c in _cells(sheets["apex-flat"]))


def test_template_file_is_read_again_after_an_edit(tmp_path: Path) -> None:
    """Templates are parsed once per file version: an edited file gives the edited values."""
    source = load_template("a3-landscape")
    path = tmp_path / "mine.yaml"
    text = (Path(__file__).resolve().parents[1] / "templates" / "sheets" / "a3-landscape.yaml"
            ).read_text(encoding="utf-8")
    path.write_text(text, encoding="utf-8")
    first = load_template(str(path))
    assert first.width_mm == source.width_mm and load_template(str(path)) is first
    assert "name: a3-landscape" in text
    path.write_text(text.replace("name: a3-landscape", "name: my-own-a3-sheet"), encoding="utf-8")
    assert load_template(str(path)).name == "my-own-a3-sheet"


def test_chosen_scale_is_the_largest_that_fits() -> None:
    """The next larger ISO 5455 scale would not fit the view area (or would leave text on text
    or on the outline); text heights do not change."""
    from prismfab.drawing import layout, overlap
    from prismfab.drawing.extent import bbox

    for part in (sample_part(), fold_prism(), apex_flat_prism()):
        scale, text = layout.choose_scale(part, 200.0, 170.0)
        k = [f"{a}:{b}" for a, b in ISO_5455_SCALES].index(text)
        ents, box = layout._groups(part, scale, 3.5, "first-angle", False)
        assert box[2] - box[0] <= 200.0 - 2 * layout.AREA_PAD_MM
        assert box[3] - box[1] <= 170.0 - 2 * layout.AREA_PAD_MM
        if k > 0:
            num, den = ISO_5455_SCALES[k - 1]
            crowded, bigger = layout._groups(part, num / den, 3.5, "first-angle", False)
            assert (bigger[2] - bigger[0] > 200.0 - 2 * layout.AREA_PAD_MM
                    or bigger[3] - bigger[1] > 170.0 - 2 * layout.AREA_PAD_MM
                    or overlap.collisions(crowded, 3.5))  # too big, or text left on text
        assert bbox(ents, 3.5) == box
    # a small part gets an enlargement on A3
    assert layout_part(sample_part(), sample_info()).scale >= 5.0


def test_views_stay_inside_the_view_area(sheets: dict[str, Sheet]) -> None:
    """Every line and text of the views lies on the sheet, clear of the tables and title block."""
    from prismfab.drawing.extent import bbox
    from prismfab.drawing.sheet import Table

    for name, sheet in sheets.items():
        tables_ = [t for t in sheet.of_type(Table)]
        for e in sheet.entities:
            if not (isinstance(e, Leader) or getattr(e, "layer", None) is not None and e.layer.name in (  # type: ignore[union-attr]
                    "OUTLINE", "HIDDEN", "RAY", "APERTURE", "DIMENSION")):
                continue  # view entities only (the title block has its own symbol)
            box = bbox([e], sheet.dimension_text_mm)
            if box is None:
                continue
            assert 0 <= box[0] and box[2] <= sheet.width_mm and 0 <= box[1] and box[3] <= sheet.height_mm
            if isinstance(e, Text):
                continue  # notes and title texts stand in their own boxes
            for t in tables_:
                tb = bbox([t], sheet.dimension_text_mm)
                assert tb is not None
                overlap = box[0] < tb[2] and tb[0] < box[2] and box[1] < tb[3] and tb[1] < box[3]
                assert not overlap, (name, type(e).__name__)


def _segments(sheet: Sheet) -> list[tuple[tuple[float, float], tuple[float, float]]]:
    """Section outlines and dimension lines of a sheet."""
    segs = []
    pts = _outline(sheet, 3)
    segs += [(pts[i], pts[(i + 1) % len(pts)]) for i in range(len(pts))]
    for d in sheet.of_type(AlignedDim) + sheet.of_type(LinearDim):
        segs.append(d.dim_line())  # type: ignore[union-attr]
    return segs


def _cross(a, b, c, d) -> bool:  # type: ignore[no-untyped-def]
    def o(p, q, r):  # type: ignore[no-untyped-def]
        return (q[0] - p[0]) * (r[1] - p[1]) - (q[1] - p[1]) * (r[0] - p[0])
    return o(a, b, c) * o(a, b, d) < -1e-9 and o(c, d, a) * o(c, d, b) < -1e-9


@pytest.mark.parametrize("name", ["brewster", "dispersing", "fold", "apex-flat"])
def test_leaders_cross_no_face_and_no_dimension_line(sheets: dict[str, Sheet], name: str) -> None:
    """Callout leaders (ray path, polarisation, edges, tolerance frames) run over free paper."""
    sheet = sheets[name]
    segs = _segments(sheet)
    for lead in sheet.of_type(Leader):
        pts = lead.points  # type: ignore[union-attr]
        for p, q in zip(pts, pts[1:], strict=False):
            assert not any(_cross(p, q, a, b) for a, b in segs), (name, lead.lines)  # type: ignore[union-attr]


def test_face_letters_stand_outside_beside_their_face(sheets: dict[str, Sheet]) -> None:
    """Each face letter is outside the section and nearer its own face than any other face."""
    from prismfab.drawing.sheet import Circle

    for name in ("brewster", "dispersing", "fold"):
        sheet = sheets[name]
        part = PARTS[name]()
        pts = _section(sheet, part)
        letters = {t.text: t.position for t in sheet.of_type(Text) if len(t.text) == 1  # type: ignore[union-attr]
                   and any(isinstance(c, Circle) and math.dist(c.centre, t.position) < 1e-9  # type: ignore[union-attr]
                           for c in sheet.entities)}
        for i, face in enumerate(part.faces):
            c = letters[face.label]
            # outside: on the outer side of its own face line (counter-clockwise section)
            a, b = pts[i], pts[(i + 1) % 3]
            assert (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]) < 0

            def seg_dist(p, a, b):  # type: ignore[no-untyped-def]
                t = max(0.0, min(1.0, ((p[0] - a[0]) * (b[0] - a[0]) + (p[1] - a[1]) * (b[1] - a[1]))
                                 / math.dist(a, b) ** 2))
                return math.dist(p, (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])))
            dists = [seg_dist(c, pts[k], pts[(k + 1) % 3]) for k in range(3)]
            assert dists[i] == min(dists), (name, face.label)


def test_bevels_drawn_where_they_show(sheets: dict[str, Sheet]) -> None:
    """Bevelled vertical edges cut the section's corners; the sharp edge B/C stays a corner."""
    sheet = sheets["brewster"]  # 5:1, bevel 0.3: legs of 1 mm and more on paper
    pts = _outline(sheet, 3)
    part = sample_part()
    assert len(part.prism.vertices_mm) + 2 == len(pts)  # edges C/A and A/B cut, B/C sharp
    s = sheet.scale
    apex = part.prism.vertices_mm[2]
    assert any(math.dist(p, pts[0]) < 1e-9 for p in pts)
    # the apex (sharp edge B/C) is a vertex of the outline: its Y is the outline's top
    assert pytest.approx(max(p[1] for p in pts) - min(p[1] for p in pts)) == s * apex[1]


def test_perpendicularity_frame_value() -> None:
    """⊥ zone for a 20 mm high face and 1′ pyramidal error: 20 mm × tan 1′ = 5.8 µm.

    Derived: 1′ = 0.2909 mrad, so across a 20 mm face 1′ ≈ 5.8 µm.
    """
    from prismfab.drawing.annotate import perpendicularity_zone_mm

    assert 0.0058 == pytest.approx(perpendicularity_zone_mm(fold_prism()), abs=1e-12)


def test_perpendicularity_frames_on_the_section(sheets: dict[str, Sheet]) -> None:
    """Where it fits cleanly, the ISO 1101 frame reads ⊥ | zone | A (datum A = lower end face)."""
    for name, zone in (("brewster", "0.0029"), ("fold", "0.0058")):  # 10 and 20 mm × tan 1′
        texts = sheets[name].texts()
        frames = [i for i, t in enumerate(texts) if t == "⊥"]
        assert frames or name == "fold"
        for i in frames:
            assert (texts[i + 1], texts[i + 2]) == (zone, "A")
