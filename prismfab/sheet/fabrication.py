"""The fabrication sheet of one part: page 1 the drawing, page 2 onward the specification.

Page 1 is the same neutral ``Sheet`` the DXF is made from, drawn as vector graphics by
``prismfab.drawing.pdf.draw_sheet``. The specification pages state, in words and tables, what the
shop needs beyond the drawing: per-face requirements, coatings written the way ISO 9211-2 asks,
material, tolerances with the yield they were derived for, inspection and test reports,
packaging and marking, and the handling and laser-safety cautions. Nothing here computes
physics: every number comes from the ``Part``.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from prismfab.drawing.fmt import angle_tolerance_text
from prismfab.model import DocumentInfo, FaceRole, Part
from prismfab.sheet import text as T

__all__ = ["fabrication_sheet", "specification_story"]

_ROLE_WORDS = {
    FaceRole.ENTRY: "entry (refracting)",
    FaceRole.EXIT: "exit (refracting)",
    FaceRole.ENTRY_EXIT: "entry and exit (refracting)",
    FaceRole.TIR: "internal reflection",
    FaceRole.MIRROR: "coated reflector",
    FaceRole.GROUND: "not optical",
}


def _sheet_size_mm(sheet: Any) -> tuple[float, float]:
    for names in (("width_mm", "height_mm"), ("page_width_mm", "page_height_mm")):
        if all(hasattr(sheet, n) for n in names):
            return float(getattr(sheet, names[0])), float(getattr(sheet, names[1]))
    size = getattr(sheet, "size_mm", None)
    if size is not None:
        return float(size[0]), float(size[1])
    return 420.0, 297.0


def _aoi_text(aoi: tuple[float, float, float] | None) -> str:
    if aoi is None:
        return "-"
    nominal, lo, hi = aoi
    if abs(hi - lo) < 0.005:
        return f"{nominal:.2f}°"
    return f"{nominal:.2f}° ({lo:.2f}…{hi:.2f}°)"


def _ca_text(ca: tuple[float, float] | None) -> str:
    return "-" if ca is None else f"{ca[0]:.1f} × {ca[1]:.1f}"


def _overall_size_mm(part: Part) -> tuple[float, float, float]:
    xs = [v[0] for v in part.prism.vertices_mm]
    ys = [v[1] for v in part.prism.vertices_mm]
    return max(xs) - min(xs), max(ys) - min(ys), part.prism.height_mm


def _face_rows(part: Part) -> list[list[str]]:
    rows = [["Face", "Function", "Finish", "Clear aperture (mm)\nalong × height",
             "Incidence", "Surface form", "Surface imperfections"]]
    for f in part.faces:
        rows.append([
            f.label,
            _ROLE_WORDS[f.role],
            "polished" if f.polished else "fine ground",
            _ca_text(f.clear_aperture_mm),
            _aoi_text(f.aoi_deg),
            f.surface_form or "-",
            f.surface_imperfections or "-",
        ])
    return rows


def _coating_lines(part: Part) -> list[str]:
    lines = []
    for f in part.faces:
        if not f.role.is_optical:
            continue
        text = f.coating_text or "uncoated"
        lines.append(f"Face {f.label}: {text}")
    if any(f.coating.type.value != "none" for f in part.faces):
        lines.append(T.COATING_VERIFICATION)
    return lines


def _material_lines(part: Part) -> list[str]:
    tol = part.tolerances
    name = part.material_name + (f" (glass code {part.material_code})" if part.material_code
                                 and part.material_code not in part.material_name else "")
    lines = [
        f"Material: {name}.",
        f"Refractive index nd = {part.nd:.5f} ± {tol.nd_tolerance:.4f}; "
        f"Abbe number vd = {part.vd:.2f} ± {tol.vd_tolerance_pct:.1f} %.",
        "Material imperfections (ISO 10110): " + ",  ".join(part.material_indications) + ".",
        T.MELT_DATA,
    ]
    return lines


def _tolerance_rows(part: Part) -> list[list[str]]:
    tol = part.tolerances
    rows = [
        ["Quantity", "Tolerance"],
        ["Functional angles", angle_tolerance_text(tol.angle_arcsec)],
        ["Pyramidal error (any optical face)",
         "≤ " + angle_tolerance_text(tol.pyramidal_arcsec).lstrip("±")],
        ["Face lengths", f"± {tol.length_mm:.2f} mm"],
        ["Height", f"± {tol.height_mm:.2f} mm"],
        ["Surface form", "per polished face, as its 3/ indication in section 1 "
         f"(fringes at λ = {tol.test_wavelength_nm:g} nm)"],
        ["Protective bevels", f"{part.bevel_mm:.2f} mm face width × 45° (max)"],
    ]
    return rows


def _yield_lines(part: Part) -> list[str]:
    tol = part.tolerances
    lines = [
        f"These tolerances were derived from the system requirements (grade: {tol.grade}). "
        f"Simulated yield of the assembled system with them: {100 * tol.yield_fraction:.1f} %."
    ]
    if tol.driving:
        lines.append(f"Driving requirement: {tol.driving}.")
    if tol.looser_yield:
        looser = "; ".join(f"{name}: {100 * y:.1f} %" for name, y in tol.looser_yield)
        lines.append(f"Yield if one class looser: {looser}.")
    lines.append(f"Relative cost index (commercial = 1.0, common practice): {tol.cost_index:.2f}.")
    return lines


def specification_story(part: Part, info: DocumentInfo) -> list[Any]:
    """The flowables of the specification pages (reportlab platypus)."""
    from prismfab.sheet import layout as L

    a, b, c = _overall_size_mm(part)
    story: list[Any] = [
        L.heading(f"Fabrication specification  {info.number}  rev {info.revision}"),
        L.para(f"{info.title}. Quantity {part.quantity}. Overall size of the section "
               f"{a:.1f} × {b:.1f} mm, height {c:.1f} mm. Drawing: page 1. "
               "Units: millimetres and degrees. Where this page and the drawing disagree, "
               "ask before making parts."),
        L.subheading("1  Faces"),
        L.table(_face_rows(part), widths=(10, 29, 18, 26, 28, 33, 33)),
        L.para("All faces not listed as polished are fine ground. Tolerances of surface form "
               "and imperfections apply within the clear aperture. " + T.DATUMS.format(
                   datums="; ".join(f"{k}: {v}" for k, v in part.datums))),
        L.subheading("2  Coatings"),
        *[L.bullet(x) for x in _coating_lines(part)],
        L.subheading("3  Material"),
        *[L.bullet(x) for x in _material_lines(part)],
        L.subheading("4  Tolerances"),
        L.table(_tolerance_rows(part), widths=(70, 110)),
        *[L.para(x) for x in _yield_lines(part)],
    ]
    if part.notes:
        story += [L.subheading("5  Part notes"), *[L.bullet(x) for x in part.notes]]
    n = 6 if part.notes else 5
    story += [
        L.subheading(f"{n}  Inspection and test report"),
        *[L.bullet(x) for x in T.INSPECTION],
        L.subheading(f"{n + 1}  Packaging and marking"),
        *[L.bullet(x.format(number=info.number, revision=info.revision)) for x in T.PACKAGING],
        L.subheading(f"{n + 2}  Handling and laser safety"),
        *[L.bullet(x) for x in T.SAFETY],
    ]
    return story


def fabrication_sheet(part: Part, sheet: Any, info: DocumentInfo, path: str | os.PathLike[str]
                      ) -> Path:
    """Write the fabrication sheet PDF of one part.

    Args:
        part: the part.
        sheet: the laid-out drawing (``prismfab.drawing.layout_part``), drawn on page 1.
        info: title-block and revision data.
        path: the PDF file to write (written to a temporary name, then renamed).

    Returns:
        The path written.
    """
    from reportlab.lib.pagesizes import A4
    from reportlab.lib.units import mm
    from reportlab.platypus import BaseDocTemplate, Frame, NextPageTemplate, PageBreak, PageTemplate

    from prismfab.drawing.pdf import draw_sheet
    from prismfab.sheet import layout as L

    L.ensure_fonts()
    target = Path(path)
    tmp = target.with_name(target.name + ".part")
    width_mm, height_mm = _sheet_size_mm(sheet)

    def _draw_page_one(canvas: Any, _doc: Any) -> None:
        draw_sheet(canvas, sheet)

    def _spec_footer(canvas: Any, doc: Any) -> None:
        L.footer(canvas, doc, f"{info.number} rev {info.revision}  ·  {info.title}",
                 "fabrication specification")

    doc = BaseDocTemplate(
        str(tmp), pagesize=(width_mm * mm, height_mm * mm), invariant=1,
        title=f"{info.number} rev {info.revision} {info.title}", author=info.company or "prismfab",
        creator="prismfab", subject="Fabrication sheet", pageCompression=1,
    )
    blank = Frame(0, 0, width_mm * mm, height_mm * mm, id="none")
    spec_frame = Frame(18 * mm, 16 * mm, A4[0] - 33 * mm, A4[1] - 30 * mm, id="spec")
    doc.addPageTemplates([
        PageTemplate(id="drawing", frames=[blank], onPage=_draw_page_one,
                     pagesize=(width_mm * mm, height_mm * mm)),
        PageTemplate(id="spec", frames=[spec_frame], onPage=_spec_footer, pagesize=A4),
    ])
    story = [NextPageTemplate("spec"), PageBreak(), *specification_story(part, info)]
    try:
        doc.build(story)
        os.replace(tmp, target)
    finally:
        if tmp.exists():
            tmp.unlink()
    return target
