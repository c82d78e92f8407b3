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

__all__ = ["CrossAngle", "DimPlan", "aligned", "angle_at", "angle_dim", "cross_angles", "datum_face",
           "plan_dimensions"]

P2 = tuple[float, float]
GAP_MM = 1.0  # text to dimension line
EXT_BEYOND_MM = 2.0  # extension line beyond the dimension line
EXT_OFFSET_MM = 1.0  # gap between the feature and the extension line
TEXT_CLEAR_MM = 2.0  # text above its dimension line keeps 1 mm from each extension line
WELL_CONDITIONED_SIN = 0.3  # auxiliary face pairs at least ~17° apart (common practice)


@dataclass(frozen=True, slots=True)
class CrossAngle:
    """A functional angle between two optical faces that do not meet (ground faces between).

    Args:
        first: the face before the ground run, counter-clockwise.
        second: the face after it.
        between: the ground faces in between (an apex flat, a wedge's thin edge).
        value_deg: the interior angle the two faces make at their theoretical sharp corner.
    """

    first: int
    second: int
    between: tuple[int, ...]
    value_deg: float

    def vertices(self, n: int) -> tuple[int, ...]:
        """The section vertices the ground run spans (from the end of ``first`` on)."""
        return tuple((self.first + 1 + k) % n for k in range(len(self.between) + 1))


@dataclass(frozen=True, slots=True)
class DimPlan:
    """Kinds per vertex ("functional", "general", "auxiliary") and per face ("size", "auxiliary").

    ``cross`` holds the functional angles across ground faces, drawn at their theoretical sharp
    corners; ``cross_kinds`` their kinds (auxiliary only if they repeat other angles).
    """

    angles: tuple[str, ...]
    lengths: tuple[str, ...]
    cross: tuple[CrossAngle, ...] = ()
    cross_kinds: tuple[str, ...] = ()


def is_flat(part: Part, i: int) -> bool:
    """A short ground face that truncates an apex (an apex flat)."""
    face = part.prism.faces[i]
    longest = max(part.prism.face_length_mm(k) for k in range(len(part.prism.faces)))
    return (not face.role.is_optical) and (
        "flat" in face.note.lower() or part.prism.face_length_mm(i) < 0.2 * longest)


def datum_face(part: Part) -> int | None:
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


def _run_between(part: Part, a: int, b: int) -> tuple[int, int, tuple[int, ...]] | None:
    """(first, second, ground faces between) of two faces, walking the ground-only side."""
    n = len(part.prism.faces)
    for first, second in ((a, b), (b, a)):
        run = tuple((first + k) % n for k in range(1, (second - first) % n))
        if run and not any(part.prism.faces[i].role.is_optical for i in run):
            verts = [(first + 1 + k) % n for k in range(len(run) + 1)]
            turn = sum(math.pi - part.prism.interior_angle_rad(v) for v in verts)
            if turn < math.pi:  # the faces converge beyond this run (a wedge has two ground runs)
                return first, second, run
    return None


def cross_angles(part: Part) -> tuple[CrossAngle, ...]:
    """Functional angles between optical faces across ground faces.

    The pairs are those of the part's angle chain (the functional angles the tolerance analysis
    toleranced, registered on datum face B); without a datum face, every pair of optical faces
    separated by apex flats only.
    """
    n = len(part.prism.faces)
    pairs: list[tuple[int, int]] = []
    datum = datum_face(part)
    if datum is not None:
        from prismfab.design.sensitivity import angle_chain

        pairs = [(c.face_a, c.face_b) for c in angle_chain(part.prism, datum) if c.vertex is None]
    else:
        for i in range(n):
            if part.prism.faces[i].role.is_optical:
                j = (i + 1) % n
                while not part.prism.faces[j].role.is_optical and is_flat(part, j):
                    j = (j + 1) % n
                if j != (i + 1) % n and part.prism.faces[j].role.is_optical and j != i:
                    pairs.append((i, j))
    out = []
    for a, b in pairs:
        found = _run_between(part, a, b)
        if found is None:
            continue
        first, second, run = found
        verts = tuple((first + 1 + k) % n for k in range(len(run) + 1))
        total = sum(math.degrees(part.prism.interior_angle_rad(v)) for v in verts)
        out.append(CrossAngle(first, second, run, total - 180.0 * (len(verts) - 1)))
    return tuple(sorted(out, key=lambda c: c.first))


def _independent(basis: list[list[float]], vec: list[float]) -> bool:
    """Add ``vec`` to the row-reduced ``basis`` if it is independent of it (Gauss elimination)."""
    v = list(vec)
    for row in basis:
        pivot = next(k for k, x in enumerate(row) if abs(x) > 1e-9)
        if abs(v[pivot]) > 1e-12:
            f = v[pivot] / row[pivot]
            v = [x - f * y for x, y in zip(v, row, strict=True)]
    if max(abs(x) for x in v) < 1e-9:
        return False
    basis.append(v)
    return True


def plan_dimensions(part: Part) -> DimPlan:
    """Choose the defining and the auxiliary dimensions of the section.

    Angles are linear in the vertex angles (an angle across ground faces is their sum less
    180° per extra vertex) and the vertex angles sum to (n - 2) 180°: the drawing takes
    functional angles first (across ground faces, then at vertices), then general ones, each only
    if it is independent of those taken, until n - 1 are taken; every other angle is auxiliary.
    """
    v = part.prism.vertices_mm
    n = len(v)
    cross = cross_angles(part)
    basis: list[list[float]] = [[1.0] * n]  # the angle sum is fixed: never a free dimension
    taken = 0

    def take(verts: tuple[int, ...]) -> bool:
        nonlocal taken
        if taken >= n - 1:
            return False
        vec = [1.0 if k in verts else 0.0 for k in range(n)]
        if _independent(basis, vec):
            taken += 1
            return True
        return False

    cross_kinds = tuple("functional" if take(c.vertices(n)) else "auxiliary" for c in cross)
    kinds = ["auxiliary"] * n
    for i in sorted(set(part.functional_angles)):
        if 0 <= i < n and take((i,)):
            kinds[i] = "functional"
    for i in range(n):
        if kinds[i] == "auxiliary" and take((i,)):
            kinds[i] = "general"
    dirs = [unit(sub(v[(i + 1) % n], v[i])) for i in range(n)]
    lengths = [part.prism.face_length_mm(i) for i in range(n)]
    # The two auxiliary lengths follow from the others through 1 / |sin| of the angle between
    # their faces: prefer the longest pair that is well conditioned (not nearly parallel).
    best: tuple[bool, float, int, int] | None = None  # (well conditioned, length sum, i, j)
    for i in range(n):
        for j in range(i + 1, n):
            cross_ij = abs(dirs[i][0] * dirs[j][1] - dirs[i][1] * dirs[j][0])
            if cross_ij < 1e-6 or is_flat(part, i) or is_flat(part, j):
                continue
            score = (cross_ij >= WELL_CONDITIONED_SIN, round(lengths[i] + lengths[j], 6), i, j)
            if best is None or score[:2] > best[:2]:
                best = score
    aux = {best[2], best[3]} if best else set()
    return DimPlan(tuple(kinds), tuple("auxiliary" if i in aux else "size" for i in range(n)),
                   cross, cross_kinds)


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
    room = length - TEXT_CLEAR_MM - fmt_width(text, text_h)
    if room >= 0:  # between the arrows: slide along the line off a ray or a line crossing it
        ud = (math.cos(rot), math.sin(rot))
        for k in range(int(room)):
            shift = (k + 1) // 2 * (1 if k % 2 else -1) if k else 0
            trial = add(pos, mul(ud, shift))
            if abs(shift) <= room / 2 and not any(
                    _text_hits_segment(trial, text, text_h, rot, p, q) for p, q in placer.segments):
                pos = trial
                break
    if fmt_width(text, text_h) > length - TEXT_CLEAR_MM:  # no room between the extension lines
        half = 3.0 + fmt_width(text, text_h) / 2
        first = None
        for extra in (0.0, 3.0, 6.0, 10.0):
            for end, sign in ((a, -1.0), (b, 1.0)):
                trial = add(add(end, mul(u, sign * (half + extra))), mul(up, GAP_MM + text_h / 2))
                first = first or trial
                if placer.free(rect_of_text(trial, text, text_h)):
                    break
            else:
                continue
            pos = trial
            break
        else:
            pos = first if first is not None else pos
    dim = AlignedDim(p1, p2, -offset_mm, measured_mm, scale, text, pos, auxiliary)
    placer.add_segment(a, b)
    placer.add_segment(add(p1, mul(out, EXT_OFFSET_MM)), add(a, mul(out, EXT_BEYOND_MM)))
    placer.add_segment(add(p2, mul(out, EXT_OFFSET_MM)), add(b, mul(out, EXT_BEYOND_MM)))
    _add_text_box(placer, pos, text, text_h, math.degrees(rot))
    return dim


def fmt_width(text: str, text_h: float) -> float:
    """Estimated width of dimension text, paper mm."""
    return text_width_mm(text, text_h)


def _text_hits_segment(centre: P2, text: str, text_h: float, rot_rad: float, p: P2, q: P2) -> bool:
    """True when segment p-q crosses the box of text centred at ``centre`` turned by ``rot_rad``."""
    c, s = math.cos(-rot_rad), math.sin(-rot_rad)

    def local(v: P2) -> P2:
        x, y = v[0] - centre[0], v[1] - centre[1]
        return c * x - s * y, s * x + c * y

    w = fmt_width(text, text_h) / 2 + 0.6
    h = text_h / 2 + 0.6
    return box_hits_segment((-w, -h, w, h), local(p), local(q))


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
    return angle_at(vx, to_next, to_prev, value_deg=value_deg, text=text, text_h=text_h,
                    radius_mm=radius_mm, placer=placer, auxiliary=auxiliary,
                    allow_inside=interior_angle_deg(pts, i) >= 80.0)


def angle_at(vx: P2, to_next: P2, to_prev: P2, *, value_deg: float, text: str, text_h: float,
             radius_mm: float, placer: Placer, auxiliary: bool, allow_inside: bool) -> AngularDim:
    """An angle swept counter-clockwise from ``to_next`` to ``to_prev`` at ``vx`` (paper mm).

    Inside the sector (arc between the legs themselves) when allowed and there is room, else on
    the vertically opposite sector, between the legs extended through ``vx`` (equal angle).
    """
    attempts: list[tuple[P2, P2, bool]] = []
    if allow_inside:
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
    if fmt_width(text, text_h) > abs(b[0] - a[0]) - TEXT_CLEAR_MM:
        # No room between the extension lines: centred under the line, below their ends.
        pos = (pos[0], y - EXT_BEYOND_MM - 0.8 - text_h / 2)
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
