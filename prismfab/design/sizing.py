"""Sizing: traced footprint -> clear aperture -> face length -> section polygon.

Rules (each stated once, used by every family):

* **Clear aperture** (common practice): on each optical face, for every
  traced condition (wavelengths of the band, tuning states, alignment decentre and tilt of
  ``spec.beam.alignment``), the 1/e^2 footprint of the beam (edge rays at +/- the 1/e^2 radius,
  opened by half the divergence) is scaled about its centre by
  ``spec.fabrication.clear_aperture_margin``; the clear aperture is the union over conditions.
* **Face length** (common practice): the clear aperture may fill at
  most ``CA_FRACTION[grade]`` of the face (commercial 80 %, precision 90 %, high precision
  95 %), so each end keeps a border ``ca (1/f - 1) / 2`` plus the bevel leg of that edge.
  Bevel leg on a dihedral theta for a bevel of face width w: ``a = w / (2 sin(theta/2))``
  (OCCT's chamfer builder takes legs along each face, drawings give the face width).
* **Apex flats** (OCCT's chamfer builder fails once the bevel strips of an acute apex meet,
  measured on this machine): an apex sharper than ``APEX_FLAT_BELOW_DEG`` that no
  light crosses is truncated by a ground flat of width ``max(2 bevel + 0.2 mm, 0.5 mm)``, so
  the bevel legs on its two edges never meet; the flat is a GROUND face with note "apex flat".
* **Rounding**: defining lengths round UP to 0.1 mm; no face is shorter than
  ``spec.fabrication.min_face_mm`` (flats excepted); beyond ``max_face_mm`` is an error.
* **Height**: the out-of-plane beam (1/e^2 diameter plus divergence over the path) times the
  margin, plus twice the alignment decentre, divided by the clear-aperture fraction, plus two
  bevel widths, rounded up, at least ``min_face_mm``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np

from prismfab.design.common import (
    Hit,
    PlanePath,
    Section,
    edge_normal,
    polygon_from_lines,
    resume_plane,
    section_edges,
    trace_plane_edges,
)
from prismfab.errors import DesignCheckError
from prismfab.model import FaceRole
from prismfab.spec.types import Grade, Spec

__all__ = [
    "APEX_FLAT_BELOW_DEG",
    "CA_FRACTION",
    "Placed",
    "RayGroup",
    "Triangle",
    "apex_flat_width_mm",
    "beam_groups",
    "bevel_leg_mm",
    "border_mm",
    "clear_aperture",
    "height_mm",
    "round_up",
    "size_triangle",
    "trace_groups",
]

CA_FRACTION = {Grade.COMMERCIAL: 0.80, Grade.PRECISION: 0.90, Grade.HIGH_PRECISION: 0.95}
"""Largest fraction of a face the clear aperture may fill (common practice)."""
APEX_FLAT_BELOW_DEG = 30.0
"""Apices sharper than this get a ground flat (below 20-30 deg OCCT's chamfer builder fails at
usual bevel legs; measured)."""
FLAT_MARGIN_MM = 0.2
MIN_FLAT_MM = 0.5
STEP_MM = 0.1
_FAR_MM = 1.0e4


def round_up(value_mm: float, step_mm: float = STEP_MM) -> float:
    """Round up to the step (0.1 mm), ignoring float noise below 1e-9 mm."""
    return round(math.ceil(value_mm / step_mm - 1e-9) * step_mm, 6)


def bevel_leg_mm(bevel_mm: float, dihedral_rad: float) -> float:
    """Leg along each face of a symmetric bevel of face width ``bevel_mm`` on a dihedral."""
    return bevel_mm / (2.0 * math.sin(dihedral_rad / 2.0))


def border_mm(ca_mm: float, grade: Grade) -> float:
    """Border each side of a clear aperture so it fills at most ``CA_FRACTION[grade]``."""
    return ca_mm * (1.0 / CA_FRACTION[grade] - 1.0) / 2.0


def apex_flat_width_mm(bevel_mm: float) -> float:
    """Width of a ground apex flat: wider than the two bevel legs on its edges plus a margin."""
    return max(2.0 * bevel_mm + FLAT_MARGIN_MM, MIN_FLAT_MM)


def clear_aperture(footprints: Sequence[tuple[float, float]], margin: float) -> tuple[float, float]:
    """Union of the footprints, each scaled about its centre by ``margin``; (low, high) in mm."""
    lo = min(0.5 * (a + b) - margin * 0.5 * (b - a) for a, b in footprints)
    hi = max(0.5 * (a + b) + margin * 0.5 * (b - a) for a, b in footprints)
    return lo, hi


def height_mm(spec: Spec, *, path_mm: float) -> tuple[float, float]:
    """(clear aperture along the height, prism height), mm, for a chief-ray path ``path_mm``."""
    b = spec.beam
    grow = b.divergence_out_of_plane_mrad * 1e-3 * path_mm
    ca = spec.fabrication.clear_aperture_margin * (b.diameter_out_of_plane_mm + grow)
    ca += 2.0 * b.alignment.decenter_mm + 2.0 * b.alignment.tilt_mrad * 1e-3 * path_mm
    f = CA_FRACTION[spec.fabrication.grade]
    h = round_up(max(ca / f + 2.0 * spec.fabrication.bevel_mm, spec.fabrication.min_face_mm))
    return ca, h


# --------------------------------------------------------------------------- traced beams


@dataclass(frozen=True, slots=True)
class RayGroup:
    """Three rays of one traced condition: chief ray first, then the two 1/e^2 edge rays.

    Args:
        state: tuning state index (0 = nominal).
        wavelength_nm: wavelength.
        case: alignment case: "nominal", "decenter+", "decenter-", "tilt+", "tilt-".
        rays: (start point in plane coordinates, direction rad) per ray.
    """

    state: int
    wavelength_nm: float
    case: str
    rays: tuple[tuple[np.ndarray, float], ...]


def beam_groups(spec: Spec, *, start_z_mm: float, states: int = 1,
                pivot_z_mm: float | None = None) -> tuple[RayGroup, ...]:
    """The conditions a design is sized over: band x tuning states x alignment cases.

    The input chief ray is the system z axis. Edge rays sit at +/- the in-plane 1/e^2 radius
    and lean outwards by half the full in-plane divergence; tilted cases lean by the alignment
    tilt.

    Args:
        spec: the spec (beam, band, alignment allowance).
        start_z_mm: z where the rays start (upstream of every prism).
        states: number of tuning states.
        pivot_z_mm: z of the plane where the beam has its stated diameter and about which the
            divergence and the alignment tilt lean the rays (the first entry face). None: the
            start plane itself. Leaning about a plane far upstream would turn an angular
            allowance into a decentre of ``tilt x distance`` at the prism.
    """
    b = spec.beam
    half = b.diameter_in_plane_mm / 2.0
    div = b.divergence_in_plane_mrad * 1e-3 / 2.0
    dec, tilt = b.alignment.decenter_mm, b.alignment.tilt_mrad * 1e-3
    cases = {"nominal": (0.0, 0.0), "decenter+": (dec, 0.0), "decenter-": (-dec, 0.0),
             "tilt+": (0.0, tilt), "tilt-": (0.0, -tilt)}
    wls = [b.wavelength_nm] + [w for w in b.band_nm if abs(w - b.wavelength_nm) > 1e-9]
    wls = list(dict.fromkeys(wls))
    out = []
    for state in range(states):
        for wl in wls:
            for case, (dx, dt) in cases.items():
                if case != "nominal" and dx == 0.0 and dt == 0.0:
                    continue
                lever = 0.0 if pivot_z_mm is None else pivot_z_mm - start_z_mm
                rays = [(np.array([start_z_mm, x0 - lever * math.tan(a)]), a)
                        for x0, a in ((dx, dt), (dx - half, dt - div), (dx + half, dt + div))]
                out.append(RayGroup(state, wl, case, tuple(rays)))
    return tuple(out)


@dataclass(frozen=True, slots=True)
class Placed:
    """A prism section at its nominal place, with how it moves over the tuning states.

    Args:
        vertices: (n, 2) CCW section in plane coordinates, nominal state.
        roles: role per face.
        index: n(wavelength_nm).
        pivot: rotation centre for tuning, plane coordinates.
        rotations_rad: rotation per tuning state (state 0 = 0).
    """

    vertices: np.ndarray
    roles: tuple[FaceRole, ...]
    index: Callable[[float], float]
    pivot: np.ndarray = field(default_factory=lambda: np.zeros(2))
    rotations_rad: tuple[float, ...] = (0.0,)

    def vertices_at(self, state: int) -> np.ndarray:
        """The section vertices in tuning state ``state``."""
        a = self.rotations_rad[state] if state < len(self.rotations_rad) else 0.0
        v = self.vertices
        if a:
            c, s = math.cos(a), math.sin(a)
            rot = np.array([[c, -s], [s, c]])
            v = (v - self.pivot) @ rot.T + self.pivot
        return v

    def section(self, state: int, wavelength_nm: float) -> Section:
        """The section in tuning state ``state`` at a wavelength."""
        return Section(self.vertices_at(state), self.roles, self.index(wavelength_nm))


def trace_groups(placed: Sequence[Placed], groups: Sequence[RayGroup], *, sequential: bool = False
                 ) -> list[tuple[RayGroup, tuple]]:
    """Trace every ray of every group through the placed prisms; (group, paths) pairs.

    ``sequential`` meets the prisms in list order (see ``common.trace_plane``).
    """
    out = []
    cache: dict[tuple[int, float], tuple[list[Section], list]] = {}
    edges: dict[int, list] = {}  # edge data per tuning state (the index does not change it)
    for g in groups:
        key = (g.state, g.wavelength_nm)
        if key not in cache:
            secs_ = [p.section(g.state, g.wavelength_nm) for p in placed]
            if g.state not in edges:
                edges[g.state] = section_edges(secs_)
            cache[key] = (secs_, edges[g.state])
        secs, geo = cache[key]
        if sequential and len(secs) > 1:
            out.append((g, tuple(_sequential_trace(secs, geo, start, th) for start, th in g.rays)))
        else:
            out.append((g, tuple(trace_plane_edges(secs, geo, start, th, sequential=sequential)
                                  for start, th in g.rays)))
    return out


_PREFIXES: dict[tuple, PlanePath] = {}
"""Traces through a first section alone, by (section, ray): sizing the second prism of a pair
traces the same rays through the same, already sized first prism many times over."""
_PREFIXES_MAX = 4096


def _sequential_trace(secs: list[Section], geo: list, start: np.ndarray, theta_rad: float
                      ) -> PlanePath:
    """A sequential trace through ``secs``, the part through ``secs[0]`` looked up when known."""
    first = secs[0]
    key = (first.vertices.tobytes(), first.roles, first.index, float(start[0]), float(start[1]),
           theta_rad)
    prefix = _PREFIXES.get(key)
    if prefix is None:
        if len(_PREFIXES) >= _PREFIXES_MAX:
            _PREFIXES.clear()
        prefix = trace_plane_edges(secs[:1], geo[:1], start, theta_rad, sequential=True)
        _PREFIXES[key] = prefix
    return resume_plane(secs, geo, prefix)


def footprints(traced: Sequence[tuple[RayGroup, tuple]], section: int, face: int,
               coord: Callable[[Hit], float]) -> list[tuple[float, float]]:
    """Per condition, (low, high) of the edge-ray hits on one face, in the coordinate ``coord``.

    A condition whose edge rays do not both meet the face is skipped; the chief ray must.
    A face the beam crosses more than once (ENTRY_EXIT, e.g. a retro prism's hypotenuse) gives
    one footprint per pass, so the margin scales each beam, not the gap between them.
    """
    out = []
    for _g, paths in traced:
        passes: dict[int, list[float]] = {}
        for path in paths[1:]:
            hs = [coord(h) for h in path.hits if h.section == section and h.face == face]
            for j, v in enumerate(hs):
                passes.setdefault(j, []).append(v)
        for _j, pos in sorted(passes.items()):
            if len(pos) >= 2:
                out.append((min(pos), max(pos)))
    return out


# --------------------------------------------------------------------------- triangles


@dataclass(frozen=True, slots=True)
class Triangle:
    """A prism bounded by two faces meeting at an apex and a closing face.

    Args:
        apex: apex position at distance 1 of the entry-point parameter (see ``size_triangle``).
        dir1: unit direction from the apex along face 1 (the face the beam enters).
        dir2: unit direction from the apex along face 2.
        closing_normal: outward unit normal of the closing face (away from the apex).
        roles: (face 1, face 2, closing face) roles.
        notes: (face 1, face 2, closing face) notes.
    """

    apex: np.ndarray
    dir1: np.ndarray
    dir2: np.ndarray
    closing_normal: np.ndarray
    roles: tuple[FaceRole, FaceRole, FaceRole]
    notes: tuple[str, str, str] = ("", "", "")

    @property
    def apex_rad(self) -> float:
        """Interior apex angle."""
        return math.acos(max(-1.0, min(1.0, float(self.dir1 @ self.dir2))))

    def polygon(self, closing_mm: float, flat_mm: float = 0.0
                ) -> tuple[np.ndarray, tuple[FaceRole, ...], tuple[str, ...], int]:
        """Section (CCW, closing face first) for a closing-face distance from the apex.

        Returns:
            (vertices, roles, notes, index of the apex vertex or of the flat's first vertex).
        """
        a = self.apex
        bis = self.dir1 + self.dir2
        bis /= np.linalg.norm(bis)
        lines = [  # (point, outward normal, role, note)
            (a, _outward(self.dir1, bis), self.roles[0], self.notes[0]),
            (a, _outward(self.dir2, bis), self.roles[1], self.notes[1]),
            (a + closing_mm * self.closing_normal, self.closing_normal, self.roles[2],
             self.notes[2]),
        ]
        if flat_mm > 0:
            depth = flat_mm / (2.0 * math.tan(self.apex_rad / 2.0))
            lines.append((a + depth * bis, -bis, FaceRole.GROUND, "apex flat"))
        lines.sort(key=lambda ln: math.atan2(ln[1][1], ln[1][0]))
        k = next(i for i, ln in enumerate(lines) if ln[1] is self.closing_normal)
        lines = lines[k:] + lines[:k]
        verts = polygon_from_lines([ln[0] for ln in lines], [ln[1] for ln in lines])
        apex_i = min(range(len(verts)), key=lambda i: float(np.linalg.norm(verts[i] - a)))
        return verts, tuple(ln[2] for ln in lines), tuple(ln[3] for ln in lines), apex_i


def _outward(direction: np.ndarray, bisector: np.ndarray) -> np.ndarray:
    n = np.array([direction[1], -direction[0]])
    return n if float(n @ bisector) < 0 else -n


@dataclass(frozen=True, slots=True)
class SizedTriangle:
    """Result of ``size_triangle``."""

    vertices: np.ndarray
    roles: tuple[FaceRole, ...]
    notes: tuple[str, ...]
    entry_offset_mm: float  # distance of the chief entry point from the apex along face 1
    closing_mm: float
    flat_mm: float


def size_triangle(
    spec: Spec,
    *,
    make: Callable[[float], Triangle],
    trace: Callable[[np.ndarray, tuple[FaceRole, ...]], list],
    section: int,
    light_at_apex: bool = False,
    path: str = "design",
) -> SizedTriangle:
    """Place the beam on a triangle and size it from the traced footprints.

    Args:
        spec: the spec (margin, grade, bevel, face limits).
        make: ``make(s)`` gives the triangle whose chief entry point lies ``s`` mm from the apex
            along face 1 (the beam stays put, the prism moves).
        trace: ``trace(vertices, roles)`` traces every condition with this prism (index
            ``section``) in place and returns ``trace_groups`` output.
        section: index of this prism among the traced sections.
        light_at_apex: True if the family needs light at the apex (no flat, no clearance).
        path: spec field named in errors.

    Raises:
        DesignCheckError: the beam cannot be kept on the faces, or a face exceeds ``max_face_mm``.
    """
    fab = spec.fabrication
    margin, grade, bevel = fab.clear_aperture_margin, fab.grade, fab.bevel_mm
    s = max(spec.beam.diameter_in_plane_mm, 1.0)
    tri = make(s)
    alpha = tri.apex_rad
    flat = 0.0
    if not light_at_apex and math.degrees(alpha) < APEX_FLAT_BELOW_DEG:
        flat = round_up(apex_flat_width_mm(bevel))
    cut = flat / (2.0 * math.sin(alpha / 2.0)) if flat else 0.0
    leg_apex = bevel_leg_mm(bevel, math.pi / 2 + alpha / 2 if flat else alpha)

    def apertures(s_mm: float) -> tuple[list, bool]:
        t = make(s_mm)
        verts, roles, _notes, _ = t.polygon(_FAR_MM, 0.0)
        traced = trace(verts, roles)
        cas, complete = [], True
        for k in (0, 1):
            fi = _face_of(verts, t, k)
            d = t.dir1 if k == 0 else t.dir2
            ax, ay, dx, dy = float(t.apex[0]), float(t.apex[1]), float(d[0]), float(d[1])
            fps = footprints(traced, section, fi,
                             lambda h, ax=ax, ay=ay, dx=dx, dy=dy:
                             (float(h.point[0]) - ax) * dx + (float(h.point[1]) - ay) * dy)
            complete &= _reached(traced, section, fi)
            cas.append(clear_aperture(fps, margin) if fps else None)
        return cas, complete

    def shortfall(cas_: list) -> list[float]:
        needs_ = []
        for lo, hi in cas_:
            clear = 0.0 if light_at_apex else cut + leg_apex + border_mm(hi - lo, grade)
            needs_.append(clear - lo)
        return needs_

    prev: tuple[float, list] | None = None
    s_bad = 0.0  # largest entry offset seen that does not hold the beam
    for _ in range(60):
        cas, complete = apertures(s)
        if not complete:  # part of the beam misses a face: move it away from the apex
            s_bad, s, prev = s, 1.5 * s + 0.5, None
            if s > 100.0 * max(spec.beam.diameter_in_plane_mm, 1.0):
                raise DesignCheckError(path, "part of the beam misses a face however far it is "
                                       "kept from the apex (the prisms are too close or too "
                                       "small for the beam)")
            continue
        needs = shortfall(cas)
        if max(needs) <= 1e-7:
            s, cas = _shrink(s_bad, s, cas, apertures, shortfall)
            break
        s_bad = s
        # the footprints move linearly with s: step by the slope seen so far (secant)
        step = max(needs) * 1.02
        if prev is not None and s != prev[0]:
            slopes = [(p_need - n_) / (s - prev[0]) for p_need, n_ in zip(prev[1], needs,
                                                                          strict=True)]
            step = max((n_ / sl for n_, sl in zip(needs, slopes, strict=True) if sl > 1e-6),
                       default=step) * 1.001 + 1e-6
        prev = (s, needs)
        s += max(step, 1e-6)
    else:
        raise DesignCheckError(path, "the beam cannot be kept on the faces clear of the apex")
    tri = make(s)
    # closing distance: faces 1 and 2 must reach past their clear apertures
    closing = 0.0
    for k, ca in enumerate(cas):
        d = tri.dir1 if k == 0 else tri.dir2
        lo, hi = ca
        corner = _corner_angle(tri, d)
        far = hi + border_mm(hi - lo, grade) + bevel_leg_mm(bevel, corner)
        closing = max(closing, far * float(d @ tri.closing_normal))
    closing = _round_closing(tri, closing)
    for _ in range(200):
        verts, roles, notes, _ = tri.polygon(closing, flat)
        if _closing_ok(spec, tri, verts, roles, trace, section):
            break
        closing = _round_closing(tri, closing * 1.03 + 0.1)
    else:
        raise DesignCheckError(path, "the closing face cannot hold the beam")
    verts, roles, notes, _ = tri.polygon(closing, flat)
    lengths = [float(np.linalg.norm(verts[(i + 1) % len(verts)] - verts[i])) for i in range(len(verts))]
    short = [L for L, n in zip(lengths, notes, strict=True) if n != "apex flat"]
    if min(short) < fab.min_face_mm - 1e-9:
        closing = _round_closing(tri, closing * fab.min_face_mm / min(short))
        verts, roles, notes, _ = tri.polygon(closing, flat)
        lengths = [float(np.linalg.norm(verts[(i + 1) % len(verts)] - verts[i]))
                   for i in range(len(verts))]
    if max(lengths) > fab.max_face_mm + 1e-9:
        raise DesignCheckError(
            "fabrication.max_face_mm",
            f"a face of {max(lengths):.1f} mm is needed, above the limit of {fab.max_face_mm:g} mm",
            reachable="raise fabrication.max_face_mm, or reduce the beam size or the magnification")
    return SizedTriangle(verts, roles, notes, s, closing, flat)


def _shrink(s_bad: float, s_good: float, cas: list, apertures: Callable, shortfall: Callable
            ) -> tuple[float, list]:
    """Bisect back towards the smallest entry offset that holds the beam.

    The secant steps of ``size_triangle`` assume footprints that move linearly with the entry
    offset; where they do not (a condition whose rays first meet a face near the apex), a step
    can overshoot far past the smallest size, and the prism comes out needlessly large. The
    bracket [s_bad, s_good] is narrowed until it is within 0.5 % (or 0.01 mm); one trace at
    ``0.98 s_good`` first tells whether there is anything to gain (the usual, linear case).
    """
    probe = 0.98 * s_good
    if probe <= s_bad:
        return s_good, cas
    cas_probe, complete = apertures(probe)
    if not (complete and max(shortfall(cas_probe)) <= 1e-7):
        return s_good, cas
    s_good, cas = probe, cas_probe
    for _ in range(40):
        if s_good - s_bad <= max(0.005 * s_good, 0.01):
            break
        mid = 0.5 * (s_bad + s_good)
        cas_mid, complete = apertures(mid)
        if complete and max(shortfall(cas_mid)) <= 1e-7:
            s_good, cas = mid, cas_mid
        else:
            s_bad = mid
    return s_good, cas


def _reached(traced: Sequence[tuple[RayGroup, tuple]], section: int, face: int) -> bool:
    """True when every ray of every condition meets the face at least once."""
    return all(any(h.section == section and h.face == face for h in path.hits)
               for _g, paths in traced for path in paths)


def _face_of(verts: np.ndarray, tri: Triangle, k: int) -> int:
    """Index of triangle face k (0 = face 1, 1 = face 2) in a polygon from ``Triangle.polygon``."""
    d = tri.dir1 if k == 0 else tri.dir2
    for i in range(len(verts)):
        e = verts[(i + 1) % len(verts)] - verts[i]
        e = e / np.linalg.norm(e)
        if abs(abs(float(e @ d)) - 1.0) < 1e-9 and abs(
                _perp_dist(verts[i], tri.apex, d)) < 1e-6:
            return i
    raise ValueError("face not found")


def _perp_dist(p: np.ndarray, a: np.ndarray, d: np.ndarray) -> float:
    r = p - a
    return float(r[0] * d[1] - r[1] * d[0])


def _corner_angle(tri: Triangle, d: np.ndarray) -> float:
    """Interior angle where a face leaving the apex along ``d`` meets the closing face.

    ``asin(d . n_closing)`` is exact for an acute corner and smaller than an obtuse one, which
    only makes the reserved bevel leg longer (conservative).
    """
    return math.asin(min(1.0, abs(float(d @ tri.closing_normal))))


def _round_closing(tri: Triangle, closing: float) -> float:
    """Closing distance whose longer apex face length is a multiple of 0.1 mm."""
    c1 = float(tri.dir1 @ tri.closing_normal)
    c2 = float(tri.dir2 @ tri.closing_normal)
    # round the face perpendicular-most to the closing face (the defining leg)
    c = max(c1, c2)
    return round_up(closing / c) * c


def _closing_ok(spec: Spec, tri: Triangle, verts: np.ndarray, roles: tuple, trace: Callable,
                section: int) -> bool:
    """True when an optical closing face holds its clear aperture and no ray is blocked."""
    traced = trace(verts, roles)
    for _g, paths in traced:
        for path in paths:
            for h in path.hits:
                if h.section == section and h.event == "blocked":
                    return False
    if not roles[0].is_optical:  # closing face is face 0 (see Triangle.polygon)
        return True
    fps = footprints(traced, section, 0, lambda h: h.along_mm)
    if not fps:
        return True
    lo, hi = clear_aperture(fps, spec.fabrication.clear_aperture_margin)
    length = float(np.linalg.norm(verts[1] - verts[0]))
    b = border_mm(hi - lo, spec.fabrication.grade) + spec.fabrication.bevel_mm
    return lo >= b and hi <= length - b


def face_normal(verts: np.ndarray, index: int) -> np.ndarray:
    """Outward normal of a face (re-exported for family modules)."""
    return edge_normal(verts, index)


# --------------------------------------------------------------------------- the whole system


@dataclass(frozen=True, slots=True)
class Draft:
    """A sized prism before assembly: section, roles, notes, material and tuning motion.

    Args:
        name: prism name ("P1").
        material: catalogue key.
        index: n(wavelength_nm).
        vertices: CCW section in plane coordinates, nominal state; vertex 0 = datum vertex.
        roles, notes: per face.
        pivot: tuning rotation centre (plane coordinates).
        rotations_rad: rotation per tuning state.
    """

    name: str
    material: str
    index: Callable[[float], float]
    vertices: np.ndarray
    roles: tuple[FaceRole, ...]
    notes: tuple[str, ...]
    pivot: np.ndarray = field(default_factory=lambda: np.zeros(2))
    rotations_rad: tuple[float, ...] = (0.0,)

    def placed(self) -> Placed:
        """The draft as a traceable placed section."""
        return Placed(self.vertices, self.roles, self.index, self.pivot, self.rotations_rad)


def wavelengths_nm(spec: Spec) -> tuple[float, ...]:
    """Design wavelength first, then the band edges without repeats (as ``Beam.wavelengths_nm``)."""
    b = spec.beam
    return tuple(dict.fromkeys([b.wavelength_nm, *b.band_nm]))


def start_z_mm(drafts: Sequence[Draft], lead_mm: float = 10.0) -> float:
    """A z upstream of every prism in every tuning state, where the traced beam starts."""
    zmin = 0.0
    for d in drafts:
        p = d.placed()
        for state in range(len(d.rotations_rad)):
            zmin = min(zmin, float(p.vertices_at(state)[:, 0].min()))
    return math.floor(zmin - lead_mm)


def _face_length(v: np.ndarray, i: int) -> float:
    return float(np.linalg.norm(v[(i + 1) % len(v)] - v[i]))


def finish_system(spec: Spec, drafts: Sequence[Draft], *, facts: Sequence[tuple[str, float, str]] = (),
                  tuning: Sequence[tuple[float, ...]] = (), warnings: Sequence[str] = (),
                  path: str = "design", pivot_z_mm: float | None = None
                  ):  # -> System (imported lazily to keep this module light)
    """Trace every condition through the final sections and assemble the ``System``.

    Fills ``System.clear_apertures`` (from the traced footprints x margin, over band, tuning
    and alignment) and ``System.aoi_ranges_deg`` (chief ray, nominal alignment, over band and
    tuning), chooses coatings per face, states the per-wavelength chief-ray transmission as
    facts, and adds warnings for a TIR margin under 2 deg and an antireflection face above 60 deg.

    ``pivot_z_mm`` is passed to ``beam_groups`` (the plane the divergence and the alignment
    tilt lean about; None = the start plane); ``System.materials_file`` is the spec's.

    Raises:
        DesignCheckError: a chief ray does not pass, or a clear aperture leaves its face.
    """
    from prismfab.design.common import face_coating, fresnel_r, labels, place_section
    from prismfab.model import Beam, Face, System

    b, fab = spec.beam, spec.fabrication
    states = max(len(d.rotations_rad) for d in drafts)
    z0 = start_z_mm(drafts)
    placed = [d.placed() for d in drafts]
    traced = trace_groups(placed, beam_groups(spec, start_z_mm=z0, states=states,
                                              pivot_z_mm=pivot_z_mm))
    for g, paths in traced:
        if not paths[0].complete:
            raise DesignCheckError(path, f"the chief ray at {g.wavelength_nm:g} nm ({g.case}, "
                                   f"tuning state {g.state}) does not pass the prisms")
    nominal = [(g, p) for g, p in traced if g.case == "nominal"]
    chief0 = nominal[0][1][0]
    seg = [float(np.linalg.norm(q - p)) for p, q in zip(chief0.points[1:-2], chief0.points[2:-1],
                                                       strict=False)]
    ca_h, height = height_mm(spec, path_mm=sum(seg) + 10.0)
    cas, aois, prisms, warn = [], [], [], list(warnings)
    for k, d in enumerate(drafts):
        faces = []
        lab = labels(len(d.roles))
        for i, role in enumerate(d.roles):
            if not role.is_optical:
                faces.append(Face(lab[i], role, face_coating(spec, role), note=d.notes[i]))
                continue
            fps = footprints(traced, k, i, lambda h: h.along_mm)
            angs = [next((math.degrees(h.aoi_rad) for h in p[0].hits
                          if h.section == k and h.face == i), None) for _g, p in nominal]
            angs = [a for a in angs if a is not None]  # first pass on the face (entry side)
            if not fps or not angs:
                raise DesignCheckError(path, f"{d.name} face {lab[i]} ({role.value}) is not "
                                       "reached by the traced beam")
            lo, hi = clear_aperture(fps, fab.clear_aperture_margin)
            length = _face_length(d.vertices, i)
            if lo < -1e-6 or hi > length + 1e-6:
                raise DesignCheckError(path, f"{d.name} face {lab[i]}: the clear aperture "
                                       f"{lo:.2f}..{hi:.2f} mm leaves the {length:.2f} mm face")
            cas.append((d.name, lab[i], round(hi - lo, 4), round(ca_h, 4),
                        round(0.5 * (lo + hi), 4), round(height / 2.0, 4)))
            aois.append((d.name, lab[i], round(angs[0], 6), round(min(angs), 6),
                         round(max(angs), 6)))
            brewster_ok = False
            if role.transmits:
                cs = fab.coating_for(role.value)
                limit = (cs.reflectance_max_pct if cs.reflectance_max_pct is not None else 0.5) / 100
                n0 = d.index(b.wavelength_nm)
                n1, n2 = (n0, 1.0) if role is FaceRole.EXIT else (1.0, n0)
                brewster_ok = all(fresnel_r(math.radians(a), n1, n2, b.polarization) <= limit
                                  for a in (min(angs), max(angs))) and max(angs) > 20.0
                if not brewster_ok and max(angs) > 60.0:
                    warn.append(f"{d.name} face {lab[i]}: antireflection coating used at "
                                f"{max(angs):.1f} deg incidence; specify it for that angle and "
                                "polarisation (ISO 9211-2)")
            if role is FaceRole.TIR:
                n_hi = max(d.index(w) for w in wavelengths_nm(spec))
                n_lo = min(d.index(w) for w in wavelengths_nm(spec))
                margin = min(angs) - math.degrees(math.asin(1.0 / min(n_hi, n_lo)))
                if margin < 2.0:
                    warn.append(f"{d.name} face {lab[i]}: TIR margin only {margin:.2f} deg; "
                                "coat it as a mirror or change the geometry")
            note = d.notes[i] or ("Brewster" if brewster_ok else "")
            faces.append(Face(lab[i], role, face_coating(spec, role, brewster_ok=brewster_ok),
                              note=note))
        prisms.append(place_section(name=d.name, material=d.material, vertices_plane=d.vertices,
                                    faces=tuple(faces), height_mm=height))
    beam = Beam(wavelength_nm=b.wavelength_nm, band_nm=b.band_nm,
                diameter_in_plane_mm=b.diameter_in_plane_mm,
                diameter_out_of_plane_mm=b.diameter_out_of_plane_mm, polarization=b.polarization,
                divergence_in_plane_mrad=b.divergence_in_plane_mrad,
                divergence_out_of_plane_mrad=b.divergence_out_of_plane_mrad,
                alignment_mm=b.alignment.decenter_mm, alignment_mrad=b.alignment.tilt_mrad,
                origin_mm=(0.0, 0.0, float(z0)), direction=(0.0, 0.0, 1.0))
    out_facts = list(facts)
    for g, p in nominal:
        if g.state == 0:
            out_facts.append((f"chief-ray transmission at {g.wavelength_nm:g} nm",
                              round(_transmission(spec, drafts, p[0], prisms), 6), ""))
    return System(family=spec.family.value, prisms=tuple(prisms), beam=beam,
                  facts=tuple(out_facts), tuning=tuple(tuple(r) for r in tuning),
                  warnings=tuple(dict.fromkeys(warn)), clear_apertures=tuple(cas),
                  aoi_ranges_deg=tuple(aois), materials_file=spec.materials_file)


def _transmission(spec: Spec, drafts: Sequence[Draft], chief, prisms) -> float:
    """Chief-ray power transmission: Fresnel on uncoated faces, the coating limit on coated ones."""
    from prismfab.design.common import fresnel_r
    from prismfab.model import CoatingType

    t = 1.0
    inside: set[int] = set()
    for h in chief.hits:
        face = prisms[h.section].faces[h.face]
        n = drafts[h.section].index(spec.beam.wavelength_nm)
        if h.event == "refract":
            n1, n2 = (n, 1.0) if h.section in inside else (1.0, n)
            inside ^= {h.section}
            if face.coating.type is CoatingType.ANTIREFLECTION:
                t *= 1.0 - (face.coating.reflectance_max_pct or 0.0) / 100.0
            else:
                t *= 1.0 - fresnel_r(h.aoi_rad, n1, n2, spec.beam.polarization)
        elif h.event == "mirror":
            t *= (face.coating.reflectance_min_pct or 99.5) / 100.0
    return t
