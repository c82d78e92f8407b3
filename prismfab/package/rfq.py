"""The request-for-quote summary: one row per part, as CSV and as JSON.

Content follows what an optics shop needs to quote beyond the drawing
(common practice of optics shops' quote requests): identification (part number,
revision, title), quantity, material, overall size, the tolerances that drive the price
(angles, pyramidal error, lengths, surface form, surface imperfections), coatings per face, the
documents that make up the part's definition, and which document governs. The JSON adds the
same rows with numbers as numbers and the requests that go with every quote.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from typing import Any

from prismfab.drawing.fmt import angle_tolerance_text
from prismfab.model import Part
from prismfab.package.revisions import dumps

__all__ = ["COLUMNS", "PRECEDENCE", "REQUESTS", "overall_size_mm", "rfq_csv", "rfq_json", "rows"]

PRECEDENCE = "If the drawing and the 3D model disagree, the drawing governs."
REQUESTS = (
    "Quote each quantity listed; state lead time, delivery terms and how long the quote is valid.",
    "Supply the melt data sheet (measured nd and νd) and a certificate of conformance per lot.",
    "Report every toleranced angle and the pyramidal error (autocollimator or goniometer), with "
    "a measurement uncertainty of no more than a quarter of the tolerance.",
    "Supply an interferogram per polished face at the stated test wavelength, and the surface "
    "imperfection inspection result.",
    "Supply a spectral scan of a coating witness sample at the stated angle of incidence and "
    "polarisation.",
    "Pack each part alone; nothing hard may touch an optical face. Label each package with part "
    "number, revision and lot.",
)
COLUMNS = ("part_number", "revision", "title", "quantity", "material", "overall_size_mm",
           "angle_tolerance", "pyramidal_error", "length_tolerance_mm", "surface_form",
           "surface_imperfections", "coatings", "documents")


def overall_size_mm(part: Part) -> tuple[float, float, float]:
    """Bounding box of the section (part frame X, Y) and the height, mm."""
    xs = [x for x, _ in part.prism.vertices_mm]
    ys = [y for _, y in part.prism.vertices_mm]
    return (max(xs) - min(xs), max(ys) - min(ys), part.prism.height_mm)


def _unique(values: Sequence[str]) -> list[str]:
    return list(dict.fromkeys(v for v in values if v))


def _material(part: Part) -> str:
    code = part.material_code
    name = part.material_name if not code or code in part.material_name else \
        f"{code} {part.material_name}"
    tol = part.tolerances
    return (f"{name}, nd = {part.nd:.4f} ± {tol.nd_tolerance:g}, "
            f"νd = {part.vd:.2f} ± {tol.vd_tolerance_pct:g} %")


def _coatings(part: Part) -> list[str]:
    return [f"face {f.label}: {f.coating_text}" for f in part.faces
            if f.role.is_optical and f.coating_text]


def row(part: Part, *, revision: str, documents: Sequence[str]) -> dict[str, Any]:
    """The structured RFQ row of one part (numbers as numbers)."""
    tol = part.tolerances
    polished = [f for f in part.faces if f.polished]
    return {
        "part_number": part.number,
        "revision": revision,
        "title": part.title,
        "quantity": part.quantity,
        "material": _material(part),
        "material_code": part.material_code,
        "overall_size_mm": [round(v, 3) for v in overall_size_mm(part)],
        "angle_tolerance_arcsec": tol.angle_arcsec,
        "pyramidal_error_arcsec": tol.pyramidal_arcsec,
        "length_tolerance_mm": tol.length_mm,
        "height_tolerance_mm": tol.height_mm,
        "surface_form": _unique([f.surface_form for f in polished]),
        "surface_imperfections": _unique([f.surface_imperfections for f in polished]),
        "coatings": _coatings(part),
        "grade": tol.grade,
        "documents": list(documents),
    }


def rows(parts: Sequence[Part], *, revision: str,
         documents: dict[str, Sequence[str]]) -> list[dict[str, Any]]:
    """Structured rows, one per part; ``documents`` maps part number -> its file names."""
    return [row(p, revision=revision, documents=documents.get(p.number, ())) for p in parts]


def _csv_cells(r: dict[str, Any]) -> list[str]:
    x, y, h = r["overall_size_mm"]
    return [
        r["part_number"], r["revision"], r["title"], str(r["quantity"]), r["material"],
        f"{x:.1f} × {y:.1f} × {h:.1f}",
        angle_tolerance_text(r["angle_tolerance_arcsec"]),
        "≤ " + angle_tolerance_text(r["pyramidal_error_arcsec"]).lstrip("±"),
        f"±{r['length_tolerance_mm']:g}",
        " | ".join(r["surface_form"]), " | ".join(r["surface_imperfections"]),
        " | ".join(r["coatings"]), " ".join(r["documents"]),
    ]


def rfq_csv(structured: Sequence[dict[str, Any]]) -> str:
    """CSV text (header + one line per part, UTF-8, '\\n' line ends)."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(COLUMNS)
    for r in structured:
        writer.writerow(_csv_cells(r))
    return out.getvalue()


def rfq_json(structured: Sequence[dict[str, Any]], *, project: Any, revision: str, date: str,
             common_documents: Sequence[str]) -> str:
    """JSON text: header (project, revision, units, precedence, requests) and the rows."""
    return dumps({
        "format": 1,
        "project": project.title,
        "drawing_prefix": project.drawing_prefix,
        "company": project.company,
        "revision": revision,
        "date": date,
        "units": "mm",
        "precedence": PRECEDENCE,
        "requests": list(REQUESTS),
        "system_documents": list(common_documents),
        "parts": list(structured),
    })
