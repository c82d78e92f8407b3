"""Where the marks on the principal section's faces stand, part origin at paper (0, 0).

Everything the section carries besides its dimensions (``section_dims``), placed around the
outline in paper mm: face letters in circles (off the face's middle, else out on a short
leader), clear-aperture lines, ISO 5459 datum B on its face or the face extended, the
sharp-edge and apex-flat callouts with leaders, and the ISO 1101 perpendicularity frames
(⊥ zone | A) on the optical faces. Each placement asks the shared ``Placer`` for free paper and
registers what it drew, so later marks keep clear of it.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from prismfab.drawing import callouts, dims, fmt
from prismfab.drawing.geom import add, mul, sub, unit
from prismfab.drawing.placer import Placer
from prismfab.drawing.section_dims import construction_line
from prismfab.drawing.sheet import Entity, Layer, Line, LineType, Width
from prismfab.drawing.views import face_frame
from prismfab.model import Part

__all__ = [
    "aperture_lines", "datum_b", "edge_callouts", "face_letters", "note_height_mm",
    "perpendicularity_frames", "perpendicularity_zone_mm",
]

P2 = tuple[float, float]
DATUM_SPOTS = tuple((f, stem) for stem in (4.0, 2.5, 6.0, 8.0)
                    for f in (0.2, 0.3, 0.15, 0.4, 0.5, 0.6, 0.7, 0.8))
"""Where datum B's triangle may stand on its face (fraction of the face) and its stem length."""
DATUM_REACH_MM = (4.0, 7.0, 10.0, 14.0, 18.0, 22.0, 26.0)
"""Else how far beyond a corner on the face extended (paper mm), nearest first."""
LEADER_FEET = (0.5, 0.35, 0.65, 0.25, 0.75)
"""Where on its face a letter's leader may start (fraction of the face), middle first."""


def note_height_mm(dimension_text_mm: float) -> float:
    """Character height of callouts and tolerance frames: one ISO 3098 step below dimensions."""
    return round(0.72 * dimension_text_mm, 1)


def aperture_lines(part: Part, pts: tuple[P2, ...], scale: float) -> list[Entity]:
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


def face_letters(part: Part, pts: tuple[P2, ...], th: float, placer: Placer, *,
                 skip: int | None = None, only: int | None = None, fallback: bool = True
                 ) -> list[Entity] | None:
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


def datum_b(part: Part, pts: tuple[P2, ...], th: float, placer: Placer, datum: int | None,
            accept: Callable[[Placer, list[Entity]], bool] | None = None
            ) -> tuple[list[Entity], bool]:
    """ISO 5459 datum B on its face, and whether it found free paper.

    It stands at the first spot (``DATUM_SPOTS``, then on the face extended beyond a corner,
    ``DATUM_REACH_MM``) clear of text and lines and, with ``accept``, for which ``accept`` passes
    a trial copy of the placer holding the symbol, and the symbol's entities. Where no spot
    qualifies it stands at the first one and the flag is False.
    """
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
        out.append(construction_line(add(corner, mul(d, 1.0)), add(foot, mul(d, 2.0))))
        placer.add_segment(corner, add(foot, mul(d, 2.0)))
    out += callouts.datum_symbol(foot, u, nrm, letter, text_h=th, placer=placer, stem_mm=stem)
    return out


def edge_callouts(part: Part, pts: tuple[P2, ...], th: float, placer: Placer) -> list[Entity]:
    """Sharp-edge (with its chip limit) and apex-flat callouts with leaders.

    Bevels are called out on the second view (``annotate.side_finish``).
    """
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
            lead = callouts.leader(add(a, mul(u, length / 2)),
                                   (f"apex flat {f.label}, fine ground",),
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


def perpendicularity_frames(part: Part, pts: tuple[P2, ...], th: float, placer: Placer,
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
        tips: list[tuple[P2, P2 | None]] = [(add(a, mul(u, k * length)), None)
                                            for k in (0.8, 0.2, 0.9, 0.1)]
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
                    d = unit(sub(tip, corner))
                    ext_end = add(tip, mul(d, 1.5))
                    out.append(construction_line(add(corner, mul(d, 1.0)), ext_end))
                    placer.add_segment(corner, ext_end)
                out += ents
                break
    return out


def _around(p: P2, r: float) -> tuple[float, float, float, float]:
    """The square box of half-width ``r`` (paper mm) around ``p``."""
    return p[0] - r, p[1] - r, p[0] + r, p[1] + r
