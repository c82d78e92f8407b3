"""Annotations of the views: face labels, clear apertures, ray path, polarisation, datums, leaders."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

from prismfab.drawing.geom import add, dist, mul, sub, text_width_mm, unit
from prismfab.drawing.placer import Placer
from prismfab.drawing.sheet import (
    LINE_PITCH, Circle, Entity, Layer, Leader, Line, LineType, Polyline, Solid, Text, Width,
)
from prismfab.drawing.views import arrowhead

__all__ = ["datum_fits", "datum_symbol", "face_label", "find_spot", "leader", "ray_path", "tolerance_frame"]

P2 = tuple[float, float]


def face_label(centre: P2, letter: str, *, text_h: float, placer: Placer) -> tuple[Entity, ...]:
    """A face letter in a circle."""
    r = 0.8 * text_h
    placer.add_box((centre[0] - r, centre[1] - r, centre[0] + r, centre[1] + r))
    return (Circle(centre, r, layer=Layer.ANNOTATION),
            Text(centre, letter, text_h, h_align="center", v_align="middle", layer=Layer.ANNOTATION))


def _datum_geometry(foot: P2, along: P2, outward: P2, text_h: float, stem_mm: float
                    ) -> tuple[tuple[P2, P2, P2], P2, P2, P2, float]:
    """Triangle, apex, stem end, box centre and box side of a datum symbol (paper mm)."""
    half = 1.5
    apex = add(foot, mul(outward, 2.6))
    tri = (add(foot, mul(along, half)), sub(foot, mul(along, half)), apex)
    side = text_h + 2.0
    stem_end = add(apex, mul(outward, stem_mm))
    centre = add(stem_end, mul(outward, side / 2))
    # the stem meets the square at the middle of the side facing the feature
    if abs(outward[0]) > abs(outward[1]):
        stem_end = (centre[0] - math.copysign(side / 2, outward[0]), centre[1])
    else:
        stem_end = (centre[0], centre[1] - math.copysign(side / 2, outward[1]))
    return tri, apex, stem_end, centre, side


def datum_fits(foot: P2, along: P2, outward: P2, *, text_h: float, placer: Placer,
               stem_mm: float = 4.0) -> bool:
    """True when a datum symbol at ``foot`` stands on free paper: its letter box is free of text
    and lines, its stem runs through no text and crosses no line."""
    _, apex, stem_end, centre, side = _datum_geometry(foot, along, outward, text_h, stem_mm)
    box = (centre[0] - side / 2, centre[1] - side / 2, centre[0] + side / 2, centre[1] + side / 2)
    grown = (box[0] - 0.3, box[1] - 0.3, box[2] + 0.3, box[3] + 0.3)
    return (placer.free(grown) and not placer.hits_box(apex, stem_end)
            and not placer.crosses_segments(apex, stem_end))


def datum_symbol(foot: P2, along: P2, outward: P2, letter: str, *, text_h: float, placer: Placer,
                 stem_mm: float = 4.0) -> tuple[Entity, ...]:
    """ISO 5459 datum feature: filled triangle on the feature, stem, boxed letter."""
    tri, apex, stem_end, centre, side = _datum_geometry(foot, along, outward, text_h, stem_mm)
    box = ((centre[0] - side / 2, centre[1] - side / 2), (centre[0] + side / 2, centre[1] - side / 2),
           (centre[0] + side / 2, centre[1] + side / 2), (centre[0] - side / 2, centre[1] + side / 2))
    placer.add_box((centre[0] - side / 2, centre[1] - side / 2, centre[0] + side / 2,
                    centre[1] + side / 2))
    placer.add_segment(apex, stem_end)
    return (
        Solid(tri, layer=Layer.ANNOTATION),
        Line(apex, stem_end, layer=Layer.ANNOTATION),
        Polyline(box, closed=True, layer=Layer.ANNOTATION),
        Text(centre, letter, text_h, h_align="center", v_align="middle", layer=Layer.ANNOTATION),
    )


def _block(lines: tuple[str, ...], text_h: float) -> tuple[float, float]:
    w = max(text_width_mm(s, text_h) for s in lines)
    return w, text_h + (len(lines) - 1) * LINE_PITCH * text_h


PREFER_DEG = (45, 135, -45, -135, 60, 120, -60, -120, 30, 150, -30, -150, 75, 105, -75, -105, 15,
              165, -15, -165)
DISTANCES_MM = (9, 13, 18, 24, 31, 40, 50, 62, 75, 90)
FAR_MM = (110, 130, 150)
"""Leader lengths tried for a reference label before it is left to the notes."""
MAX_CROSSINGS = 3  # thin lines a reference label's leg may cross where no clean leg is free
KEEP_OFF_MM = 1.2  # how near such a leg may come to a line it may not cross (reads as apart)
CROSSING_COST = 4.0  # what a crossed line costs against the added paper and leg length (mm)


def _trials(tip: P2, w: float, h: float, text_h: float, distances: tuple[float, ...],
            prefer_deg: tuple[float, ...]) -> tuple[Any, Any, Any, Any, Any]:
    """Every trial leader spot, distance-major: elbows, shoulder ends, sides and text boxes.

    Rows follow ``distances``, columns ``prefer_deg``. Returns (elbow x, elbow y, end x, right,
    boxes); the arithmetic is the scalar formula's, element by element.
    """
    import numpy as np

    shoulder = 2.5
    cos = np.array([math.cos(math.radians(a)) for a in prefer_deg])
    sin = np.array([math.sin(math.radians(a)) for a in prefer_deg])
    d = np.array(distances, dtype=float)[:, None]
    ex, ey = tip[0] + d * cos, tip[1] + d * sin
    right = np.broadcast_to(cos >= -1e-9, ex.shape)
    end_x = np.where(right, ex + shoulder, ex - shoulder)
    tx = np.where(right, end_x + 1.0, end_x - 1.0)
    top = ey + text_h / 2 + 0.2
    boxes = np.stack([np.where(right, tx - 0.6, tx - w - 0.6), top - h - 0.8,
                      np.where(right, tx + w + 0.6, tx + 0.6), top + 0.6], axis=-1)
    return ex, ey, end_x, right, boxes


def _off_tip(tip: P2, elbow: P2, gap_mm: float = 0.6) -> P2:
    """Where a leg starts: ``gap_mm`` from the tip towards the elbow (``add(tip, mul(unit(..``)."""
    vx, vy = elbow[0] - tip[0], elbow[1] - tip[1]
    n = math.hypot(vx, vy)
    return tip[0] + vx / n * gap_mm, tip[1] + vy / n * gap_mm


def find_spot(tip: P2, w: float, h: float, *, placer: Placer, text_h: float,
              prefer_deg: tuple[float, ...] = PREFER_DEG, distances: tuple[float, ...] = DISTANCES_MM,
              towards: P2 | None = None, cross_views: bool = False,
              keep_off: Sequence[tuple[P2, P2]] | None = None
              ) -> tuple[P2, P2, bool, tuple[float, float, float, float]] | None:
    """Elbow, shoulder end, side (True = text right) and box of a free w x h block for a leader.

    Spots go out ring by ring (one distance, every direction, nearest the preferred direction
    first). A spot's text box must be free; its leg may not run through text, cross a line
    already drawn (with ``keep_off``: it may cross thin lines, at most ``MAX_CROSSINGS``, but
    none of ``keep_off`` nor come within ``KEEP_OFF_MM`` of one) or (unless ``cross_views``) cross a view; its shoulder may not
    cross a line. The cheapest spot wins: the paper it adds to the views, then leg length and
    the lines the leg crosses, then direction. Every spot is screened in one array pass (the
    placer does not change during the search).
    """
    if towards is not None:  # try directions nearest the preferred one first
        aim = math.degrees(math.atan2(towards[1], towards[0]))
        prefer_deg = tuple(sorted(prefer_deg, key=lambda a: abs((a - aim + 180.0) % 360.0 - 180.0)))
    ext = placer.extent()
    prefer_deg = tuple(prefer_deg) + tuple(a for a in (90, -90) if a not in prefer_deg)
    ex, ey, end_x, right, boxes = _trials(tip, w, h, text_h, distances, prefer_deg)
    n_ang = len(prefer_deg)
    flat = boxes.reshape(-1, 4)
    free = placer.free_many(flat)
    ok = [i for i, f in enumerate(free) if f]
    elbows = list(zip(ex.flat[ok].tolist(), ey.flat[ok].tolist(), strict=True))
    legs = [(_off_tip(tip, e), e) for e in elbows]
    shoulders = [(e, (x, e[1])) for x, e in zip(end_x.flat[ok].tolist(), elbows, strict=True)]
    if keep_off is None:
        crossings: list[int | None] = [0 if c else None for c in
                                       placer.legs_clear(legs, cross_views=cross_views)]
    else:
        crossings = [c if c is not None and c <= MAX_CROSSINGS else None for c in
                     placer.leg_crossings(legs, cross_views=cross_views, keep_off=keep_off,
                                          clear_mm=KEEP_OFF_MM)]
    shoulder_hit = placer.crosses_many(shoulders)
    good = {i: (e, s[1], c) for i, e, s, c, b in zip(ok, elbows, shoulders, crossings,
                                                     shoulder_hit, strict=True)
            if c is not None and not b}
    best: tuple[float, tuple[P2, P2, bool, tuple[float, float, float, float]]] | None = None
    for k, d in enumerate(distances):
        if best is not None and d > distances[0] and best[0] <= d * 0.2:
            break  # nothing farther out can beat a spot that keeps the views compact
        for rank in range(n_ang):
            i = k * n_ang + rank
            if i not in good:
                continue
            box = tuple(float(v) for v in flat[i])
            # Sideways growth costs more: the two views stand side by side on a sheet whose
            # view area is taller than the views are.
            grow = 0.0 if ext is None else (3.0 * (max(0.0, ext[0] - box[0]) + max(0.0, box[2] - ext[2]))
                                            + max(0.0, ext[1] - box[1]) + max(0.0, box[3] - ext[3]))
            elbow, end, crossed = good[i]
            cost = grow + 0.2 * d + CROSSING_COST * crossed + 0.01 * rank
            if best is None or cost < best[0] - 1e-9:
                best = (cost, (elbow, end, bool(right.flat[i]), box))  # type: ignore[assignment]
    return None if best is None else best[1]


def leader(tip: P2, lines: tuple[str, ...], *, text_h: float, placer: Placer,
           prefer_deg: tuple[float, ...] = PREFER_DEG, distances: tuple[float, ...] = DISTANCES_MM,
           arrow: bool = True, towards: P2 | None = None, cross_views: bool = False,
           keep_off: Sequence[tuple[P2, P2]] | None = None) -> Leader | None:
    """A leader from ``tip`` to a horizontal shoulder and a free text block; None if no room.

    The leg crosses no text, no line (with ``keep_off``: no line of those, and few thin lines;
    see ``find_spot``) and (unless ``cross_views``) no view already on the sheet.
    """
    w, h = _block(lines, text_h)
    spot = find_spot(tip, w, h, placer=placer, text_h=text_h, prefer_deg=prefer_deg,
                     distances=distances, towards=towards, cross_views=cross_views,
                     keep_off=keep_off)
    if spot is None:
        return None
    elbow, end, right, box = spot
    placer.add_box(box)
    placer.add_path([tip, elbow, end])
    tx = end[0] + (1.0 if right else -1.0)
    top = elbow[1] + text_h / 2 + 0.2
    return Leader((tip, elbow, end), lines, (tx, top), text_h, h_align="left" if right else "right",
                  arrow=arrow)


def tolerance_frame(tip: P2, cells: tuple[str, ...], *, text_h: float, placer: Placer,
                    towards: P2 | None = None) -> tuple[Entity, ...]:
    """An ISO 1101 tolerance frame (symbol | value | datum) with a leader arrow on the feature.

    Returns no entities when no free spot is found (the tolerance block still states it).
    """
    pad = 1.2
    widths = [max(text_h + 2 * pad, text_width_mm(c, text_h) + 2 * pad) for c in cells]
    w, h = sum(widths), text_h + 2 * pad
    spot = find_spot(tip, w, h + 1.0, placer=placer, text_h=text_h, towards=towards,
                     distances=(8, 11, 15, 20, 26, 33, 41, 50))
    if spot is None:
        return ()
    elbow, end, right, box = spot
    placer.add_box(box)
    # The frame stands inside the free box (0.6 mm clear of its sides), the shoulder runs on to it.
    x0 = box[0] + 0.6 if right else box[2] - 0.6 - w
    on = (x0 if right else x0 + w, end[1])
    if placer.crosses_segments(end, on):  # the shoulder may not run on: frame at its end
        x0 = end[0] if right else end[0] - w
        on = end
    end = on
    placer.add_path([tip, elbow, end])
    y0 = box[3] - 0.6 - h
    out: list[Entity] = [Leader((tip, elbow, end), (), (x0, y0 + h), text_h, arrow=True)]
    x = x0
    for cell, cw in zip(cells, widths, strict=True):
        out.append(Polyline(((x, y0), (x + cw, y0), (x + cw, y0 + h), (x, y0 + h)), closed=True,
                            layer=Layer.ANNOTATION))
        out.append(Text((x + cw / 2, y0 + h / 2), cell, text_h, h_align="center", v_align="middle",
                        layer=Layer.ANNOTATION))
        x += cw
    return tuple(out)


def ray_path(points: tuple[P2, ...], *, polarization_note: str, text_h: float, placer: Placer,
             keep_off: Sequence[tuple[P2, P2]] = (),
             room: tuple[float, float, float, float] | None = None) -> tuple[Entity, ...]:
    """Chief ray (narrow long-dash dot), direction arrows, label and polarisation mark.

    The outside leads give way to text they would run through (the chain line is broken there).
    The label and the polarisation callout stand on leaders over free paper; where no leg is
    free of lines, one may cross a few thin lines (extension and construction lines, arcs) but
    never text, the section, the ray itself or a line of ``keep_off`` (dimension lines and
    leaders, say). With ``room`` (paper mm), the label and callout stand inside it or are left
    to the notes.
    """
    def line(pts: tuple[P2, ...]) -> Polyline:
        return Polyline(pts, line_type=LineType.CENTER, width=Width.NARROW, layer=Layer.RAY)

    if len(points) >= 3:
        lead_in = placer.visible_pieces(points[0], points[1])
        lead_out = placer.visible_pieces(points[-2], points[-1])
        inner = points[1:-1]
        out: list[Entity] = [line(p) for p in lead_in[:-1]]
        start = lead_in[-1][0] if lead_in and lead_in[-1][1] == points[1] else points[1]
        end = lead_out[0][1] if lead_out and lead_out[0][0] == points[-2] else points[-2]
        path = [start]
        for p in (*inner, end):
            if dist(p, path[-1]) > 1e-9:
                path.append(p)
        out.append(line(tuple(path)))
        out += [line(p) for p in lead_out[1:]]
    else:
        out = [line(points)]
    placer.add_path(points)
    barriers = (*keep_off, *zip(points, points[1:], strict=False))
    a, b = points[0], points[1]
    u = unit(sub(b, a))
    mid = add(a, mul(sub(b, a), 0.75))
    out.append(arrowhead(add(mid, mul(u, 1.25)), u, length_mm=2.5, layer=Layer.RAY))
    if points[-1] != points[-2]:
        v = unit(sub(points[-1], points[-2]))
        tail = add(points[-2], mul(sub(points[-1], points[-2]), 0.7))
        out.append(arrowhead(tail, v, length_mm=2.5, layer=Layer.RAY))
    note = polarization_note.strip()
    mark_at = add(a, mul(sub(b, a), 0.3))
    if note and dist(a, b) <= 6.0 and len(points) > 2:  # short lead: mark the first inside leg
        u = unit(sub(points[2], points[1]))
        mark_at = add(points[1], mul(sub(points[2], points[1]), 0.35))
    if note:
        n = (-u[1], u[0])
        kind = note.lower()[:2]
        if not kind.startswith("p"):  # E-field normal to the principal section: dot in circle
            out += [Circle(mark_at, 1.3, layer=Layer.RAY), Circle(mark_at, 0.35, layer=Layer.RAY)]
        if not kind.startswith("s"):  # E-field in the principal section, normal to the ray
            p, q = add(mark_at, mul(n, 3.0)), sub(mark_at, mul(n, 3.0))
            out += [Line(p, q, layer=Layer.RAY), arrowhead(p, n, length_mm=1.8, layer=Layer.RAY),
                    arrowhead(q, mul(n, -1.0), length_mm=1.8, layer=Layer.RAY)]
        placer.add_box((mark_at[0] - 3.2, mark_at[1] - 3.2, mark_at[0] + 3.2, mark_at[1] + 3.2))
    small = round(text_h * 0.72, 1)
    # The label hangs from an outside lead (in or out) so its leg never crosses the section.
    # Nearest the outer ends first; a tip under a reserved box (the polarisation mark) is
    # skipped; then farther out, with a longer leg.
    tips = [add(points[k], mul(sub(points[j], points[k]), f))
            for f in (0.12, 0.3, 0.5, 0.05, 0.65, 0.8, 0.9, 0.72, 0.85, 0.95) for k, j in ((0, 1), (-1, -2))]
    drawn = (*lead_in, *lead_out) if len(points) >= 3 else None  # where the leads show
    tips = [t for t in tips if not placer.hits_box(t, t)
            and (drawn is None or any(_on_segment(t, p, q) for p, q in drawn))]
    label = ("ray path for reference",)
    area = placer.area
    if room is not None:  # the labels may not push the views off the sheet
        placer.area = (max(area[0], room[0]), max(area[1], room[1]), min(area[2], room[2]),
                       min(area[3], room[3]))
    try:
        for keep in (None, barriers):  # over free paper first, else crossing thin lines
            lead = _reference_leader(tips, label, small, placer, keep, DISTANCES_MM)
            if lead is not None:
                out.append(lead)
                break
            found = _on_longer_lead(points, label, small, placer, keep)
            if found:
                out += found
                break
        else:
            lead = _reference_leader(tips, label, small, placer, None, FAR_MM)
            out += [] if lead is None else [lead]
        if note:
            from prismfab.drawing.tables import wrap

            lines = ("plane of incidence = drawing plane", *wrap(f"polarisation {note}", 62.0, small))
            lead = next((lead for keep in (None, barriers) if (lead := _reference_leader(
                [mark_at], lines, small, placer, keep, DISTANCES_MM)) is not None), None)
            out += [] if lead is None else [lead]
    finally:
        placer.area = area
    return tuple(out)


def _on_segment(c: P2, p: P2, q: P2) -> bool:
    """True when point c lies on segment p-q (within 1e-6 mm): on a drawn piece of a lead."""
    dx, dy = q[0] - p[0], q[1] - p[1]
    n2 = dx * dx + dy * dy
    t = 0.0 if n2 < 1e-18 else max(0.0, min(1.0, ((c[0] - p[0]) * dx + (c[1] - p[1]) * dy) / n2))
    return math.hypot(p[0] + t * dx - c[0], p[1] + t * dy - c[1]) < 1e-6


LONGER_LEAD_MM = (4.0, 8.0, 12.0, 16.0, 20.0, 25.0, 30.0)
"""How much farther a ray lead may run out to carry its label (paper mm), nearest first."""
RUN_PAST_MM = 3.0  # the longer lead runs on this far past its label's leader


def _on_longer_lead(points: tuple[P2, ...], label: tuple[str, ...], text_h: float,
                    placer: Placer, keep_off: Sequence[tuple[P2, P2]] | None) -> list[Entity]:
    """The lead-out (else the lead-in) run on past the lines around the part to where its
    label finds room, through no text and no view: the added chain line and the label, or
    nothing. A ray line crossing dimension and extension lines reads as it did before. The
    leader leaves the lead ``RUN_PAST_MM`` short of its new end, so the ray does not seem to
    turn into the leader."""
    if len(points) < 3:
        return []
    for extra in LONGER_LEAD_MM:
        for end, inner in ((points[-1], points[-2]), (points[0], points[1])):
            out_dir = unit(sub(end, inner))
            tip, far = add(end, mul(out_dir, extra)), add(end, mul(out_dir, extra + RUN_PAST_MM))
            if (placer.hits_box(end, far) or placer.crosses_region(end, far)
                    or not placer.inside((far[0], far[1], far[0], far[1]))):
                continue
            trial = placer.copy()
            trial.add_segment(end, far)
            lead = _reference_leader([tip], label, text_h, trial, keep_off, DISTANCES_MM)
            if lead is not None:
                placer.adopt(trial)
                return [Polyline((end, far), line_type=LineType.CENTER, width=Width.NARROW,
                                 layer=Layer.RAY), lead]
    return []


def _reference_leader(tips: Sequence[P2], lines: tuple[str, ...], text_h: float, placer: Placer,
                      keep_off: Sequence[tuple[P2, P2]] | None, distances: tuple[float, ...]
                      ) -> Leader | None:
    """A reference note on a leader (no arrow) from the first tip that finds room (``leader``
    with ``keep_off``); None when none does."""
    for tip in tips:
        lead = leader(tip, lines, text_h=text_h, placer=placer, arrow=False, distances=distances,
                      keep_off=keep_off)
        if lead is not None:
            return lead
    return None
