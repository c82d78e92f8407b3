"""The per-face ISO 10110 table, the tolerance block and the general notes."""

from __future__ import annotations

from prismfab.drawing import fmt
from prismfab.drawing.geom import text_width_mm
from prismfab.drawing.sheet import CELL_PAD_MM, LINE_PITCH, Cell, Entity, Layer, Table, Text
from prismfab.model import FaceRole, Part, PartFace

__all__ = ["face_table", "notes_block", "tolerance_table", "wrap"]

_FUNCTION = {
    FaceRole.ENTRY: "entry, refracting",
    FaceRole.EXIT: "exit, refracting",
    FaceRole.ENTRY_EXIT: "entry and exit",
    FaceRole.TIR: "total internal reflection",
    FaceRole.MIRROR: "coated reflector",
    FaceRole.GROUND: "ground",
}


def wrap(text: str, width_mm: float, height_mm: float) -> tuple[str, ...]:
    """Break text into lines no wider than ``width_mm`` (at spaces; long words are split)."""
    lines: list[str] = []
    for para in text.split("\n"):
        line = ""
        for word in para.split(" "):
            trial = f"{line} {word}" if line else word
            if text_width_mm(trial, height_mm) <= width_mm or not line:
                line = trial
            else:
                lines.append(line)
                line = word
            while text_width_mm(line, height_mm) > width_mm and len(line) > 1:
                cut = len(line)
                while cut > 1 and text_width_mm(line[:cut], height_mm) > width_mm:
                    cut -= 1
                lines.append(line[:cut])
                line = line[cut:]
        lines.append(line)
    return tuple(lines)


def _cell_height(lines: int, h: float) -> float:
    return 2 * CELL_PAD_MM + h + (lines - 1) * LINE_PITCH * h + 0.4 * h


def _aperture_text(part: Part, i: int, face: PartFace, decimal_comma: bool) -> str:
    if face.clear_aperture_mm is None:
        return "-"
    w, h = face.clear_aperture_mm
    start = f"{part.faces[i - 1].label}/{face.label}"
    nt = lambda v: fmt.number_text(v, 2, decimal_comma=decimal_comma)  # noqa: E731
    text = f"{fmt.number_text(w, 1, decimal_comma=decimal_comma)} × " \
           f"{fmt.number_text(h, 1, decimal_comma=decimal_comma)} (along face × height)"
    if face.clear_aperture_centre_mm is not None:
        c_face, c_height = face.clear_aperture_centre_mm
        text += f"; centre {nt(c_face)} from edge {start}, {nt(c_height)} from datum A"
    return text


def _function_text(part: Part, i: int) -> str:
    text = _FUNCTION[part.faces[i].role]
    note = part.prism.faces[i].note
    return f"{text} ({note})" if note and note.lower() not in text else text


def _aoi_text(face: PartFace) -> str:
    if face.aoi_deg is None:
        return "-"
    nom, lo, hi = face.aoi_deg
    if f"{lo:.1f}" == f"{hi:.1f}":
        return f"{nom:.1f}°"
    return f"{nom:.1f}° ({lo:.1f}° to {hi:.1f}°)"


def _material_lines(part: Part, decimal_comma: bool) -> str:
    t = part.tolerances
    nd = fmt.number_text(part.nd, 4, decimal_comma=decimal_comma)
    ndt = fmt.number_text(t.nd_tolerance, 4, decimal_comma=decimal_comma)
    vd = fmt.number_text(part.vd, 2, decimal_comma=decimal_comma)
    vdt = fmt.number_text(t.vd_tolerance_pct, 1, decimal_comma=decimal_comma)
    lines = [part.material_name]
    if part.material_code and part.material_code not in part.material_name:
        lines.append(f"glass code {part.material_code}")
    lines += [f"nd = {nd} ±{ndt}", f"νd = {vd} ±{vdt} %", *part.material_indications]
    return "\n".join(lines)


def face_table(part: Part, box: tuple[float, float, float, float], *, text_h: float,
               decimal_comma: bool = False) -> tuple[tuple[Entity, ...], float]:
    """Table with one column per optical face plus a material column, hung from the box top.

    Returns the entities and the table's bottom edge (paper mm).
    """
    x0, y0, w, h = box
    optical = [(i, f) for i, f in enumerate(part.faces) if f.role.is_optical]
    head_w = max(32.0, text_width_mm("Surface imperfections", text_h, True) + 2 * CELL_PAD_MM + 1)
    mat_w = max(48.0, 0.17 * w)
    face_w = (w - head_w - mat_w) / max(1, len(optical))
    rows: list[tuple[str, list[str]]] = [
        ("Function", [_function_text(part, i) for i, _ in optical]),
        ("Surface", ["polished" for _ in optical]),
        ("Clear aperture", [_aperture_text(part, i, f, decimal_comma) for i, f in optical]),
        ("Surface form", [f.surface_form or "-" for _, f in optical]),
        ("Surface imperfections", [f.surface_imperfections or "-" for _, f in optical]),
        ("Coating", [f.coating_text or "uncoated" for _, f in optical]),
        ("Angle of incidence", [_aoi_text(f) for _, f in optical]),
    ]
    ground = [f.label for f in part.faces if not f.role.is_optical]
    other = ("Faces " + ", ".join(ground) + " and both end faces (TOP, datum A): fine ground"
             if ground else "Both end faces (TOP, datum A): fine ground")
    pad = 2 * CELL_PAD_MM
    wrapped = [(label, [wrap(v, face_w - pad, text_h) for v in vals]) for label, vals in rows]
    heights = [max(_cell_height(len(ls), text_h) for ls in [wrap(label, head_w - pad, text_h), *cols])
               for label, cols in wrapped]
    header_h = _cell_height(1, text_h) + 1.0
    other_lines = wrap(other, face_w * len(optical) - pad, text_h)
    other_h = _cell_height(len(other_lines), text_h)
    mat_lines = tuple(ln for part_line in _material_lines(part, decimal_comma).split("\n")
                      for ln in wrap(part_line, mat_w - pad, text_h))
    body_h = max(sum(heights) + other_h, _cell_height(len(mat_lines), text_h))
    other_h = body_h - sum(heights)
    top = y0 + h
    cells = [Cell(x0, top - header_h, head_w, header_h, ("Face",), text_h, bold=True)]
    for k, (_, f) in enumerate(optical):
        cells.append(Cell(x0 + head_w + k * face_w, top - header_h, face_w, header_h, (f.label,),
                          text_h, h_align="center", bold=True))
    mx = x0 + head_w + len(optical) * face_w
    cells.append(Cell(mx, top - header_h, mat_w, header_h, ("Material",), text_h, h_align="center",
                      bold=True))
    y = top - header_h
    for (label, cols), rh in zip(wrapped, heights, strict=True):
        y -= rh
        cells.append(Cell(x0, y, head_w, rh, wrap(label, head_w - pad, text_h), text_h, bold=True))
        for k, lines in enumerate(cols):
            cells.append(Cell(x0 + head_w + k * face_w, y, face_w, rh, lines, text_h))
    y -= other_h
    cells.append(Cell(x0, y, head_w, other_h, ("Other faces",), text_h, bold=True))
    cells.append(Cell(x0 + head_w, y, face_w * len(optical), other_h, other_lines, text_h))
    cells.append(Cell(mx, y, mat_w, body_h, mat_lines, text_h))
    return (Table(tuple(cells)),), y


def tolerance_table(part: Part, x: float, top: float, width: float, *, text_h: float,
                    decimal_comma: bool = False) -> tuple[tuple[Entity, ...], float]:
    """The boxed block of angle, pyramidal and size tolerances; returns entities and its bottom."""
    t = part.tolerances
    from prismfab.drawing.dims import plan_dimensions

    plan = plan_dimensions(part)
    labels = [f.label for f in part.faces]
    pairs = [f"{labels[i - 1]}/{labels[i]}" for i, k in enumerate(plan.angles) if k == "functional"]
    pairs += [f"{labels[c.first]}/{labels[c.second]} across {', '.join(labels[k] for k in c.between)}"
              for c, k in zip(plan.cross, plan.cross_kinds, strict=True) if k == "functional"]
    functional = ", ".join(pairs)
    n = lambda v, d: fmt.number_text(v, d, decimal_comma=decimal_comma)  # noqa: E731
    rows = [
        ("Functional angles", f"{fmt.angle_tolerance_text(t.angle_arcsec)} (edges {functional})"),
        ("Pyramidal error", f"≤ {fmt.angle_tolerance_text(t.pyramidal_arcsec).lstrip('±')}, each "
                            "optical face to datum A"),
        ("Face lengths", f"±{n(t.length_mm, fmt.tol_decimals(t.length_mm))} mm unless stated"),
        ("Height", f"±{n(t.height_mm, fmt.tol_decimals(t.height_mm))} mm"),
        ("Non-optical features", "ISO 2768-mK"),
    ]
    label_w = text_width_mm("Non-optical features", text_h, True) + 2 * CELL_PAD_MM + 1
    row_h = _cell_height(1, text_h)
    cells = [Cell(x, top - row_h, width, row_h, ("TOLERANCES",), text_h, bold=True)]
    y = top - row_h
    for label, value in rows:
        lines = wrap(value, width - label_w - 2 * CELL_PAD_MM, text_h)
        rh = _cell_height(len(lines), text_h)
        y -= rh
        cells += [Cell(x, y, label_w, rh, (label,), text_h), Cell(x + label_w, y, width - label_w, rh,
                                                                  lines, text_h)]
    return (Table(tuple(cells)),), y


def general_notes(part: Part, *, scale_text: str) -> tuple[str, ...]:
    """The numbered general notes, in words."""
    bevels = ", ".join(f"{a}/{b}" for a, b in part.bevelled_edges if "TOP" not in (a, b)
                       and "BOTTOM" not in (a, b))
    ends = any("TOP" in e or "BOTTOM" in e for e in part.bevelled_edges)
    bevel_note = (f"Protective bevels {part.bevel_mm:.1f} max × 45° on side edges {bevels or 'none'}"
                  + (" and on the edges to both end faces" if ends else "") + ".")
    sharp = ", ".join(f"{a}/{b}" for a, b in part.sharp_edges)
    notes = [
        f"Dimensions in millimetres; angles in degrees, minutes and seconds. Views at {scale_text}.",
        "Tolerancing principle ISO 8015 (independency). Dimensions apply to the finished part.",
        "ISO 2768-mK applies to non-optical features only (ground faces, bevels); optical data "
        "without a tolerance: ISO 10110-11.",
        "All faces not listed in the face table fine ground.",
        bevel_note,
    ]
    if sharp and not any("sharp" in n.lower() for n in part.notes):
        notes.append(f"Edges {sharp} sharp, no bevel; chips per the E term of 5/, outside the clear "
                     "aperture.")
    notes += list(part.notes)
    notes += [
        "Clear apertures (thick chain lines) as dimensioned; surface indications apply within them.",
        "Ray path, plane of incidence and polarisation shown for reference only"
        + (f"; plane of incidence = drawing plane; polarisation {part.polarization_note}."
           if part.polarization_note else "."),
        "CAUTION, handling: handle by ground faces only, with clean powder-free gloves or finger "
        "cots; sharp edges and chips can cut.",
        "CAUTION, laser safety: every face returns stray and back reflections (uncoated, Brewster "
        "and TIR faces included); enclose and terminate them per IEC 60825-1 / ANSI Z136.1, "
        "follow local regulations and the laser safety officer.",
    ]
    return tuple(notes)


def notes_block(notes: tuple[str, ...], x: float, top: float, width: float, *, text_h: float
                ) -> tuple[tuple[Entity, ...], float]:
    """Numbered notes as text lines with hanging indent; returns entities and the bottom."""
    out: list[Entity] = [Text((x, top - text_h), "NOTES", text_h, bold=True, layer=Layer.ANNOTATION)]
    y = top - text_h - LINE_PITCH * text_h
    indent = text_width_mm("10. ", text_h)
    for k, note in enumerate(notes, start=1):
        lines = wrap(note, width - indent, text_h)
        out.append(Text((x, y - text_h), f"{k}.", text_h, layer=Layer.ANNOTATION))
        for line in lines:
            out.append(Text((x + indent, y - text_h), line, text_h, layer=Layer.ANNOTATION))
            y -= LINE_PITCH * text_h
        y -= 0.3 * text_h
    return tuple(out), y
