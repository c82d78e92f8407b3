"""The two views of a part with everything attached to them, each laid out around its own origin.

``main_group`` draws the principal section (part X, Y at the given scale, part origin at paper
(0, 0)) with face letters, clear apertures, face lengths, angles (functional angles across ground
faces at their theoretical sharp corners), datum B, edge callouts, ISO 1101 perpendicularity
frames and the reference ray path. ``side_group`` draws the second view (seen from +X, Z = 0 at
paper x = 0, running to -x) with the height, datum A and bevel lines. The layout moves both
groups into place once the scale is chosen.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

from prismfab.drawing import callouts, dims, fmt
from prismfab.drawing.geom import Rect, add, dist, mul, sub, unit
from prismfab.drawing.placer import Placer
from prismfab.drawing.sheet import (
    AlignedDim, Entity, Layer, Leader, Line, LinearDim, LineType, Width,
)
from prismfab.drawing.views import (
    ViewFrame, clip_ray_path, face_frame, main_outline, side_view,
)
from prismfab.model import Part

__all__ = [
    "Started", "main_finish", "main_group", "main_start", "perpendicularity_zone_mm", "side_finish",
    "side_group", "side_start",
]

P2 = tuple[float, float]
LEVEL_MM = (9.0, 17.0)  # dimension line offsets from a face: first and second level
DATUM_EXTRA_MM = 12.0  # datum B's face: dimensions stand beyond its datum symbol
RAY_LEAD_MM = 12.0  # outside lead-in and lead-out of the ray path on paper
VIRTUAL_REACH_MM = 40.0  # a theoretical sharp corner farther off (paper) is shown by a parallel
UNBOUNDED = (-1.0e5, -1.0e5, 1.0e5, 1.0e5)
DATUM_SPOTS = tuple((f, stem) for stem in (4.0, 2.5, 6.0, 8.0)
                    for f in (0.2, 0.3, 0.15, 0.4, 0.5, 0.6, 0.7, 0.8))
"""Where datum B's triangle may stand on its face (fraction of the face) and its stem length."""
DATUM_REACH_MM = (4.0, 7.0, 10.0, 14.0, 18.0, 22.0, 26.0)
"""Else how far beyond a corner on the face extended (paper mm), nearest first."""


def note_height_mm(dimension_text_mm: float) -> float:
    """Character height of callouts and tolerance frames: one ISO 3098 step below dimensions."""
    return round(0.72 * dimension_text_mm, 1)


def _construction(a: P2, b: P2) -> Line:
    """A thin construction line (ISO 128 01.1), e.g. a face extended to its sharp corner."""
    return Line(a, b, LineType.CONTINUOUS, Width.NARROW, Layer.DIMENSION)


@dataclass(slots=True)
class Started:
    """A view group laid out up to its leaders and callouts (``main_start`` / ``side_start``).

    ``entities`` are the first entities of the finished group, unchanged, so their bounding box
    is a lower bound of the finished group's: the layout rejects a scale on it without placing
    any callout. ``main_finish`` / ``side_finish`` append the rest on the same placer.
    """

    part: Part
    scale: float
    text_h: float
    decimal_comma: bool
    placer: Placer
    entities: list[Entity]
    pts: tuple[P2, ...] = ()
    ray: tuple[P2, ...] = ()
    clean: bool = True
    """Datum B found free paper on its face (or the face extended)."""
    memo: dict = field(default_factory=dict)  # type: ignore[type-arg]
    """The collision pass's fruitless searches (``overlap.resolve(memo=...)``), kept between
    the pass before the leaders and the one after them."""


def main_group(part: Part, scale: float, *, text_h: float, decimal_comma: bool
               ) -> list[Entity]:
    """The principal section with its dimensions and annotations, part origin at paper (0, 0)."""
    out = main_finish(main_start(part, scale, text_h=text_h, decimal_comma=decimal_comma))
    assert out is not None  # finished without a room check
    return out


def main_start(part: Part, scale: float, *, text_h: float, decimal_comma: bool,
               letter_last: bool = False) -> Started:
    """The principal section with its dimensions, angles and datum B (no leaders yet).

    Face letters go first, so dimensions keep clear of them. Where datum B then finds no free
    spot on its face or the face extended (a short face, its letter between the arcs of its two
    angles), the section is laid out again with that face's letter placed after datum B
    (``letter_last``): the letter moves aside or out on a leader, the datum symbol keeps the face.
    """
    placer = Placer(UNBOUNDED)
    pts, outline = main_outline(part, ViewFrame(scale, (0.0, 0.0)), placer)
    out: list[Entity] = list(outline)
    ray = clip_ray_path(tuple((scale * x, scale * y) for x, y in part.ray_path_mm), lead_mm=RAY_LEAD_MM)
    if len(ray) >= 2:
        placer.add_path(ray)
    datum = dims.datum_face(part)
    plan = dims.plan_dimensions(part)
    _reserve_chains(part, pts, scale, datum, placer)
    for c in plan.cross:  # the construction lines to sharp corners, before letters are placed
        found = virtual_corner(pts, c)
        if found is not None and found[3] <= VIRTUAL_REACH_MM:
            corner, da, db, _ = found
            n = len(pts)
            placer.add_segment(pts[(c.first + 1) % n], add(corner, mul(da, 12.0)))
            placer.add_segment(pts[c.second], sub(corner, mul(db, 12.0)))
    out += _apertures(part, pts, scale)
    late = datum if letter_last else None
    out += _labels(part, pts, text_h, placer, skip=late)
    out += _lengths(part, pts, scale, text_h, placer, datum, plan, decimal_comma)
    out += _cross_angles(part, pts, text_h, placer, plan)
    out += _angles(part, pts, text_h, placer, plan)
    accept = None
    if late is not None:
        def accept(trial: Placer, symbol: list[Entity]) -> bool:  # its face's letter finds room
            return _labels(part, pts, text_h, trial, only=late, fallback=False) is not None
    symbol, clean = _datum_b(part, pts, text_h, placer, datum, accept)
    if not clean and not letter_last:
        again = main_start(part, scale, text_h=text_h, decimal_comma=decimal_comma, letter_last=True)
        if again.clean:
            return again
    out += symbol
    if late is not None:
        out += _labels(part, pts, text_h, placer, only=late) or []
    return Started(part, scale, text_h, decimal_comma, placer, out, pts, ray, clean=clean)


def main_finish(g: Started, *, keep_going: Callable[[list[Entity]], bool] | None = None,
                room: Callable[[list[Entity]], Rect | None] | None = None
                ) -> list[Entity] | None:
    """``main_start``'s entities followed by the edge callouts, tolerance frames and ray path.

    Args:
        g: the started group.
        keep_going: called with each stage's new entities; when it returns False the group is
            abandoned (None is returned), e.g. because the views already overflow the sheet.
        room: called with the entities so far before the ray path is drawn: where its
            reference labels may stand (paper mm; None for anywhere), so a label is left to the
            notes rather than costing the views their scale.
    """
    out = _cleared(g)
    if keep_going is not None and not keep_going(out):
        return None
    stages: list[Callable[[], list[Entity] | tuple[Entity, ...]]] = [
        lambda: _edge_callouts(g.part, g.pts, g.text_h, g.placer),
        lambda: _perpendicularity(g.part, g.pts, g.text_h, g.placer, g.decimal_comma),
    ]
    if len(g.ray) >= 2:
        stages.append(lambda: callouts.ray_path(g.ray, polarization_note=g.part.polarization_note,
                                                text_h=g.text_h, placer=g.placer,
                                                keep_off=_leader_barriers(out),
                                                room=None if room is None else room(out)))
    for stage in stages:
        new = list(stage())
        out += new
        if keep_going is not None and not keep_going(new):
            return None
    return out


def _leader_barriers(ents: list[Entity]) -> list[tuple[P2, P2]]:
    """Lines a reference leader may not cross even where it may cross thin lines: dimension
    lines and other leaders (extension and construction lines, arcs it may)."""
    out: list[tuple[P2, P2]] = []
    for e in ents:
        if isinstance(e, AlignedDim | LinearDim):
            out.append(e.dim_line())
        elif isinstance(e, Leader):
            out += zip(e.points, e.points[1:], strict=False)
    return out


def _cleared(g: Started) -> list[Entity]:
    """The started entities with their text collisions cleared (``overlap.resolve``) before
    leaders and tolerance frames are placed, so these keep clear of where a dimension moved
    to."""
    return _resolved(g.entities, g.text_h, g.placer, g.memo)


def _resolved(ents: list[Entity], text_h: float, placer: Placer, memo: dict) -> list[Entity]:  # type: ignore[type-arg]
    """The entities with their text collisions cleared (``overlap.resolve``); the placer learns
    the new text boxes and lines of what moved (the old ones stay reserved)."""
    from prismfab.drawing import overlap

    out, _ = overlap.resolve(ents, text_h, memo=memo)
    for old, new in zip(ents, out, strict=True):
        if new is not old:
            box, lines = overlap.footprint(new, text_h)
            if box is not None:
                placer.add_box(box)
            for p, q in lines:
                placer.add_segment(p, q)
    return out


def side_group(part: Part, scale: float, *, text_h: float, decimal_comma: bool) -> list[Entity]:
    """The second view with the height, datum A and the bevel callout (the view shows the bevels).

    Z = 0 at paper x = 0, part Y = 0 at y = 0.
    """
    return side_finish(side_start(part, scale, text_h=text_h, decimal_comma=decimal_comma))


def side_start(part: Part, scale: float, *, text_h: float, decimal_comma: bool) -> Started:
    """The second view with the height and datum A (no bevel callout yet)."""
    placer = Placer(UNBOUNDED)
    side = ViewFrame(scale, (0.0, 0.0))
    out: list[Entity] = list(side_view(part, side, placer))
    ys = [p[1] for p in part.prism.vertices_mm]
    h = part.prism.height_mm
    tol = part.tolerances.height_mm
    text = fmt.length_text(h, tol, decimals=max(2, fmt.tol_decimals(tol)), decimal_comma=decimal_comma)
    out.append(dims.height_dim(side.side(h, min(ys)), side.side(0.0, min(ys)), below_mm=LEVEL_MM[0],
                               measured_mm=h, scale=scale, text=text, text_h=text_h, placer=placer))
    for letter, what in part.datums:
        low = what.lower()
        if "end face" in low or "bottom" in low:
            foot = side.side(0.0, min(ys) + 0.75 * (max(ys) - min(ys)))
            out += callouts.datum_symbol(foot, (0.0, 1.0), (1.0, 0.0), letter, text_h=text_h,
                                         placer=placer)
    return Started(part, scale, text_h, decimal_comma, placer, out)


def side_finish(g: Started) -> list[Entity]:
    """``side_start``'s entities followed by the bevel callout."""
    out = list(g.entities)
    part = g.part
    if part.bevelled_edges:
        ys = [p[1] for p in part.prism.vertices_mm]
        bevel = fmt.number_text(part.bevel_mm, 1, decimal_comma=g.decimal_comma)
        lead = callouts.leader(ViewFrame(g.scale, (0.0, 0.0)).side(0.0, max(ys)),
                               (f"bevel {bevel} max × 45°", "edges as note 5"),
                               text_h=note_height_mm(g.text_h), placer=g.placer, towards=(0.0, 1.0))
        if lead:
            out.append(lead)
    return out


INWARD_TEXT_EXTRA_MM = 3.5  # where dimension text stands between its line and the face


def _level_extra(pts: tuple[P2, ...], i: int, datum: int | None) -> float:
    """How much farther out than usual the dimensions of face ``i`` stand.

    Beyond datum B's symbol on the datum face; and by one text height where the text, read from
    the bottom or the right (ISO 129-1), stands on the face side of its line, so the face letter
    keeps the strip next to the face.
    """
    from prismfab.drawing.sheet import readable_deg

    _, u, n, _ = face_frame(pts, i)
    rot = math.radians(readable_deg(math.degrees(math.atan2(u[1], u[0]))))
    inward = -math.sin(rot) * n[0] + math.cos(rot) * n[1] < -1e-9
    return (DATUM_EXTRA_MM if i == datum else 0.0) + (INWARD_TEXT_EXTRA_MM if inward else 0.0)


def _reserve_chains(part: Part, pts: tuple[P2, ...], scale: float, datum: int | None,
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


def _labels(part: Part, pts: tuple[P2, ...], th: float, placer: Placer, *, skip: int | None = None,
            only: int | None = None, fallback: bool = True) -> list[Entity] | None:
    """Face letters in circles outside the section, beside the middle of their face.

    The letter stands just off the face (inside the first dimension level) near its middle; where
    that spot is taken (ray path, chain lines) or the face is too short, farther out with a short
    leader to the face's middle. ``skip`` leaves one face's letter out, ``only`` places just it;
    without ``fallback``, None when a letter finds no free spot (else it stands 7 mm out).
    """
    out: list[Entity] = []
    r = 0.8 * th
    for i, f in enumerate(part.faces):
        if i == skip or (only is not None and i != only):
            continue
        a, u, n, length = face_frame(pts, i)
        near = r * (abs(n[0]) + abs(n[1])) + 0.8  # the circle's box just clears the face line
        spot: P2 | None = None
        if length > 2 * r + 4.0:
            half = int((0.5 * length - r - 2.0) / 1.0)  # 1 mm steps out from the middle
            for k in range(2 * max(half, 0) + 1):
                along = 0.5 * length + (k + 1) // 2 * (1.0 if k % 2 else -1.0)
                c = add(add(a, mul(u, along)), mul(n, near))
                if placer.free((c[0] - r, c[1] - r, c[0] + r, c[1] + r)):
                    spot = c
                    break
        if spot is not None:
            out += callouts.face_label(spot, f.label, text_h=th, placer=placer)
            continue
        feet = [add(a, mul(u, k * length)) for k in LEADER_FEET]
        led = _label_with_leader(feet, n, f.label, th, placer, fallback=fallback)
        if led is None:
            return None
        out += led
    return out


LEADER_FEET = (0.5, 0.35, 0.65, 0.25, 0.75)
"""Where on its face a letter's leader may start (fraction of the face), middle first."""


def _label_with_leader(feet: list[P2], n: P2, letter: str, th: float, placer: Placer, *,
                       fallback: bool = True) -> list[Entity] | None:
    """A face letter out on a short leader from its face (from the middle if it can), clear of
    text, lines and the view; at the middle, 7 mm out, when nothing is free (None without
    ``fallback``)."""
    r = 0.8 * th
    for foot in feet:
        for d in (7.0, 10.0, 13.0, 17.0, 22.0, 28.0):
            for turn in (0.0, 0.4, -0.4, 0.8, -0.8):
                c_, s_ = math.cos(turn), math.sin(turn)
                direction = (n[0] * c_ - n[1] * s_, n[0] * s_ + n[1] * c_)
                c = add(foot, mul(direction, d))
                box = (c[0] - r, c[1] - r, c[0] + r, c[1] + r)
                start = add(foot, mul(direction, 0.4))
                end = add(foot, mul(direction, d - r))
                if (placer.free(box) and not placer.crosses_segments(start, end)
                        and not placer.hits_box(start, end)
                        and not placer.crosses_region(start, end)):
                    placer.add_segment(foot, end)
                    return [Line(foot, end, layer=Layer.ANNOTATION),
                            *callouts.face_label(c, letter, text_h=th, placer=placer)]
    if not fallback:
        return None
    foot = feet[0]
    c = add(foot, mul(n, 7.0))
    return [Line(foot, add(foot, mul(n, 7.0 - r)), layer=Layer.ANNOTATION),
            *callouts.face_label(c, letter, text_h=th, placer=placer)]


def _angles(part: Part, pts: tuple[P2, ...], th: float, placer: Placer, plan: dims.DimPlan
            ) -> list[Entity]:
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


def _cross_angles(part: Part, pts: tuple[P2, ...], th: float, placer: Placer, plan: dims.DimPlan
                  ) -> list[Entity]:
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
            lines = [_construction(q, add(vertex, mul(da, 1.5))),
                     _construction(r, sub(vertex, mul(db, 1.5)))]
        else:
            vertex = r
            da = unit(sub(q, pts[c.first]))
            db = unit(sub(pts[(c.second + 1) % n], r))
            lines = [_construction(r, add(r, mul(da, radius + dims.EXT_BEYOND_MM)))]
        for line in lines:
            placer.add_segment(line.start, line.end)
        out += lines
        out.append(dims.angle_at(vertex, db, (-da[0], -da[1]), value_deg=c.value_deg, text=text,
                                 text_h=th, radius_mm=radius, placer=placer,
                                 auxiliary=kind == "auxiliary", allow_inside=False))
    return out


def _lengths(part: Part, pts: tuple[P2, ...], scale: float, th: float, placer: Placer,
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
            out.append(dims.aligned(p0, p1, offset_mm=LEVEL_MM[0] + extra, measured_mm=w, scale=scale,
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


def _datum_b(part: Part, pts: tuple[P2, ...], th: float, placer: Placer, datum: int | None,
             accept: Callable[[Placer, list[Entity]], bool] | None = None
             ) -> tuple[list[Entity], bool]:
    """ISO 5459 datum B on its face: the first spot (``DATUM_SPOTS``, then on the face extended
    beyond a corner) where it stands clear of text and lines (and, with ``accept``, for which
    ``accept`` passes a trial copy of the placer holding the symbol, and the symbol's entities);
    False when none was
    (it then stands at the first spot)."""
    if datum is None:
        return [], True
    out: list[Entity] = []
    clean = True
    for letter, what in part.datums:
        low = what.lower()
        if "end face" in low or "bottom" in low:
            continue
        a, u, nrm, length = face_frame(pts, datum)
        b = add(a, mul(u, length))
        spots = [(add(a, mul(u, f * length)), stem, None) for f, stem in DATUM_SPOTS]
        spots += [(add(corner, mul(d, reach)), stem, corner) for reach in DATUM_REACH_MM
                  for corner, d in ((b, u), (a, mul(u, -1.0))) for stem in (4.0, 2.5, 6.0)]
        spot = spots[0]
        for trial, stem_mm, at in spots:  # first spot where it stands clear of text and lines
            if at is not None and placer.hits_box(at, trial):
                continue  # on the face extended beyond a corner: that line runs through text
            if not callouts.datum_fits(trial, u, nrm, text_h=th, placer=placer, stem_mm=stem_mm):
                continue
            if accept is not None:
                trial_placer = placer.copy()
                if not accept(trial_placer, _datum_symbol((trial, stem_mm, at), u, nrm, letter, th,
                                                          trial_placer)):
                    continue
            spot = (trial, stem_mm, at)
            break
        else:
            clean = False
        out += _datum_symbol(spot, u, nrm, letter, th, placer)
    return out, clean


def _datum_symbol(spot: tuple[P2, float, P2 | None], u: P2, nrm: P2, letter: str, th: float,
                  placer: Placer) -> list[Entity]:
    """The datum symbol at a spot (foot, stem length, the corner beyond which it stands on the
    face extended or None), registered on the placer."""
    foot, stem, corner = spot
    out: list[Entity] = []
    if corner is not None:  # ISO 5459: on the outline extended, a thin line to the triangle
        d = unit(sub(foot, corner))
        out.append(_construction(add(corner, mul(d, 1.0)), add(foot, mul(d, 2.0))))
        placer.add_segment(corner, add(foot, mul(d, 2.0)))
    out += callouts.datum_symbol(foot, u, nrm, letter, text_h=th, placer=placer, stem_mm=stem)
    return out


def _edge_callouts(part: Part, pts: tuple[P2, ...], th: float, placer: Placer) -> list[Entity]:
    """Sharp-edge (with its chip limit) and apex-flat callouts with leaders (bevels: second view)."""
    out: list[Entity] = []
    labels = [f.label for f in part.faces]
    n = len(pts)
    th = note_height_mm(th)

    def outward(i: int) -> P2:
        a, b = pts[i - 1], pts[(i + 1) % n]
        return (2 * pts[i][0] - a[0] - b[0], 2 * pts[i][1] - a[1] - b[1])

    def vertex_of(a: str, b: str) -> int | None:
        return next((i for i in range(n) if {labels[i - 1], labels[i]} == {a, b}), None)

    for a, b in part.sharp_edges:
        i = vertex_of(a, b)
        if i is None:
            continue
        lines = (f"edge {a}/{b} sharp, no bevel", *_chip_limit(part, a, b))
        lead = callouts.leader(pts[i], lines, text_h=th, placer=placer, towards=outward(i))
        if lead:
            out.append(lead)
    for i, f in enumerate(part.faces):
        if dims.is_flat(part, i):
            a, u, _, length = face_frame(pts, i)
            lead = callouts.leader(add(a, mul(u, length / 2)), (f"apex flat {f.label}, fine ground",),
                                   text_h=th, placer=placer, towards=face_frame(pts, i)[2])
            if lead:
                out.append(lead)
    return out


def _chip_limit(part: Part, a: str, b: str) -> tuple[str, ...]:
    """The chip limit the part's notes give for a sharp edge, as a callout line."""
    for note in part.notes:
        low = note.lower()
        if f"edge {a}/{b}".lower() in low or f"edge {b}/{a}".lower() in low:
            k = note.find("chips")
            if k >= 0:
                return (note[k:].split(",")[0].rstrip(". "),)
    return ()


def perpendicularity_zone_mm(part: Part) -> float:
    """Width of the ISO 1101 perpendicularity zone of an optical face to datum A, mm.

    A face tilted out of the principal section by the pyramidal error ε leans by h tan ε over
    the part height h; the value is rounded down to two significant digits so the zone never
    allows more than ε.
    """
    t = part.prism.height_mm * math.tan(math.radians(part.tolerances.pyramidal_arcsec / 3600.0))
    if t <= 0:
        return 0.0
    step = 10.0 ** (math.floor(math.log10(t)) - 1)
    return math.floor(t / step + 1e-9) * step


def _perpendicularity(part: Part, pts: tuple[P2, ...], th: float, placer: Placer,
                      decimal_comma: bool) -> list[Entity]:
    """⊥ zone | A on each optical face (the pyramidal error, as a shop measures it)."""
    th = note_height_mm(th)
    zone = perpendicularity_zone_mm(part)
    if zone <= 0 or not any(letter == "A" for letter, _ in part.datums):
        return []
    decimals = max(3, -math.floor(math.log10(zone)) + 1)
    value = fmt.number_text(zone, decimals, decimal_comma=decimal_comma).rstrip("0")
    out: list[Entity] = []
    for i, f in enumerate(part.faces):
        if not f.role.is_optical:
            continue
        a, u, nrm, length = face_frame(pts, i)
        b = add(a, mul(u, length))
        tips: list[tuple[P2, P2 | None]] = [(add(a, mul(u, f * length)), None) for f in (0.8, 0.2, 0.9, 0.1)]
        for reach in (5.0, 9.0, 14.0):  # else on the face's outline extended beyond a corner
            tips += [(add(b, mul(u, reach)), b), (sub(a, mul(u, reach)), a)]
        for tip, corner in tips:
            if corner is not None and (placer.crosses_segments(corner, tip)
                                       or not placer.free(_around(tip, 0.8))):
                continue
            ents = callouts.tolerance_frame(tip, ("⊥", value, "A"), text_h=th, placer=placer,
                                            towards=nrm)
            if ents:
                if corner is not None:  # the face extended as a thin line to the arrow
                    ext_end = add(tip, mul(unit(sub(tip, corner)), 1.5))
                    out.append(_construction(add(corner, mul(unit(sub(tip, corner)), 1.0)), ext_end))
                    placer.add_segment(corner, ext_end)
                out += ents
                break
    return out


def _around(p: P2, r: float) -> tuple[float, float, float, float]:
    return p[0] - r, p[1] - r, p[0] + r, p[1] + r
