"""Where the dimensions of the principal section stand (ISO 129-1), part origin at paper (0, 0).

``dims.plan_dimensions`` decides which lengths and angles the section carries; this module puts
them on paper around the outline (paper mm, the outline already drawn at the view's scale):
face lengths on the first or second level beside their face, clear-aperture chains, the
interior angles at the corners, and the functional angles across ground faces at their
theoretical sharp corner with the thin construction lines that reach it. Before the face
letters are placed, ``reserve_chains`` and ``reserve_corner_lines`` tell the placer where chain
extension lines and construction lines will run, so the letters keep clear of them.
"""

from __future__ import annotations

import math

from prismfab.drawing import dims, fmt
from prismfab.drawing.geom import add, dist, mul, sub, unit
from prismfab.drawing.placer import Placer
from prismfab.drawing.sheet import Entity, Layer, Line, LineType, Width, readable_deg
from prismfab.drawing.views import face_frame
from prismfab.model import Part

__all__ = [
    "LEVEL_MM", "angle_dims", "construction_line", "cross_angle_dims", "length_dims",
    "reserve_chains", "reserve_corner_lines", "virtual_corner",
]

P2 = tuple[float, float]
LEVEL_MM = (9.0, 17.0)  # dimension line offsets from a face: first and second level
DATUM_EXTRA_MM = 12.0  # datum B's face: dimensions stand beyond its datum symbol
INWARD_TEXT_EXTRA_MM = 3.5  # where dimension text stands between its line and the face
VIRTUAL_REACH_MM = 40.0  # a theoretical sharp corner farther off (paper) is shown by a parallel


def construction_line(a: P2, b: P2) -> Line:
    """A thin construction line (ISO 128 01.1), e.g. a face extended to its sharp corner."""
    return Line(a, b, LineType.CONTINUOUS, Width.NARROW, Layer.DIMENSION)


def virtual_corner(pts: tuple[P2, ...], cross: dims.CrossAngle) -> tuple[P2, P2, P2, float] | None:
    """Theoretical sharp corner of two faces across a ground run: (corner, dir a, dir b, reach).

    ``dir a`` runs along the face before the run, ``dir b`` along the face after it; ``reach`` is
    the larger paper distance from the run's ends to the corner. None if the faces do not meet
    beyond the run.
    """
    n = len(pts)
    q, r = pts[(cross.first + 1) % n], pts[cross.second]
    da = unit(sub(q, pts[cross.first]))
    db = unit(sub(pts[(cross.second + 1) % n], r))
    den = da[0] * db[1] - da[1] * db[0]
    if abs(den) < 1e-12:
        return None
    w = sub(r, q)
    t = (w[0] * db[1] - w[1] * db[0]) / den
    corner = add(q, mul(da, t))
    s = (corner[0] - r[0]) * db[0] + (corner[1] - r[1]) * db[1]
    if t <= 0 or s >= 0:
        return None
    return corner, da, db, max(dist(corner, q), dist(corner, r))


def reserve_chains(part: Part, pts: tuple[P2, ...], scale: float, datum: int | None,
                   placer: Placer) -> None:
    """Extension lines of the clear-aperture chains, so face letters keep clear of them."""
    for i, f in enumerate(part.faces):
        if f.clear_aperture_mm is None or f.clear_aperture_centre_mm is None:
            continue
        a, u, n, _ = face_frame(pts, i)
        reach = LEVEL_MM[0] + _level_extra(pts, i, datum) + dims.EXT_BEYOND_MM
        c, w = f.clear_aperture_centre_mm[0], f.clear_aperture_mm[0]
        for s in (c - w / 2, c + w / 2):
            p = add(a, mul(u, scale * s))
            placer.add_segment(add(p, mul(n, dims.EXT_OFFSET_MM)), add(p, mul(n, reach)))


def reserve_corner_lines(pts: tuple[P2, ...], plan: dims.DimPlan, placer: Placer) -> None:
    """The construction lines to theoretical sharp corners near enough to be drawn, so face
    letters keep clear of them (``cross_angle_dims`` draws them)."""
    for c in plan.cross:
        found = virtual_corner(pts, c)
        if found is not None and found[3] <= VIRTUAL_REACH_MM:
            corner, da, db, _ = found
            n = len(pts)
            placer.add_segment(pts[(c.first + 1) % n], add(corner, mul(da, 12.0)))
            placer.add_segment(pts[c.second], sub(corner, mul(db, 12.0)))


def length_dims(part: Part, pts: tuple[P2, ...], scale: float, th: float, placer: Placer,
                datum: int | None, plan: dims.DimPlan, decimal_comma: bool) -> list[Entity]:
    """Face lengths (second level where a clear aperture chain takes the first) and CA chains."""
    tol = part.tolerances.length_mm
    out: list[Entity] = []
    n = len(pts)
    order = sorted(range(n), key=lambda k: dims.is_flat(part, k))  # flats last: text goes round
    for i in order:
        f = part.faces[i]
        a, u, _, length = face_frame(pts, i)
        b = pts[(i + 1) % n]
        extra = _level_extra(pts, i, datum)
        level = 0
        if f.clear_aperture_mm is not None and f.clear_aperture_centre_mm is not None:
            c, w = f.clear_aperture_centre_mm[0], f.clear_aperture_mm[0]
            s0 = c - w / 2
            p0 = add(a, mul(u, scale * s0))
            p1 = add(a, mul(u, scale * (c + w / 2)))
            s0_text = fmt.length_text(s0, decimal_comma=decimal_comma)
            if s0 * scale >= dims.fmt_width(s0_text, th) + 6.0:  # else the face table gives it
                out.append(dims.aligned(a, p0, offset_mm=LEVEL_MM[0] + extra, measured_mm=s0,
                                        scale=scale, text=s0_text, text_h=th, placer=placer))
            out.append(dims.aligned(p0, p1, offset_mm=LEVEL_MM[0] + extra, measured_mm=w,
                                    scale=scale,
                                    text="CA " + fmt.length_text(w, decimals=1,
                                                                 decimal_comma=decimal_comma),
                                    text_h=th, placer=placer))
            level = 1
        value = part.prism.face_length_mm(i)
        if plan.lengths[i] == "size":
            text = fmt.length_text(value, tol, decimals=max(2, fmt.tol_decimals(tol)),
                                   decimal_comma=decimal_comma)
        else:
            text = f"({fmt.length_text(value, decimal_comma=decimal_comma)})"
        offset = LEVEL_MM[level] + extra
        if dims.is_flat(part, i):  # an apex flat: its width close to it, inside the corner's lines
            offset = min(offset, max(3.0, 0.25 * length + 2.0))
        out.append(dims.aligned(a, b, offset_mm=offset, measured_mm=value, scale=scale, text=text,
                                text_h=th, placer=placer, auxiliary=plan.lengths[i] == "auxiliary"))
    return out


def angle_dims(part: Part, pts: tuple[P2, ...], th: float, placer: Placer, plan: dims.DimPlan
               ) -> list[Entity]:
    """Interior angles at the section's corners, arc radius 6-12 mm after the shorter face.

    A corner of an apex flat whose angle the plan makes auxiliary is left out: the angle across
    the flat (``cross_angle_dims``) and the flat's width define it.
    """
    out: list[Entity] = []
    n = len(pts)
    for i in range(n):
        value = math.degrees(part.prism.interior_angle_rad(i))
        text = dims.angle_value_text(value, plan.angles[i], part.tolerances.angle_arcsec)
        if plan.angles[i] == "auxiliary" and any(
                i in c.vertices(n) and all(dims.is_flat(part, k) for k in c.between)
                for c in plan.cross):
            continue  # a corner of an apex flat: the angle across the flat and the flat define it
        shortest = min(face_frame(pts, i)[3], face_frame(pts, (i - 1) % n)[3])
        radius = max(6.0, min(12.0, 0.3 * shortest))
        out.append(dims.angle_dim(pts, i, value_deg=value, text=text, text_h=th, radius_mm=radius,
                                  placer=placer, auxiliary=plan.angles[i] == "auxiliary"))
    return out


def cross_angle_dims(part: Part, pts: tuple[P2, ...], th: float, placer: Placer,
                     plan: dims.DimPlan) -> list[Entity]:
    """Angles between optical faces across ground faces, at their theoretical sharp corner.

    The two faces are extended by thin construction lines to the corner (ISO 129-1 practice) and
    the angle stands on the vertically opposite sector beyond it. Where the corner lies too far
    off (a thin wedge), a thin line through the run's last corner parallel to the first face
    carries the angle instead.
    """
    out: list[Entity] = []
    n = len(pts)
    for c, kind in zip(plan.cross, plan.cross_kinds, strict=True):
        text = dims.angle_value_text(c.value_deg, kind, part.tolerances.angle_arcsec)
        small = math.radians(max(c.value_deg, 0.5))
        radius = max(8.0, min(30.0, 7.0 / small))
        found = virtual_corner(pts, c)
        q, r = pts[(c.first + 1) % n], pts[c.second]
        if found is not None and found[3] <= VIRTUAL_REACH_MM:
            vertex, da, db, _ = found
            lines = [construction_line(q, add(vertex, mul(da, 1.5))),
                     construction_line(r, sub(vertex, mul(db, 1.5)))]
        else:
            vertex = r
            da = unit(sub(q, pts[c.first]))
            db = unit(sub(pts[(c.second + 1) % n], r))
            lines = [construction_line(r, add(r, mul(da, radius + dims.EXT_BEYOND_MM)))]
        for line in lines:
            placer.add_segment(line.start, line.end)
        out += lines
        out.append(dims.angle_at(vertex, db, (-da[0], -da[1]), value_deg=c.value_deg, text=text,
                                 text_h=th, radius_mm=radius, placer=placer,
                                 auxiliary=kind == "auxiliary", allow_inside=False))
    return out


def _level_extra(pts: tuple[P2, ...], i: int, datum: int | None) -> float:
    """How much farther out than usual the dimensions of face ``i`` stand.

    Beyond datum B's symbol on the datum face; and by one text height where the text, read from
    the bottom or the right (ISO 129-1), stands on the face side of its line, so the face letter
    keeps the strip next to the face.
    """
    _, u, n, _ = face_frame(pts, i)
    rot = math.radians(readable_deg(math.degrees(math.atan2(u[1], u[0]))))
    inward = -math.sin(rot) * n[0] + math.cos(rot) * n[1] < -1e-9
    return (DATUM_EXTRA_MM if i == datum else 0.0) + (INWARD_TEXT_EXTRA_MM if inward else 0.0)
