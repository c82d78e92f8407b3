"""From a solved, traced System to fabrication Parts with grade-default tolerances.

``make_parts(spec, system, performance)`` gives one ``Part`` per prism, in beam order: part
number and title, per-face clear aperture, incidence range, polish, ISO 10110 surface form and
imperfection indications, coating requirement text, material data and ISO 10110 material
indications, bevelled and sharp edges, datums, functional angles, the chief-ray path in the part
frame, a polarisation note and drawing notes. Tolerances are the grade defaults
(``prismfab.design.classes``); ``prismfab.design.tolerance.derive`` replaces them.
"""

from __future__ import annotations

import math

import numpy as np

from prismfab.design import classes as C
from prismfab.design.sensitivity import angle_chain
from prismfab.design.sizing import bevel_leg_mm
from prismfab.model import (Coating, CoatingType, FaceRole, Part, PartFace, Performance,
                            Polarization, Prism, System, Tolerances, Vec2)
from prismfab.spec.types import Spec

__all__ = ["apex_flats", "choose_datum", "make_parts", "part_title"]

TITLE_MAX = 25  # ISO 7200 recommended title length
LEAD_FRACTION = 0.3  # lead-in/lead-out of the drawn ray path, of the part's size
_FAMILY_TITLES = {"anamorphic-single": "Anamorphic prism", "anamorphic-pair": "Anamorphic prism",
                  "brewster": "Brewster prism", "dispersing": "Dispersing prism",
                  "fold": "Fold prism", "wedge": "Wedge prism", "custom": "Custom prism"}


def make_parts(spec: Spec, system: System, performance: Performance) -> tuple[Part, ...]:
    """One Part per prism of the system, in beam order, with grade-default tolerances.

    Raises:
        MaterialError: a prism material is unknown.
    """
    from prismfab.materials import get

    ray = _chief_ray(spec, system, performance)
    return tuple(_part(spec, system, performance, k, p, get(p.material, catalogue_file=spec.materials_file or None), ray)
                 for k, p in enumerate(system.prisms))


def part_title(spec: Spec, system: System, index: int) -> str:
    """The spec's title for prism ``index``, or a generated one of at most 25 characters."""
    if index < len(spec.project.part_titles):
        return spec.project.part_titles[index][:TITLE_MAX]
    base = _FAMILY_TITLES.get(system.family, "Prism")
    if system.family == "fold" and hasattr(spec.design, "type"):
        base = f"{spec.design.type.value.capitalize()} prism"  # type: ignore[union-attr]
    if len(system.prisms) > 1:
        base = f"{base} {index + 1} of {len(system.prisms)}"
    return base[:TITLE_MAX]


def apex_flats(prism: Prism) -> tuple[int, ...]:
    """Ground faces that truncate an apex: between two optical faces and short, or noted so."""
    n = len(prism.faces)
    longest = max(prism.face_length_mm(i) for i in range(n))
    out = []
    for i, f in enumerate(prism.faces):
        if f.role.is_optical:
            continue
        between = prism.faces[i - 1].role.is_optical and prism.faces[(i + 1) % n].role.is_optical
        if "flat" in f.note.lower() or (between and prism.face_length_mm(i) < 0.25 * longest):
            out.append(i)
    return tuple(out)


def choose_datum(prism: Prism) -> int:
    """Datum B: the longest ground face that is not an apex flat, else the longest optical face."""
    flats = apex_flats(prism)
    n = len(prism.faces)
    ground = [i for i in range(n) if not prism.faces[i].role.is_optical and i not in flats]
    pool = ground or [i for i in range(n) if prism.faces[i].role.is_optical]
    return max(pool, key=lambda i: (round(prism.face_length_mm(i), 6), -i))


def _part(spec: Spec, system: System, perf: Performance, k: int, prism: Prism, mat, ray) -> Part:  # type: ignore[no-untyped-def]
    grade = spec.fabrication.grade.value
    n_design = float(mat.n(system.beam.wavelength_nm))
    faces = tuple(_face(spec, system, perf, prism, i, n_design, ray) for i in range(len(prism.faces)))
    datum = choose_datum(prism)
    chain = angle_chain(prism, datum)
    bevelled, sharp, edge_notes = _edges(spec, prism, faces)
    brewster = any(f.coating.type is CoatingType.NONE and "brewster" in f.coating.reason.lower()
                   for f in faces)
    xs, ys = zip(*prism.vertices_mm, strict=True)
    largest = max(max(xs) - min(xs), max(ys) - min(ys), prism.height_mm)
    mgrade = C.material_grade(grade, family=system.family, largest_mm=largest,
                              polarization_critical=brewster or system.family == "brewster")
    nd, vd = _nd_vd(mat, n_design)
    defaults = C.GRADES[grade]
    tol = Tolerances(
        angle_arcsec=defaults.angle_arcsec, pyramidal_arcsec=defaults.pyramidal_arcsec,
        length_mm=defaults.length_mm, height_mm=defaults.length_mm,
        nd_tolerance=mgrade.nd_tolerance, vd_tolerance_pct=mgrade.vd_tolerance_pct,
        surface_form_fringes=(2.0 * defaults.flatness_fringes, defaults.flatness_fringes),
        grade=grade, driving="grade default (not yet derived from the requirements)")
    labels = [f.label for f in prism.faces]
    notes = list(edge_notes)
    for ca in chain:
        if ca.vertex is None:
            between = "/".join(labels[i] for i in _between(prism, ca))
            notes.append(f"Functional angle between faces {labels[ca.face_a]} and {labels[ca.face_b]} "
                         f"(across {between}): {math.degrees(ca.value_rad):.4f}° with the angle tolerance.")
    polished = [f.label for f in faces if f.polished]
    notes.append(f"Polished faces {', '.join(polished)}; all other faces fine ground.")
    if mgrade.melt_data:
        notes.append("Supply melt data (measured nd, dispersion, stress birefringence) with the parts.")
    if any(f.role is FaceRole.TIR for f in faces):
        notes.append("Internal-reflection faces: keep clean, no coating, no mounting contact in the clear aperture.")
    if brewster:
        nb = math.degrees(math.atan(n_design))
        notes.append(f"Brewster faces uncoated: Brewster angle {nb:.2f}° at {system.beam.wavelength_nm:g} nm "
                     "(recompute from melt data).")
    if not math.isfinite(nd) or nd == 0.0:
        notes.append("nd and vd: the d line is outside the material data; index per material data at "
                     f"{system.beam.wavelength_nm:g} nm = {n_design:.6f}.")
    what = "reference ground face" if not prism.faces[datum].role.is_optical else "optical face used as reference"
    return Part(
        number=f"{spec.project.drawing_prefix}-{k + 1:02d}", title=part_title(spec, system, k),
        quantity=spec.project.quantity, prism=prism, faces=faces, material_name=mat.name,
        material_code=mat.code, nd=nd, vd=vd,
        material_indications=mgrade.indications(decimal_comma=spec.sheet.decimal_comma),
        bevel_mm=spec.fabrication.bevel_mm, bevelled_edges=bevelled, sharp_edges=sharp,
        datums=(("A", "lower end face"), ("B", f"face {labels[datum]} ({what})")), tolerances=tol,
        functional_angles=tuple(sorted(ca.vertex for ca in chain if ca.vertex is not None)),
        ray_path_mm=_ray_in_part(prism, ray),
        polarization_note=_polarization_note(system.beam.polarization, faces, brewster),
        notes=tuple(notes))


def _nd_vd(mat, n_design: float) -> tuple[float, float]:  # type: ignore[no-untyped-def]
    try:
        return float(mat.nd), float(mat.vd)
    except ValueError:  # d, F or C line outside the data (infrared crystals)
        return 0.0, 0.0


def _between(prism: Prism, ca) -> list[int]:  # type: ignore[no-untyped-def]
    n = len(prism.faces)
    lo, hi = sorted((ca.face_a, ca.face_b))
    forward = list(range(lo + 1, hi))
    backward = [i % n for i in range(hi + 1, lo + n)]
    optical = lambda idx: any(prism.faces[i].role.is_optical for i in idx)  # noqa: E731
    return backward if optical(forward) or not forward else forward


def _lookup(rows, prism: str, label: str):  # type: ignore[no-untyped-def]
    return next((r[2:] for r in rows if r[0] == prism and r[1] == label), None)


def _face(spec: Spec, system: System, perf: Performance, prism: Prism, i: int, n: float, ray) -> PartFace:  # type: ignore[no-untyped-def]
    face = prism.faces[i]
    length = prism.face_length_mm(i)
    grade = spec.fabrication.grade.value
    if not face.role.is_optical:
        return PartFace(face.label, face.role, length, None, None, None, False, "", "", Coating(), "")
    ca = _lookup(system.clear_apertures, prism.name, face.label) or _ca_fallback(spec, system, perf, prism, i, ray)
    aoi = _lookup(system.aoi_ranges_deg, prism.name, face.label) or _aoi_fallback(perf, prism, face.label, ray, i)
    coating = _coating(spec, face)
    coated = coating.type is not CoatingType.NONE
    tighter = 1 if system.family == "brewster" else 0
    if spec.fabrication.imperfection_notation.value == "mil-prf-13830b":
        imperf = C.scratch_dig(grade, tighter_steps=tighter)
    else:
        imperf = C.imperfections_iso(grade, clear_aperture_mm=(ca[0], ca[1]) if ca else None,
                                     coated=coated, tighter_steps=tighter,
                                     decimal_comma=spec.sheet.decimal_comma)
    flat = C.GRADES[grade].flatness_fringes
    text = C.coating_text(coating, role=face.role, band_nm=system.beam.band_nm,
                          aoi_deg=tuple(aoi) if aoi else None, n_glass=n,  # type: ignore[arg-type]
                          polarization=system.beam.polarization,
                          decimal_comma=spec.sheet.decimal_comma)
    return PartFace(face.label, face.role, length, (ca[0], ca[1]) if ca else None,
                    (ca[2], ca[3]) if ca else None, tuple(aoi) if aoi else None, True,  # type: ignore[arg-type]
                    C.surface_form(2.0 * flat, flat, decimal_comma=spec.sheet.decimal_comma),
                    imperf, coating, text)


def _coating(spec: Spec, face) -> Coating:  # type: ignore[no-untyped-def]
    """The solver's coating; a hand-built face with no decision gets the spec's table."""
    c = face.coating
    if c.type is not CoatingType.NONE or c.reason:
        return c
    if face.role is FaceRole.TIR:
        return Coating(CoatingType.NONE, reason="internal reflection")
    cs = spec.fabrication.coating_for("mirror" if face.role is FaceRole.MIRROR else face.role.value)
    if face.role is FaceRole.MIRROR:
        return Coating(CoatingType.MIRROR, reflectance_min_pct=cs.reflectance_min_pct or 99.5)
    if cs.type == "none":
        return Coating(CoatingType.NONE, reason="uncoated by request")
    return Coating(CoatingType.ANTIREFLECTION, reflectance_max_pct=cs.reflectance_max_pct)


def _chief_ray(spec: Spec, system: System, perf: Performance) -> tuple[tuple[float, float, float], ...]:
    if perf.chief_ray_mm:
        return tuple(perf.chief_ray_mm)
    from prismfab.design.perturb import find_path
    from prismfab.materials import get

    cat = spec.materials_file or None
    n = np.array([float(get(p.material, catalogue_file=cat).n(system.beam.wavelength_nm))
                  for p in system.prisms])
    return find_path(system, n).points_mm


def _to_part(prism: Prism, points) -> np.ndarray:  # type: ignore[no-untyped-def]
    rot = np.array(prism.pose.rotation)
    return (np.asarray(points, float) - np.array(prism.pose.translation_mm)) @ rot


def _clip(p0: np.ndarray, p1: np.ndarray, verts: np.ndarray) -> tuple[float, float] | None:
    """Cyrus-Beck: parameter range of segment p0-p1 inside the convex CCW polygon."""
    t0, t1, d = 0.0, 1.0, p1 - p0
    for i in range(len(verts)):
        a, b = verts[i], verts[(i + 1) % len(verts)]
        normal = np.array([b[1] - a[1], -(b[0] - a[0])])
        num, den = float(normal @ (a - p0)), float(normal @ d)
        if abs(den) < 1e-15:
            if num < -1e-9:
                return None
            continue
        t = num / den
        if den < 0:
            t0 = max(t0, t)
        else:
            t1 = min(t1, t)
    return (t0, t1) if t1 > t0 + 1e-12 else None


def _ray_in_part(prism: Prism, ray) -> tuple[Vec2, ...]:  # type: ignore[no-untyped-def]
    """The chief-ray path across this part, in the part-frame section, with lead-in and out."""
    if len(ray) < 2:
        return ()
    pts = _to_part(prism, ray)[:, :2]
    verts = np.array(prism.vertices_mm)
    inside: list[np.ndarray] = []
    first_dir = last_dir = None
    for a, b in zip(pts[:-1], pts[1:], strict=True):
        span = _clip(a, b, verts)
        if span is None:
            continue
        d = (b - a) / np.linalg.norm(b - a)
        first_dir = d if first_dir is None else first_dir
        last_dir = d
        for q in (a + span[0] * (b - a), a + span[1] * (b - a)):
            if not inside or np.linalg.norm(inside[-1] - q) > 1e-9:
                inside.append(q)
    if not inside:
        return ()
    size = float(np.max(np.ptp(verts, axis=0)))
    lead = max(3.0, LEAD_FRACTION * size)
    path = [inside[0] - lead * first_dir, *inside, inside[-1] + lead * last_dir]
    return tuple((round(float(x), 6), round(float(y), 6)) for x, y in path)


def _hit_on_face(prism: Prism, ray, i: int) -> tuple[float, float, float] | None:
    """(along the face from its start vertex, along the height, AOI deg) of the chief ray."""
    pts = _to_part(prism, ray)
    verts = np.array(prism.vertices_mm)
    a, b = verts[i], verts[(i + 1) % len(verts)]
    e = (b - a) / np.linalg.norm(b - a)
    normal = np.array([e[1], -e[0]])
    for j in range(1, len(pts)):
        q = pts[j, :2]
        if abs(float(normal @ (q - a))) < 1e-6 and -1e-6 <= float(e @ (q - a)) <= np.linalg.norm(b - a) + 1e-6:
            d = pts[j, :2] - pts[j - 1, :2]
            cos = abs(float(normal @ d)) / np.linalg.norm(d)
            return float(e @ (q - a)), float(pts[j, 2]), math.degrees(math.acos(min(1.0, cos)))
    return None


def _ca_fallback(spec: Spec, system: System, perf: Performance, prism: Prism, i: int, ray):  # type: ignore[no-untyped-def]
    """Clear aperture from the traced footprints, or from the chief ray and beam size."""
    label = prism.faces[i].label
    prints = [fp[2:] for r in perf.results for fp in r.footprint_mm if fp[0] == prism.name and fp[1] == label]
    margin = spec.fabrication.clear_aperture_margin
    if prints:
        lo = min(c - w / 2 for c, w, _, _ in prints)
        hi = max(c + w / 2 for c, w, _, _ in prints)
        hlo = min(c - w / 2 for _, _, c, w in prints)
        hhi = max(c + w / 2 for _, _, c, w in prints)
        return (margin * (hi - lo), margin * (hhi - hlo), (lo + hi) / 2, (hlo + hhi) / 2)
    hit = _hit_on_face(prism, ray, i)
    if hit is None:
        return None
    along, up, aoi = hit
    b = system.beam
    w = min(margin * b.diameter_in_plane_mm / max(math.cos(math.radians(aoi)), 0.05) + 2 * b.alignment_mm,
            0.9 * prism.face_length_mm(i))
    h = min(margin * b.diameter_out_of_plane_mm + 2 * b.alignment_mm, 0.9 * prism.height_mm)
    return (round(w, 4), round(h, 4), round(along, 4), round(up, 4))


def _aoi_fallback(perf: Performance, prism: Prism, label: str, ray, i: int):  # type: ignore[no-untyped-def]
    vals = [a for r in perf.results for p, f, a in r.aoi_deg if p == prism.name and f == label]
    if vals:
        return (vals[0], min(vals), max(vals))
    hit = _hit_on_face(prism, ray, i)
    return (hit[2], hit[2], hit[2]) if hit else None


def _edges(spec: Spec, prism: Prism, faces: tuple[PartFace, ...]):  # type: ignore[no-untyped-def]
    """Bevelled and sharp edges, and the chip-limit notes of the sharp ones.

    Every edge is bevelled by default, except: an edge the clear aperture of an optical face
    comes closer to than the bevel's leg on that dihedral (``sizing.bevel_leg_mm``: the bevel
    would cut into the clear aperture), and the edges of an apex flat on an acute apex (a bevel
    would eat the flat). Sharp edges get a chip limit of half the gap to the clear aperture, at
    most the grade's limit for sharp edges.
    """
    grade = C.GRADES[spec.fabrication.grade.value]
    bevel = spec.fabrication.bevel_mm
    n = len(faces)
    gaps: dict[tuple[str, str], float] = {}

    def close(edge: tuple[str, str], gap: float, dihedral_rad: float) -> None:
        if gap < bevel_leg_mm(bevel, dihedral_rad):
            gaps[edge] = min(gap, gaps.get(edge, math.inf))

    for i, f in enumerate(faces):
        if f.clear_aperture_mm is None or f.clear_aperture_centre_mm is None:
            continue
        (w, h), (c, hc) = f.clear_aperture_mm, f.clear_aperture_centre_mm
        close((faces[i - 1].label, f.label), c - w / 2, prism.interior_angle_rad(i))
        close((f.label, faces[(i + 1) % n].label), f.length_mm - (c + w / 2),
              prism.interior_angle_rad((i + 1) % n))
        close((f.label, "BOTTOM"), hc - h / 2, math.pi / 2)
        close((f.label, "TOP"), prism.height_mm - (hc + h / 2), math.pi / 2)
    for i in apex_flats(prism):
        turn = math.pi - prism.interior_angle_rad(i) + math.pi - prism.interior_angle_rad((i + 1) % n)
        if math.pi - turn < math.pi / 2:  # the apex the flat truncates is acute
            gaps.setdefault((faces[i - 1].label, faces[i].label), grade.sharp_chip_mm)
            gaps.setdefault((faces[i].label, faces[(i + 1) % n].label), grade.sharp_chip_mm)
    edges = [(faces[i - 1].label, faces[i].label) for i in range(n)]
    edges += [(f.label, end) for end in ("BOTTOM", "TOP") for f in faces]
    sharp = tuple(e for e in edges if e in gaps)
    bevelled = tuple(e for e in edges if e not in gaps)
    notes = []
    for e in sharp:
        chip = min(grade.sharp_chip_mm, max(0.02, round(max(gaps[e], 0.0) / 2.0, 2)))
        notes.append(f"Edge {e[0]}/{e[1]} sharp, no bevel; chips ≤ {C.fmt_number(chip)} mm, "
                     "outside the clear aperture.")
    return bevelled, sharp, tuple(notes)


def _polarization_note(pol: Polarization, faces: tuple[PartFace, ...], brewster: bool) -> str:
    matters = brewster or any(f.role.reflects for f in faces) or any(
        f.coating.type is not CoatingType.NONE and f.aoi_deg and abs(f.aoi_deg[0]) > 15.0 for f in faces)
    if not matters:
        return ""
    if pol is Polarization.P:
        return "p: E-field in the principal section (the plane of the drawing)"
    if pol is Polarization.S:
        return "s: E-field normal to the principal section (along the height)"
    return "unpolarised input: s and p differ at the oblique faces" + (
        " (the Brewster faces reflect s light)" if brewster else "")
