"""Lay out one part's fabrication drawing as a neutral ``Sheet``.

The whole sheet is in paper millimetres: frame, title block and tables at 1:1, the two views of
the part scaled by a factor from the ISO 5455 series chosen so both views and their dimensions
fit the template's view area. Dimensions keep their paper geometry and the model value they
state, so a backend can set its length factor to 1/scale and measure true part sizes.
"""

from __future__ import annotations

from prismfab.drawing import callouts, dims, fmt, tables
from prismfab.drawing.frame import frame, revision_table, title_block
from prismfab.drawing.geom import add, mul
from prismfab.drawing.placer import Placer
from prismfab.drawing.sheet import Entity, Layer, Line, LineType, Sheet, Width
from prismfab.drawing.template import SheetTemplate, load_template
from prismfab.drawing.views import ViewFrame, clip_ray_path, face_frame, main_outline, side_view
from prismfab.errors import SpecError
from prismfab.model import DocumentInfo, Part

__all__ = ["ISO_5455_SCALES", "choose_scale", "layout_part"]

P2 = tuple[float, float]
ISO_5455_SCALES = ((50, 1), (20, 1), (10, 1), (5, 1), (2, 1), (1, 1), (1, 2), (1, 5), (1, 10),
                   (1, 20))
"""Recommended scales of ISO 5455 (enlargement, full size, reduction), largest first."""
MARGIN_MM = 34.0  # room around the main view for two dimension levels and angle text
SIDE_MARGIN_MM = 16.0  # room around the second view
LEVEL_MM = (9.0, 17.0)
RAY_LEAD_MM = 8.0  # outside lead-in and lead-out of the ray path on paper: clear of dimensions  # dimension line offsets from a face: first and second level


def choose_scale(part: Part, area_w_mm: float, area_h_mm: float) -> tuple[float, str]:
    """Largest ISO 5455 scale at which both views with their dimensions fit the view area."""
    xs = [p[0] for p in part.prism.vertices_mm]
    ys = [p[1] for p in part.prism.vertices_mm]
    w, h, height = max(xs) - min(xs), max(ys) - min(ys), part.prism.height_mm
    for num, den in ISO_5455_SCALES:
        s = num / den
        need_w = s * (w + height) + 2 * MARGIN_MM + 2 * SIDE_MARGIN_MM
        need_h = s * h + 2 * MARGIN_MM
        if need_w <= area_w_mm and need_h <= area_h_mm:
            return s, f"{num}:{den}"
    num, den = ISO_5455_SCALES[-1]
    return num / den, f"{num}:{den}"


def _title_values(part: Part, info: DocumentInfo, t: SheetTemplate, scale_text: str) -> dict[str, str]:
    title = info.title or part.title
    return {
        "company": info.company, "number": info.number or part.number, "revision": info.revision,
        "date": info.date, "sheet": info.sheet,
        "title": f"{title}\n{info.scenario}" if info.scenario else title,
        "approved_by": info.approved_by, "drawn_by": info.drawn_by, "checked_by": info.checked_by,
        "document_type": info.document_type, "scale": scale_text, "units": "mm", "paper": t.paper,
        "quantity": str(part.quantity), "material": part.material_name, "scenario": info.scenario,
    }


def layout_part(part: Part, info: DocumentInfo, *, template: str = "a3-landscape",
                projection: str = "first-angle", decimal_comma: bool = False) -> Sheet:
    """The fabrication drawing of one part.

    Args:
        part: the part (geometry in the part frame, fabrication data).
        info: title-block and revision data.
        template: a template name in templates/sheets or the path of a template YAML file.
        projection: "first-angle" (ISO E) or "third-angle".
        decimal_comma: write decimals with a comma (ISO 129-1) instead of a point.

    Raises:
        SpecError: unknown template or projection.
    """
    if projection not in ("first-angle", "third-angle"):
        raise SpecError("sheet.projection", f"is {projection!r}",
                        fix="use first-angle or third-angle")
    t = load_template(template)
    out: list[Entity] = list(frame(t))
    rev, rev_top = revision_table(t, info.revisions)
    table, table_bottom = tables.face_table(part, t.face_table, text_h=t.text("table"),
                                            decimal_comma=decimal_comma)
    vx, vy, vw, vh = _area(t.views, rev_top, table_bottom)
    nx, ny, nw, nh = _area(t.notes, rev_top, table_bottom)
    scale, scale_text = choose_scale(part, vw, vh)
    out += title_block(t, _title_values(part, info, t, scale_text), projection)
    out += rev
    out += table
    tol, tol_bottom = tables.tolerance_table(part, nx + 1, ny + nh - 1, nw - 2, text_h=t.text("notes"),
                                             decimal_comma=decimal_comma)
    out += tol
    notes, _ = tables.notes_block(tables.general_notes(part, scale_text=scale_text), nx + 1,
                                  tol_bottom - 3, nw - 2, text_h=t.text("notes"))
    out += notes
    out += _views(part, t, (vx, vy, vw, vh), scale, projection, decimal_comma)
    return Sheet(
        width_mm=t.width_mm, height_mm=t.height_mm, scale=scale, scale_text=scale_text,
        template=t.name, projection=projection, number=info.number or part.number,
        revision=info.revision, title=info.title or part.title, entities=tuple(out),
        dimension_text_mm=t.text("dimension"),
    )


def _area(box: tuple[float, float, float, float], rev_top: float, table_bottom: float
          ) -> tuple[float, float, float, float]:
    x, y, w, h = box
    if y == 0:
        y = rev_top + 3.0
    if h == 0:
        h = table_bottom - 3.0 - y
    return x, y, w, h


def _views(part: Part, t: SheetTemplate, area: tuple[float, float, float, float], scale: float,
           projection: str, decimal_comma: bool) -> list[Entity]:
    """Both views with their dimensions and annotations, centred in the view area."""
    ax, ay, aw, ah = area
    xs = [p[0] for p in part.prism.vertices_mm]
    ys = [p[1] for p in part.prism.vertices_mm]
    w_main, h_main = scale * (max(xs) - min(xs)), scale * (max(ys) - min(ys))
    w_side = scale * part.prism.height_mm
    group = w_main + w_side + 2 * SIDE_MARGIN_MM + 2 * MARGIN_MM
    left = ax + (aw - group) / 2
    y_origin = ay + (ah - h_main) / 2 - scale * min(ys)
    if projection == "first-angle":  # second view (seen from the right) goes on the left
        side_right = left + SIDE_MARGIN_MM + w_side
        main_left = side_right + SIDE_MARGIN_MM + MARGIN_MM
    else:  # third angle: on the right
        main_left = left + MARGIN_MM
        side_right = main_left + w_main + MARGIN_MM + SIDE_MARGIN_MM + w_side
    main = ViewFrame(scale, (main_left - scale * min(xs), y_origin))
    side = ViewFrame(scale, (side_right, y_origin))
    placer = Placer((ax, ay, ax + aw, ay + ah))
    th = t.text("dimension")
    out: list[Entity] = []
    pts, outline = main_outline(part, main, placer)
    out += outline
    out += side_view(part, side, placer)
    ray = clip_ray_path(tuple(main.main(p) for p in part.ray_path_mm), lead_mm=RAY_LEAD_MM)
    if len(ray) >= 2:
        placer.add_path(ray)
    out += _apertures(part, pts, scale)
    out += _labels(part, pts, th, placer)
    datum_face = _datum_face(part)
    out += _lengths(part, pts, scale, th, placer, datum_face, decimal_comma)
    out += _angles(part, pts, th, placer)
    out += _datums(part, pts, side, th, placer, datum_face)
    out += _side_dims(part, side, scale, th, placer, decimal_comma)
    out += _edge_callouts(part, pts, side, th, placer, decimal_comma)
    if len(ray) >= 3:  # leads stop short of dimension text placed meanwhile
        ray = (placer.clear_length(ray[1], ray[0], minimum=3.0), *ray[1:-1],
               placer.clear_length(ray[-2], ray[-1], minimum=3.0))
    if len(ray) >= 2:
        out += callouts.ray_path(ray, polarization_note=part.polarization_note, text_h=th,
                                 placer=placer)
    return out


def _apertures(part: Part, pts: tuple[P2, ...], scale: float) -> list[Entity]:
    """Clear apertures: thick long-dash dot lines (ISO 128 04.2) just inside their faces."""
    out: list[Entity] = []
    for i, f in enumerate(part.faces):
        if f.clear_aperture_mm is None or f.clear_aperture_centre_mm is None:
            continue
        a, u, n, _ = face_frame(pts, i)
        c, w = f.clear_aperture_centre_mm[0], f.clear_aperture_mm[0]
        inset = mul(n, -1.2)
        p = add(add(a, mul(u, scale * (c - w / 2))), inset)
        q = add(add(a, mul(u, scale * (c + w / 2))), inset)
        out.append(Line(p, q, LineType.CENTER, Width.WIDE, Layer.APERTURE))
    return out


def _labels(part: Part, pts: tuple[P2, ...], th: float, placer: Placer) -> list[Entity]:
    """Face letters in circles, inside the section where there is room, else outside."""
    out: list[Entity] = []
    r = 0.8 * th
    for i, f in enumerate(part.faces):
        a, u, n, length = face_frame(pts, i)
        done = False
        if length > 6 * r:
            for frac in (0.5, 0.35, 0.65, 0.22, 0.78):
                c = add(add(a, mul(u, frac * length)), mul(n, -(r + 2.6)))
                if placer.free((c[0] - r, c[1] - r, c[0] + r, c[1] + r), in_views=True):
                    out += callouts.face_label(c, f.label, text_h=th, placer=placer)
                    done = True
                    break
        if not done:
            c = add(add(a, mul(u, 0.5 * length)), mul(n, r + 3.0))
            out += callouts.face_label(c, f.label, text_h=th, placer=placer)
    return out


def _angles(part: Part, pts: tuple[P2, ...], th: float, placer: Placer) -> list[Entity]:
    plan = dims.plan_dimensions(part)
    out: list[Entity] = []
    n = len(pts)
    for i in range(n):
        value = part.prism.interior_angle_rad(i) * 180.0 / 3.141592653589793
        text = dims.angle_value_text(value, plan.angles[i], part.tolerances.angle_arcsec)
        shortest = min(face_frame(pts, i)[3], face_frame(pts, (i - 1) % n)[3])
        radius = max(6.0, min(12.0, 0.3 * shortest))
        out.append(dims.angle_dim(pts, i, value_deg=value, text=text, text_h=th, radius_mm=radius,
                                  placer=placer, auxiliary=plan.angles[i] == "auxiliary"))
    return out


def _datum_face(part: Part) -> int | None:
    """Index of the side face named as a datum ("face X"), if any."""
    for _, what in part.datums:
        words = what.replace("(", " ").split()
        for k, word in enumerate(words[:-1]):
            if word.lower() == "face":
                label = words[k + 1].strip(",;.")
                for i, f in enumerate(part.faces):
                    if f.label == label:
                        return i
    return None


def _lengths(part: Part, pts: tuple[P2, ...], scale: float, th: float, placer: Placer,
             datum_face: int | None, decimal_comma: bool) -> list[Entity]:
    """Face lengths (second level where a clear aperture chain takes the first) and CA chains."""
    plan = dims.plan_dimensions(part)
    tol = part.tolerances.length_mm
    out: list[Entity] = []
    n = len(pts)
    for i, f in enumerate(part.faces):
        a, u, _, length = face_frame(pts, i)
        b = pts[(i + 1) % n]
        extra = 12.0 if i == datum_face else 0.0
        level = 0
        if dims.is_flat(part, i):
            continue  # apex flats get a callout (see _edge_callouts)
        if f.clear_aperture_mm is not None and f.clear_aperture_centre_mm is not None:
            c, w = f.clear_aperture_centre_mm[0], f.clear_aperture_mm[0]
            s0 = c - w / 2
            p0 = add(a, mul(u, scale * s0))
            p1 = add(a, mul(u, scale * (c + w / 2)))
            s0_text = fmt.length_text(s0, decimal_comma=decimal_comma)
            if s0 * scale >= dims.fmt_width(s0_text, th) + 6.0:  # else the face table gives it
                out.append(dims.aligned(a, p0, offset_mm=LEVEL_MM[0] + extra, measured_mm=s0,
                                        scale=scale, text=s0_text,
                                        text_h=th, placer=placer))
            out.append(dims.aligned(p0, p1, offset_mm=LEVEL_MM[0] + extra, measured_mm=w, scale=scale,
                                    text="CA " + fmt.length_text(w, decimals=1,
                                                                 decimal_comma=decimal_comma),
                                    text_h=th, placer=placer))
            level = 1
        value = part.prism.face_length_mm(i)
        if plan.lengths[i] == "size":
            decimals = max(2, fmt.tol_decimals(tol))
            text = fmt.length_text(value, tol, decimals=decimals, decimal_comma=decimal_comma)
        else:
            text = f"({fmt.length_text(value, decimal_comma=decimal_comma)})"
        out.append(dims.aligned(a, b, offset_mm=LEVEL_MM[level] + extra, measured_mm=value,
                                scale=scale, text=text, text_h=th, placer=placer,
                                auxiliary=plan.lengths[i] == "auxiliary"))
    return out


def _datums(part: Part, pts: tuple[P2, ...], side: ViewFrame, th: float, placer: Placer,
            datum_face: int | None) -> list[Entity]:
    out: list[Entity] = []
    for letter, what in part.datums:
        low = what.lower()
        if "end face" in low or "bottom" in low:
            ys = [p[1] for p in part.prism.vertices_mm]
            foot = side.side(0.0, min(ys) + 0.75 * (max(ys) - min(ys)))
            out += callouts.datum_symbol(foot, (0.0, 1.0), (1.0, 0.0), letter, text_h=th, placer=placer)
        elif datum_face is not None:
            a, u, nrm, length = face_frame(pts, datum_face)
            out += callouts.datum_symbol(add(a, mul(u, 0.2 * length)), u, nrm, letter, text_h=th,
                                         placer=placer)
    return out


def _side_dims(part: Part, side: ViewFrame, scale: float, th: float, placer: Placer,
               decimal_comma: bool) -> list[Entity]:
    ys = [p[1] for p in part.prism.vertices_mm]
    h = part.prism.height_mm
    tol = part.tolerances.height_mm
    text = fmt.length_text(h, tol, decimals=max(2, fmt.tol_decimals(tol)), decimal_comma=decimal_comma)
    return [dims.height_dim(side.side(h, min(ys)), side.side(0.0, min(ys)), below_mm=LEVEL_MM[0],
                            measured_mm=h, scale=scale, text=text, text_h=th, placer=placer)]


def _edge_callouts(part: Part, pts: tuple[P2, ...], side: ViewFrame, th: float, placer: Placer,
                   decimal_comma: bool) -> list[Entity]:
    """Bevel, sharp-edge and apex-flat callouts with leaders."""
    out: list[Entity] = []
    labels = [f.label for f in part.faces]
    n = len(pts)

    def outward(i: int) -> tuple[float, float]:
        a, b = pts[i - 1], pts[(i + 1) % n]
        return (2 * pts[i][0] - a[0] - b[0], 2 * pts[i][1] - a[1] - b[1])

    def vertex_of(a: str, b: str) -> int | None:
        for i in range(n):
            pair = {labels[i - 1], labels[i]}
            if pair == {a, b}:
                return i
        return None

    side_bevels = [e for e in part.bevelled_edges if vertex_of(*e) is not None]
    bevel = fmt.number_text(part.bevel_mm, 1, decimal_comma=decimal_comma)
    if side_bevels:
        i = vertex_of(*side_bevels[0])
        assert i is not None
        lead = callouts.leader(pts[i], (f"bevel {bevel} max × 45°", "edges as note 5"), text_h=th,
                               placer=placer, towards=outward(i))
        if lead:
            out.append(lead)
    elif part.bevelled_edges:
        ys = [p[1] for p in part.prism.vertices_mm]
        lead = callouts.leader(side.side(0.0, max(ys)), (f"bevel {bevel} max × 45°",), text_h=th,
                               placer=placer)
        if lead:
            out.append(lead)
    for a, b in part.sharp_edges:
        i = vertex_of(a, b)
        if i is None:
            continue
        lead = callouts.leader(pts[i], (f"edge {a}/{b} sharp", "no bevel"), text_h=th, placer=placer,
                               towards=outward(i))
        if lead:
            out.append(lead)
    tol = part.tolerances.length_mm
    for i, f in enumerate(part.faces):
        if not dims.is_flat(part, i):
            continue
        a, u, _, length = face_frame(pts, i)
        text = fmt.length_text(part.prism.face_length_mm(i), tol, decimals=max(2, fmt.tol_decimals(tol)),
                               decimal_comma=decimal_comma)
        lead = callouts.leader(add(a, mul(u, length / 2)), (f"apex flat {f.label} {text}", "fine ground"),
                               text_h=th, placer=placer)
        if lead:
            out.append(lead)
    return out
