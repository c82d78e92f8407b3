"""Annotations of the views: face labels, clear apertures, ray path, polarisation, datums, leaders."""

from __future__ import annotations

import math

from prismfab.drawing.geom import add, box_hits_segment, dist, mul, sub, text_width_mm, unit
from prismfab.drawing.placer import Placer
from prismfab.drawing.sheet import (
    LINE_PITCH, Circle, Entity, Layer, Leader, Line, LineType, Polyline, Solid, Text, Width,
)
from prismfab.drawing.views import arrowhead

__all__ = ["datum_symbol", "face_label", "leader", "ray_path"]

P2 = tuple[float, float]


def face_label(centre: P2, letter: str, *, text_h: float, placer: Placer) -> tuple[Entity, ...]:
    """A face letter in a circle."""
    r = 0.8 * text_h
    placer.add_box((centre[0] - r, centre[1] - r, centre[0] + r, centre[1] + r))
    return (Circle(centre, r, layer=Layer.ANNOTATION),
            Text(centre, letter, text_h, h_align="center", v_align="middle", layer=Layer.ANNOTATION))


def datum_symbol(foot: P2, along: P2, outward: P2, letter: str, *, text_h: float, placer: Placer,
                 stem_mm: float = 4.0) -> tuple[Entity, ...]:
    """ISO 5459 datum feature: filled triangle on the feature, stem, boxed letter."""
    half = 1.5
    apex = add(foot, mul(outward, 2.6))
    tri = (add(foot, mul(along, half)), sub(foot, mul(along, half)), apex)
    side = text_h + 2.0
    stem_end = add(apex, mul(outward, stem_mm))
    centre = add(stem_end, mul(outward, side / 2))
    box = ((centre[0] - side / 2, centre[1] - side / 2), (centre[0] + side / 2, centre[1] - side / 2),
           (centre[0] + side / 2, centre[1] + side / 2), (centre[0] - side / 2, centre[1] + side / 2))
    # the stem meets the square at the middle of the side facing the feature
    if abs(outward[0]) > abs(outward[1]):
        stem_end = (centre[0] - math.copysign(side / 2, outward[0]), centre[1])
    else:
        stem_end = (centre[0], centre[1] - math.copysign(side / 2, outward[1]))
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


def leader(tip: P2, lines: tuple[str, ...], *, text_h: float, placer: Placer,
           prefer_deg: tuple[float, ...] = (45, 135, -45, -135, 60, 120, -60, -120, 30, 150, -30,
                                            -150, 75, 105, -75, -105, 15, 165, -15, -165),
           distances: tuple[float, ...] = (9, 13, 18, 24, 31, 40, 50, 62, 75, 90), arrow: bool = True,
           towards: P2 | None = None, cross_views: bool = False) -> Leader | None:
    """A leader from ``tip`` to a horizontal shoulder and a free text block; None if no room."""
    w, h = _block(lines, text_h)
    shoulder = 2.5
    if towards is not None:  # try directions nearest the preferred one first
        aim = math.degrees(math.atan2(towards[1], towards[0]))
        prefer_deg = tuple(sorted(prefer_deg, key=lambda a: abs((a - aim + 180.0) % 360.0 - 180.0)))
    for d in distances:
        for ang in prefer_deg:
            a = math.radians(ang)
            elbow = (tip[0] + d * math.cos(a), tip[1] + d * math.sin(a))
            right = math.cos(a) >= -1e-9
            end = (elbow[0] + (shoulder if right else -shoulder), elbow[1])
            tx = end[0] + (1.0 if right else -1.0)
            top = elbow[1] + text_h / 2 + 0.2
            box = (tx - 0.6 if right else tx - w - 0.6, top - h - 0.8,
                   tx + w + 0.6 if right else tx + 0.6, top + 0.6)
            if not placer.free(box):
                continue
            if any(box_hits_segment(b, tip, elbow) and not box_hits_segment(b, tip, tip)
                   for b in placer.boxes):
                continue
            start = add(tip, mul(unit(sub(elbow, tip)), 0.6))
            if not cross_views and placer.crosses_region(start, elbow):
                continue
            placer.add_box(box)
            placer.add_path([tip, elbow, end])
            return Leader((tip, elbow, end), lines, (tx, top), text_h,
                          h_align="left" if right else "right", arrow=arrow)
    return None


def ray_path(points: tuple[P2, ...], *, polarization_note: str, text_h: float, placer: Placer
             ) -> tuple[Entity, ...]:
    """Chief ray (narrow long-dash dot), direction arrow, label and polarisation mark."""
    out: list[Entity] = [Polyline(points, line_type=LineType.CENTER, width=Width.NARROW,
                                  layer=Layer.RAY)]
    placer.add_path(points)
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
        if note.lower().startswith("s"):  # E-field normal to the principal section: dot in circle
            out += [Circle(mark_at, 1.3, layer=Layer.RAY), Circle(mark_at, 0.35, layer=Layer.RAY)]
        else:  # E-field in the principal section, normal to the ray: double arrow
            p, q = add(mark_at, mul(n, 3.0)), sub(mark_at, mul(n, 3.0))
            out += [Line(p, q, layer=Layer.RAY), arrowhead(p, n, length_mm=1.8, layer=Layer.RAY),
                    arrowhead(q, mul(n, -1.0), length_mm=1.8, layer=Layer.RAY)]
        placer.add_box((mark_at[0] - 3.2, mark_at[1] - 3.2, mark_at[0] + 3.2, mark_at[1] + 3.2))
    small = round(text_h * 0.72, 1)
    inner = points[1:-1] if len(points) > 3 else points
    tips = [mul(add(inner[k], inner[k + 1]), 0.5) for k in range(len(inner) - 1)] + [points[-1]]
    for tip in tips:
        lead = leader(tip, ("ray path for reference",), text_h=small, placer=placer, arrow=False,
                      cross_views=True)
        if lead is not None:
            out.append(lead)
            break
    if note:
        from prismfab.drawing.tables import wrap

        lines = ("plane of incidence = drawing plane", *wrap(f"polarisation {note}", 62.0, small))
        lead = leader(mark_at, lines, text_h=small, placer=placer, arrow=False, cross_views=True)
        if lead is not None:
            out.append(lead)
    return tuple(out)
