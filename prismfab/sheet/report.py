"""The system report: layout with the traced beam, performance per wavelength, faces, ghosts,
tuning range and tolerances, as a vector PDF.

Every number comes from the ``Solution``; nothing here traces or solves.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from prismfab.drawing.fmt import angle_tolerance_text
from prismfab.model import Pose, Prism

__all__ = ["layout_drawing", "line_plot", "report_story", "system_report"]

_BLUE = (0.12, 0.33, 0.62)
_RED = (0.75, 0.16, 0.12)
_GLASS = (0.86, 0.92, 0.97)


def _section_in_system(prism: Prism) -> list[tuple[float, float]]:
    """Mid-height section of a prism as (z, x) points of the system frame."""
    pose: Pose = prism.pose
    mid = prism.height_mm / 2.0
    out = []
    for x, y in prism.vertices_mm:
        px, _py, pz = pose.apply((x, y, mid))
        out.append((pz, px))
    return out


def layout_drawing(solution: Any, *, width_mm: float = 170.0, height_mm: float = 75.0) -> Any:
    """Top view of the system (beam along +z to the right, x up), prisms and chief ray, to scale."""
    from reportlab.graphics.shapes import Drawing, Line, PolyLine, Polygon, String
    from reportlab.lib.colors import Color
    from reportlab.lib.units import mm

    from prismfab.sheet.fonts import REGULAR

    sections = [(p.name, _section_in_system(p)) for p in solution.system.prisms]
    ray = [(z, x) for x, _y, z in solution.performance.chief_ray_mm]
    pts = [pt for _n, s in sections for pt in s] + ray
    zs, xs = [p[0] for p in pts], [p[1] for p in pts]
    span = max(max(zs) - min(zs), 1e-6), max(max(xs) - min(xs), 1e-6)
    inner_w, inner_h = (width_mm - 16) * mm, (height_mm - 16) * mm
    scale = min(inner_w / span[0], inner_h / span[1])
    z0 = (min(zs) + max(zs)) / 2.0
    x0 = (min(xs) + max(xs)) / 2.0

    def to_page(p: tuple[float, float]) -> tuple[float, float]:
        return (width_mm * mm / 2 + (p[0] - z0) * scale, height_mm * mm / 2 + (p[1] - x0) * scale)

    d = Drawing(width_mm * mm, height_mm * mm)
    for name, sec in sections:
        flat = [c for p in sec for c in to_page(p)]
        d.add(Polygon(flat, fillColor=Color(*_GLASS), strokeColor=Color(0.2, 0.25, 0.3),
                      strokeWidth=0.6))
        cz = sum(p[0] for p in sec) / len(sec)
        cx = sum(p[1] for p in sec) / len(sec)
        px, py = to_page((cz, cx))
        d.add(String(px, py - 3, name, fontName=REGULAR, fontSize=7, textAnchor="middle"))
    if len(ray) >= 2:
        d.add(PolyLine([c for p in ray for c in to_page(p)], strokeColor=Color(*_RED),
                       strokeWidth=0.7))
    # scale bar
    bar_mm = _nice_length(span[0] / 5)
    bx, by = 6 * mm, 5 * mm
    d.add(Line(bx, by, bx + bar_mm * scale, by, strokeWidth=0.8))
    d.add(String(bx, by + 2.5, f"{bar_mm:g} mm   (beam enters along +z, left to right; x up)",
                 fontName=REGULAR, fontSize=6.5))
    return d


def _nice_length(value: float) -> float:
    exp = math.floor(math.log10(max(value, 1e-9)))
    for step in (1, 2, 5, 10):
        if step * 10**exp >= value:
            return float(step * 10**exp)
    return float(10 ** (exp + 1))


def line_plot(series: Sequence[tuple[str, Sequence[tuple[float, float]]]], *, x_label: str,
              y_label: str, width_mm: float = 80.0, height_mm: float = 55.0) -> Any:
    """A small vector line plot (one or more named series of (x, y) points)."""
    from reportlab.graphics.charts.lineplots import LinePlot
    from reportlab.graphics.shapes import Drawing, String
    from reportlab.graphics.widgets.markers import makeMarker
    from reportlab.lib.colors import Color
    from reportlab.lib.units import mm

    from prismfab.sheet.fonts import REGULAR

    d = Drawing(width_mm * mm, height_mm * mm)
    lp = LinePlot()
    lp.x, lp.y = 20 * mm, 10 * mm
    lp.width, lp.height = (width_mm - 24) * mm, (height_mm - 16) * mm
    lp.data = [list(pts) for _n, pts in series]
    palette = [_BLUE, _RED, (0.2, 0.55, 0.25), (0.5, 0.3, 0.6)]
    for i in range(len(series)):
        lp.lines[i].strokeColor = Color(*palette[i % len(palette)])
        lp.lines[i].strokeWidth = 0.9
        lp.lines[i].symbol = makeMarker("FilledCircle", size=2.2)
    for axis in (lp.xValueAxis, lp.yValueAxis):
        axis.labels.fontName = REGULAR
        axis.labels.fontSize = 6.5
    ys = [y for _n, pts in series for _x, y in pts]
    if ys and max(ys) - min(ys) < 1e-9:
        lp.yValueAxis.valueMin = min(ys) - max(abs(min(ys)) * 0.01, 1e-3)
        lp.yValueAxis.valueMax = max(ys) + max(abs(max(ys)) * 0.01, 1e-3)
    lp.xValueAxis.labelTextFormat = "%g"
    lp.yValueAxis.labelTextFormat = _axis_format(ys)
    d.add(lp)
    d.add(String(lp.x + lp.width / 2, 1.5 * mm, x_label, fontName=REGULAR, fontSize=7,
                 textAnchor="middle"))
    label = String(0, 0, y_label, fontName=REGULAR, fontSize=7, textAnchor="middle")
    from reportlab.graphics.shapes import Group

    g = Group(label)
    g.translate(2.5 * mm, lp.y + lp.height / 2)
    g.rotate(90)
    d.add(g)
    if len(series) > 1:
        x = lp.x
        for i, (name, _pts) in enumerate(series):
            d.add(String(x, (height_mm - 4) * mm, f"— {name}", fontName=REGULAR, fontSize=6.5,
                         fillColor=Color(*palette[i % len(palette)])))
            x += (len(name) + 4) * 3.6
    return d


def _axis_format(values: Sequence[float]) -> str:
    if not values:
        return "%g"
    span = max(values) - min(values)
    if span == 0:
        return "%.4g"
    digits = max(0, min(6, 2 - math.floor(math.log10(span))))
    return f"%.{digits}f"


def _summary_rows(solution: Any) -> list[list[str]]:
    rows = [["Wavelength (nm)", "M in plane", "M out of plane", "Pointing (mrad)",
             "Offset (mm)", "Transmission", "Dispersion (µrad/nm)"]]
    for r in solution.performance.results:
        rows.append([
            f"{r.wavelength_nm:g}", f"{r.magnification_in_plane:.5f}",
            f"{r.magnification_out_of_plane:.5f}", f"{r.pointing_mrad:+.4f}",
            f"{r.lateral_offset_mm:+.3f}", f"{100 * r.transmission:.2f} %",
            f"{r.dispersion_rad_per_um * 1e3:+.3f}",
        ])
    return rows


def _face_rows(solution: Any) -> list[list[str]]:
    design = solution.performance.design
    aoi = {(p, f): a for p, f, a in design.aoi_deg}
    tir = {(p, f): m for p, f, m in design.tir_margin_deg}
    foot = {(p, f): (w, h) for p, f, _c, w, _ch, h in design.footprint_mm}
    rows = [["Prism", "Face", "Role", "AOI (°)", "Footprint 1/e² (mm)", "Clear aperture (mm)",
             "TIR margin (°)"]]
    cas = {(p, f): (a, h) for p, f, a, h, _c, _ch in solution.system.clear_apertures}
    for prism in solution.system.prisms:
        for face in prism.faces:
            if not face.role.is_optical:
                continue
            key = (prism.name, face.label)
            fp = foot.get(key)
            ca = cas.get(key)
            rows.append([
                prism.name, face.label, face.role.value,
                f"{aoi[key]:.3f}" if key in aoi else "-",
                f"{fp[0]:.2f} × {fp[1]:.2f}" if fp else "-",
                f"{ca[0]:.1f} × {ca[1]:.1f}" if ca else "-",
                f"{tir[key]:+.2f}" if key in tir else "-",
            ])
    return rows


def _ghost_rows(solution: Any) -> list[list[str]]:
    rows = [["Order", "Reflected at (prism face)", "λ (nm)", "Power", "To source (mrad)", "Goes", "Flag"]]
    for g in solution.performance.ghosts:
        rows.append([str(g.order), g.path, f"{g.wavelength_nm:g}", f"{100 * g.power_fraction:.3g} %",
                     f"{g.angle_to_source_mrad:.1f}", g.destination,
                     "BACK REFLECTION" if g.warning else ""])
    return rows


def _tolerance_rows(solution: Any) -> list[list[str]]:
    rows = [["Part", "Angles", "Pyramidal", "Lengths", "Surface form", "Yield", "Driving",
             "Cost index"]]
    for part in solution.parts:
        t = part.tolerances
        rows.append([part.number, angle_tolerance_text(t.angle_arcsec),
                     "≤ " + angle_tolerance_text(t.pyramidal_arcsec).lstrip("±"),
                     f"± {t.length_mm:.2f} mm",
                     f"{t.surface_form_fringes[0]:g}({t.surface_form_fringes[1]:g}) fr",
                     f"{100 * t.yield_fraction:.1f} %", t.driving or "-", f"{t.cost_index:.2f}"])
    return rows


def _tuning_plot(solution: Any) -> Any | None:
    system = solution.system
    rows = system.tuning
    if not rows or len(rows[0]) < 2:
        return None
    labels = system.tuning_labels()
    series = [(labels[i + 1] if i + 1 < len(labels) else f"column {i + 2}",
               [(r[0], r[i + 1]) for r in rows]) for i in range(len(rows[0]) - 1)]
    y_label = series[0][0] if len(series) == 1 else "value"
    return line_plot(series, x_label=labels[0], y_label=y_label, width_mm=120, height_mm=60)


def report_story(solution: Any) -> list[Any]:
    """The flowables of the system report."""
    from reportlab.platypus import Table

    from prismfab.sheet import layout as L
    from prismfab.sheet import text as T

    spec, system, perf = solution.spec, solution.system, solution.performance
    story: list[Any] = [
        L.heading(f"System report  {spec.project.drawing_prefix}  ·  {spec.project.title}"),
        L.para(f"Family: {system.family}. Prisms: "
               + ", ".join(f"{p.name} ({p.material})" for p in system.prisms)
               + f". Design wavelength {system.beam.wavelength_nm:g} nm, band "
               f"{system.beam.band_nm[0]:g}–{system.beam.band_nm[1]:g} nm, "
               f"{system.beam.polarization.value} polarisation. All values below come from an "
               "exact 3D ray trace of the sized parts."),
        L.subheading("1  Layout (top view, principal section, to scale)"),
        layout_drawing(solution),
    ]
    if system.facts:
        story.append(L.table([["Quantity", "Value"]] + [[n, f"{v:.6g} {u}".strip()]
                                                       for n, v, u in system.facts],
                             widths=(90, 80)))
    story += [L.subheading("2  Performance per wavelength"), L.table(_summary_rows(solution))]
    res = perf.results
    if len(res) >= 2:
        pts = sorted(res, key=lambda r: r.wavelength_nm)
        plots = [
            line_plot([("pointing", [(r.wavelength_nm, r.pointing_mrad) for r in pts])],
                      x_label="wavelength (nm)", y_label="pointing (mrad)"),
            line_plot([("M", [(r.wavelength_nm, r.magnification_in_plane) for r in pts])],
                      x_label="wavelength (nm)", y_label="in-plane magnification"),
        ]
        story.append(Table([plots]))
    story += [L.subheading("3  Faces: incidence, footprints and clear apertures"),
              L.table(_face_rows(solution))]
    story += [L.subheading("4  Ghosts and back reflections")]
    if perf.ghosts:
        story.append(L.table(_ghost_rows(solution)))
    else:
        story.append(L.para("No first- or second-order ghost leaves the system."))
    tuning = _tuning_plot(solution)
    if tuning is not None:
        story += [L.subheading("5  Adjustment range"), tuning]
    story += [L.subheading("6  Tolerances and yield"), L.table(_tolerance_rows(solution))]
    report = solution.tolerance_report
    summary = getattr(report, "summary_lines", None)
    if callable(summary):
        story += [L.para(line) for line in summary()]
    warnings = tuple(system.warnings) + tuple(perf.warnings)
    story += [L.subheading("7  Warnings")]
    story += [L.bullet(w) for w in warnings] or [L.para("None.")]
    story += [L.subheading("8  Safety"), *[L.bullet(x) for x in T.SAFETY]]
    return story


def system_report(solution: Any, path: str | os.PathLike[str]) -> Path:
    """Write the system report PDF (written to a temporary name, then renamed)."""
    from reportlab.lib.pagesizes import A4
    from reportlab.lib.units import mm
    from reportlab.platypus import SimpleDocTemplate

    from prismfab.sheet import layout as L

    L.ensure_fonts()
    target = Path(path)
    tmp = target.with_name(target.name + ".part")
    spec = solution.spec
    doc = SimpleDocTemplate(
        str(tmp), pagesize=A4, invariant=1, leftMargin=18 * mm, rightMargin=15 * mm,
        topMargin=15 * mm, bottomMargin=16 * mm, title=f"{spec.project.title}: system report",
        author=spec.project.company or "prismfab", creator="prismfab", subject="System report",
    )

    def _footer(canvas: Any, d: Any) -> None:
        L.footer(canvas, d, f"{spec.project.drawing_prefix}  ·  {spec.project.title}",
                 "system report")

    try:
        doc.build(report_story(solution), onFirstPage=_footer, onLaterPages=_footer)
        os.replace(tmp, target)
    finally:
        if tmp.exists():
            tmp.unlink()
    return target
