"""Which dimensions define the section, and where they go on paper (ISO 129-1).

A convex n-gon has 2n - 3 degrees of freedom. The drawing gives n - 1 independent angles
(functional ones first, with the part's angle tolerance; other needed angles fall under the
general tolerance) and n - 2 face lengths with the length tolerance. The remaining angle and
the two remaining lengths are auxiliary dimensions, in parentheses, for information only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from prismfab.drawing import fmt
from prismfab.drawing.geom import add, box_hits_segment, mul, rect_of_text, sub, text_width_mm, unit
from prismfab.drawing.placer import Placer
from prismfab.drawing.sheet import AlignedDim, AngularDim, LinearDim, readable_deg
from prismfab.drawing.views import face_frame, interior_angle_deg
from prismfab.model import Part

__all__ = ["DimPlan", "aligned", "angle_dim", "plan_dimensions"]

P2 = tuple[float, float]
GAP_MM = 1.0  # text to dimension line
EXT_BEYOND_MM = 2.0  # extension line beyond the dimension line
EXT_OFFSET_MM = 1.0  # gap between the feature and the extension line


@dataclass(frozen=True, slots=True)
class DimPlan:
    """Kinds per vertex ("functional", "general", "auxiliary") and per face ("size", "auxiliary")."""

    angles: tuple[str, ...]
    lengths: tuple[str, ...]


def is_flat(part: Part, i: int) -> bool:
    """A short ground face that truncates an apex (an apex flat)."""
    face = part.prism.faces[i]
    longest = max(part.prism.face_length_mm(k) for k in range(len(part.prism.faces)))
    return (not face.role.is_optical) and (
        "flat" in face.note.lower() or part.prism.face_length_mm(i) < 0.2 * longest)


def plan_dimensions(part: Part) -> DimPlan:
    """Choose the defining and the auxiliary dimensions of the section."""
    v = part.prism.vertices_mm
    n = len(v)
    functional = [i for i in sorted(set(part.functional_angles)) if 0 <= i < n]
    chosen = functional[: n - 1]
    kinds = ["auxiliary"] * n
    for i in chosen:
        kinds[i] = "functional"
    for i in range(n):
        if len([k for k in kinds if k != "auxiliary"]) >= n - 1:
            break
        if kinds[i] == "auxiliary":
            kinds[i] = "general"
    dirs = [unit(sub(v[(i + 1) % n], v[i])) for i in range(n)]
    lengths = [part.prism.face_length_mm(i) for i in range(n)]
    best: tuple[float, int, int] | None = None
    for i in range(n):
        for j in range(i + 1, n):
            cross = dirs[i][0] * dirs[j][1] - dirs[i][1] * dirs[j][0]
            if abs(cross) < 1e-6 or is_flat(part, i) or is_flat(part, j):
                continue
            score = lengths[i] + lengths[j]
            if best is None or score > best[0] + 1e-9:
                best = (score, i, j)
    aux = {best[1], best[2]} if best else set()
    return DimPlan(tuple(kinds), tuple("auxiliary" if i in aux else "size" for i in range(n)))


def aligned(p1: P2, p2: P2, *, offset_mm: float, measured_mm: float, scale: float, text: str,
            text_h: float, placer: Placer, auxiliary: bool = False) -> AlignedDim:
    """An aligned dimension ``offset_mm`` to the right (outside) of p1 -> p2, text above its line."""
    u = unit(sub(p2, p1))
    out = (u[1], -u[0])
    a, b = add(p1, mul(out, offset_mm)), add(p2, mul(out, offset_mm))
    mid = mul(add(a, b), 0.5)
    rot = math.radians(readable_deg(math.degrees(math.atan2(u[1], u[0]))))
    up = (-math.sin(rot), math.cos(rot))
    pos = add(mid, mul(up, GAP_MM + text_h / 2))
    length = math.hypot(b[0] - a[0], b[1] - a[1])
    if fmt_width(text, text_h) > length - 2 * 2.5:  # no room between the arrows: text beside
        half = 3.0 + fmt_width(text, text_h) / 2
        for end, sign in ((a, -1.0), (b, 1.0)):
            pos = add(add(end, mul(u, sign * half)), mul(up, GAP_MM + text_h / 2))
            if placer.free(rect_of_text(pos, text, text_h)):
                break
    dim = AlignedDim(p1, p2, -offset_mm, measured_mm, scale, text, pos, auxiliary)
    placer.add_segment(a, b)
    placer.add_segment(add(p1, mul(out, EXT_OFFSET_MM)), add(a, mul(out, EXT_BEYOND_MM)))
    placer.add_segment(add(p2, mul(out, EXT_OFFSET_MM)), add(b, mul(out, EXT_BEYOND_MM)))
    _add_text_box(placer, pos, text, text_h, math.degrees(rot))
    return dim


def fmt_width(text: str, text_h: float) -> float:
    """Estimated width of dimension text, paper mm."""
    return text_width_mm(text, text_h)


def _add_text_box(placer: Placer, centre: P2, text: str, text_h: float, rot_deg: float) -> None:
    w = fmt_width(text, text_h) / 2 + 0.6
    h = text_h / 2 + 0.6
    c, s = math.cos(math.radians(rot_deg)), math.sin(math.radians(rot_deg))
    corners = [(centre[0] + c * x - s * y, centre[1] + s * x + c * y)
               for x, y in ((-w, -h), (w, -h), (w, h), (-w, h))]
    xs, ys = [p[0] for p in corners], [p[1] for p in corners]
    placer.add_box((min(xs), min(ys), max(xs), max(ys)))


def angle_dim(pts: tuple[P2, ...], i: int, *, value_deg: float, text: str, text_h: float,
              radius_mm: float, placer: Placer, auxiliary: bool) -> AngularDim:
    """The angle at vertex ``i``: inside the section for blunt corners, else on the extended sides."""
    n = len(pts)
    vx = pts[i]
    to_next = unit(sub(pts[(i + 1) % n], vx))
    to_prev = unit(sub(pts[i - 1], vx))
    alpha = interior_angle_deg(pts, i)
    attempts: list[tuple[P2, P2, bool]] = []
    if alpha >= 80.0:
        attempts.append((to_next, to_prev, True))  # inside: CCW from next side to previous side
    attempts.append(((-to_next[0], -to_next[1]), (-to_prev[0], -to_prev[1]), False))  # extended
    for k, (e1, e2, inside) in enumerate(attempts):
        bis = unit(add(e1, e2))
        leg = radius_mm + 1.5 if inside else 0.3
        p1, p2 = add(vx, mul(e1, leg)), add(vx, mul(e2, leg))
        pos = _angle_text_pos(vx, bis, e1, e2, radius_mm, text, text_h, placer,
                              allow_any=k == len(attempts) - 1, inside=inside)
        if pos is None:
            continue
        placer.add_box(rect_of_text(pos, text, text_h))
        a1 = math.atan2(e1[1], e1[0])
        sweep = (math.atan2(e2[1], e2[0]) - a1) % (2 * math.pi)
        placer.add_path([add(vx, (radius_mm * math.cos(a1 + sweep * s / 12),
                                  radius_mm * math.sin(a1 + sweep * s / 12))) for s in range(13)])
        if not inside:
            for e in (e1, e2):
                placer.add_segment(add(vx, mul(e, 1.0)), add(vx, mul(e, radius_mm + EXT_BEYOND_MM)))
        return AngularDim(vx, p1, p2, radius_mm, value_deg, text, pos, auxiliary)
    raise AssertionError("the last attempt always places the text")


def _angle_text_pos(vx: P2, bis: P2, e1: P2, e2: P2, radius_mm: float, text: str, text_h: float,
                    placer: Placer, *, allow_any: bool, inside: bool) -> P2 | None:
    """First free text centre along the bisector, then fanned to either side of it."""
    legs = [(vx, add(vx, mul(e, radius_mm + EXT_BEYOND_MM))) for e in (e1, e2)]
    base = math.atan2(bis[1], bis[0])
    reach = 12.0 if inside else 30.0
    for turn in (0.0, 0.3, -0.3, 0.6, -0.6):
        d = (math.cos(base + turn), math.sin(base + turn))
        t = radius_mm + 1.0
        while t < radius_mm + reach:
            pos = add(vx, mul(d, t))
            rect = rect_of_text(pos, text, text_h)
            if (not any(box_hits_segment(rect, p, q) for p, q in legs)
                    and placer.free(rect, in_views=inside)
                    and (not inside or placer.in_region(pos))):
                return pos
            t += 0.5
    if allow_any:
        return add(vx, mul(bis, radius_mm + 4.0 + fmt_width(text, text_h) / 2))
    return None


def height_dim(a: P2, b: P2, *, below_mm: float, measured_mm: float, scale: float, text: str,
               text_h: float, placer: Placer) -> LinearDim:
    """Horizontal dimension between paper points a and b, its line ``below_mm`` under them."""
    y = min(a[1], b[1]) - below_mm
    pos = ((a[0] + b[0]) / 2, y + GAP_MM + text_h / 2)
    placer.add_segment((a[0], y), (b[0], y))
    placer.add_box(rect_of_text(pos, text, text_h))
    return LinearDim(a, b, (a[0], y), 0.0, measured_mm, scale, text, pos)


def angle_value_text(value_deg: float, kind: str, tol_arcsec: float) -> str:
    """Text of an angle dimension by its kind."""
    if kind == "functional":
        return fmt.angle_text(value_deg, tol_arcsec)
    if kind == "general":
        return fmt.dms(value_deg, resolution_arcsec=1)
    return f"({fmt.dms(value_deg, resolution_arcsec=1)})"
