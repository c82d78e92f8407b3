"""The two views of a part with everything attached to them, each laid out around its own origin.

``main_group`` draws the principal section (part X, Y at the given scale, part origin at paper
(0, 0)) with face letters, clear apertures, face lengths, angles (functional angles across ground
faces at their theoretical sharp corners), datum B, edge callouts, ISO 1101 perpendicularity
frames and the reference ray path. ``side_group`` draws the second view (seen from +X, Z = 0 at
paper x = 0, running to -x) with the height, datum A and bevel lines. The layout moves both
groups into place once the scale is chosen.

This module orders the work; ``section_dims`` places the section's dimensions and
``section_marks`` its face letters, datum B, edge callouts and tolerance frames.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

from prismfab.drawing import callouts, dims, fmt
from prismfab.drawing.geom import Rect
from prismfab.drawing.placer import Placer
from prismfab.drawing.section_dims import (
    LEVEL_MM, angle_dims, cross_angle_dims, length_dims, reserve_chains, reserve_corner_lines,
)
from prismfab.drawing.section_marks import (
    aperture_lines, datum_b, edge_callouts, face_letters, note_height_mm, perpendicularity_frames,
    perpendicularity_zone_mm,
)
from prismfab.drawing.sheet import AlignedDim, Entity, Leader, LinearDim
from prismfab.drawing.views import ViewFrame, clip_ray_path, main_outline, side_view
from prismfab.model import Part

__all__ = [
    "Started", "main_finish", "main_group", "main_start", "perpendicularity_zone_mm", "side_finish",
    "side_group", "side_start",
]

P2 = tuple[float, float]
RAY_LEAD_MM = 12.0  # outside lead-in and lead-out of the ray path on paper
UNBOUNDED = (-1.0e5, -1.0e5, 1.0e5, 1.0e5)


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
    ray = clip_ray_path(tuple((scale * x, scale * y) for x, y in part.ray_path_mm),
                        lead_mm=RAY_LEAD_MM)
    if len(ray) >= 2:
        placer.add_path(ray)
    datum = dims.datum_face(part)
    plan = dims.plan_dimensions(part)
    reserve_chains(part, pts, scale, datum, placer)  # lines the face letters keep clear of
    reserve_corner_lines(pts, plan, placer)
    out += aperture_lines(part, pts, scale)
    late = datum if letter_last else None
    out += face_letters(part, pts, text_h, placer, skip=late)
    out += length_dims(part, pts, scale, text_h, placer, datum, plan, decimal_comma)
    out += cross_angle_dims(part, pts, text_h, placer, plan)
    out += angle_dims(part, pts, text_h, placer, plan)
    accept = None
    if late is not None:
        def accept(trial: Placer, symbol: list[Entity]) -> bool:  # its face's letter finds room
            return face_letters(part, pts, text_h, trial, only=late, fallback=False) is not None
    symbol, clean = datum_b(part, pts, text_h, placer, datum, accept)
    if not clean and not letter_last:
        again = main_start(part, scale, text_h=text_h, decimal_comma=decimal_comma,
                           letter_last=True)
        if again.clean:
            return again
    out += symbol
    if late is not None:
        out += face_letters(part, pts, text_h, placer, only=late) or []
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
        lambda: edge_callouts(g.part, g.pts, g.text_h, g.placer),
        lambda: perpendicularity_frames(g.part, g.pts, g.text_h, g.placer, g.decimal_comma),
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


def _resolved(ents: list[Entity], text_h: float, placer: Placer,
              memo: dict) -> list[Entity]:  # type: ignore[type-arg]
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
    text = fmt.length_text(h, tol, decimals=max(2, fmt.tol_decimals(tol)),
                           decimal_comma=decimal_comma)
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

