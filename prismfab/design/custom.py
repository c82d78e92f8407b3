"""Custom prisms: a user's section polygon, traced and packaged exactly as given.

The polygon is the user's design and is never resized. The solver places it, traces the beam
through it, and checks it: every face the beam uses must carry a matching role, the clear
aperture (``fabrication.clear_aperture_margin`` x the traced 1/e^2 footprint, over the band and
the alignment allowance) must lie on its face, and each TIR face must keep total internal
reflection over the band, the divergence, the alignment tilt and the grade's angle tolerance.
A failure is a ``DesignCheckError`` naming the face and the numbers.

Placing the polygon so the beam hits it:
  * The section is given in the part frame (X, Y), counter-clockwise, either as
    ``design.vertices_mm`` or, for a triangle, as ``design.angles_deg`` (interior angles at
    vertices 0, 1, 2) plus ``design.first_side_mm`` (face A, from vertex 0 along +X). The
    polygon is shifted so vertex 0, the datum vertex, is the part origin.
  * ``design.rotation_deg`` turns the part about the system y axis: at 0 deg part +X points
    along the beam (+z) and part +Y along +x; a positive angle turns +z towards +x.
  * ``design.position_mm`` = (x, z) puts the datum vertex at that point of the system frame.
  * The input chief ray is the system z axis (x = 0) travelling towards +z, from upstream of
    the part. So a part at rotation 0 is hit when its datum vertex sits below the axis
    (x < 0) and its section spans x = 0, e.g. a 10 mm entry face on part Y at
    ``position_mm: [-5, 20]`` is met at its middle, 20 mm down the beam.

``design.height_mm`` None sizes the height from the beam like the other families; a given
height is checked against the out-of-plane clear aperture.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from prismfab.design import _reflecting as rf
from prismfab.design.common import is_convex_ccw, labels, material_of, polygon_from_angles
from prismfab.design.sizing import (
    Draft,
    beam_groups,
    clear_aperture,
    finish_system,
    footprints,
    start_z_mm,
    trace_groups,
)
from prismfab.errors import DesignCheckError, SpecError
from prismfab.model import FaceRole, Pose, System
from prismfab.spec.types import CustomDesign, Spec

__all__ = ["ROLE_NAMES", "design", "section_mm"]

ROLE_NAMES = {**{r.value: r for r in FaceRole}, "tir": FaceRole.TIR}
"""Role words accepted in ``design.roles``."""


def _spec_error(spec: Spec, path: str, problem: str, fix: str) -> SpecError:
    return SpecError(path, problem, line=spec.line_of(path), fix=fix, source=spec.source or None)


def face_roles(spec: Spec) -> tuple[FaceRole, ...]:
    """The roles of ``design.roles`` as enums.

    Raises:
        SpecError: an unknown role word.
    """
    d: CustomDesign = spec.design  # type: ignore[assignment]
    out = []
    for i, word in enumerate(d.roles):
        role = ROLE_NAMES.get(str(word).strip().lower())
        if role is None:
            raise _spec_error(spec, f"design.roles[{i}]", f"is '{word}', not a face role",
                              "use one of " + ", ".join(sorted(ROLE_NAMES)))
        out.append(role)
    return tuple(out)


def section_mm(spec: Spec) -> np.ndarray:
    """The user's section in the part frame, vertex 0 moved to the origin, as an (n, 2) array.

    Raises:
        SpecError: no section, a triangle-only angle form used for more vertices, or a polygon
            that is not convex and counter-clockwise.
    """
    d: CustomDesign = spec.design  # type: ignore[assignment]
    if d.vertices_mm:
        v = np.array(d.vertices_mm, float)
        v = v - v[0]
        path = "design.vertices_mm"
    elif d.angles_deg:
        path = "design.angles_deg"
        if len(d.angles_deg) != 3 or d.first_side_mm is None:
            raise _spec_error(spec, path, f"gives {len(d.angles_deg)} angles"
                              + ("" if d.first_side_mm is not None else " and no first side"),
                              "angles and one side fix only a triangle: give 3 interior angles "
                              "and design.first_side_mm, or give design.vertices_mm")
        try:
            v = polygon_from_angles([math.radians(a) for a in d.angles_deg], [d.first_side_mm])
        except ValueError as err:
            raise _spec_error(spec, path, f"does not close a triangle ({err})",
                              "interior angles must be positive and sum to 180 deg") from err
    else:
        raise _spec_error(spec, "design.vertices_mm", "is missing",
                          "give the section as vertices_mm, or angles_deg with first_side_mm")
    if len(v) < 3 or not is_convex_ccw(v):
        raise _spec_error(spec, path, "is not a convex counter-clockwise polygon",
                          "list the vertices counter-clockwise (seen from +Z) around a convex "
                          "section, with no repeated or collinear vertex")
    return v


def _to_plane(part: np.ndarray, d: CustomDesign) -> np.ndarray:
    """Part (X, Y) -> plane (z, x) by the pose of ``Pose.in_plane``."""
    a = math.radians(d.rotation_deg)
    c, s = math.cos(a), math.sin(a)
    x0, z0 = d.position_mm
    return np.column_stack([z0 + c * part[:, 0] - s * part[:, 1],
                            x0 + s * part[:, 0] + c * part[:, 1]])


def design(spec: Spec) -> System:
    """Trace, check and package a user polygon (``spec.design`` is a ``CustomDesign``).

    Raises:
        SpecError: unknown role, wrong role count, or a section that is not a convex CCW polygon.
        DesignCheckError: the beam misses the prism, meets a face against its role, spills off
            a face, loses TIR, or a face exceeds ``fabrication.max_face_mm``.
        MaterialError: unknown material or a band wavelength outside its range.
    """
    d: CustomDesign = spec.design  # type: ignore[assignment]
    mat = material_of(spec, d.material, path="design.material")
    index = lambda wl: float(mat.n(wl))  # noqa: E731
    part = section_mm(spec)
    roles = face_roles(spec)
    if len(roles) != len(part):
        raise _spec_error(spec, "design.roles", f"has {len(roles)} entries for {len(part)} faces",
                          "give one role per face, face i running from vertex i to vertex i+1")
    draft = Draft("P1", mat.key, index, _to_plane(part, d), roles, ("",) * len(roles))
    rf.check_face_limit(spec, [draft])
    lab = labels(len(roles))
    _check_chief(spec, draft, lab)
    _check_beam(spec, draft, lab)
    budget = rf.reflections(spec, [draft.placed()])
    warnings = _check_tir(spec, draft, budget, lab)
    facts = _facts(spec, draft, budget)
    system = finish_system(spec, [draft], facts=facts, warnings=warnings, path="design")
    system = rf.without_generic_tir_warnings(system, budget)
    return _as_given(spec, system, part)


def _check_chief(spec: Spec, draft: Draft, lab: tuple[str, ...]) -> None:
    """The chief ray at the design wavelength meets the faces as their roles say."""
    path = rf.chief_path([draft.placed()], spec.beam.wavelength_nm)
    if not path.hits:
        v = draft.vertices
        raise DesignCheckError(
            "design.position_mm",
            f"the input beam (system z axis, x = 0, travelling +z) misses the prism, whose section "
            f"spans x = {v[:, 1].min():.2f} to {v[:, 1].max():.2f} mm and z = {v[:, 0].min():.2f} "
            f"to {v[:, 0].max():.2f} mm", reachable="move the datum vertex (position_mm) or turn "
            "the part (rotation_deg) so the z axis crosses the entry face")
    refractions = [h for h in path.hits if h.event == "refract"]
    for h in path.hits:
        role, name = draft.roles[h.face], f"P1 face {lab[h.face]} ({draft.roles[h.face].value})"
        if h.event == "blocked":
            _role_error(f"the chief ray meets {name}", "mark it as an optical face or move the part")
        if h.event == "refract" and role is FaceRole.TIR:
            crit = math.degrees(math.asin(1.0 / draft.index(spec.beam.wavelength_nm)))
            raise DesignCheckError(
                "design.roles", f"{name} loses total internal reflection: internal incidence "
                f"{math.degrees(h.aoi_rad):.3f} deg, below the critical angle {crit:.3f} deg",
                reachable=f"incidence above {crit:.3f} deg on that face (change the angles or the "
                "rotation), or mark it mirror for a coated reflector")
        if h.event == "tir" and role.transmits:
            crit = math.degrees(math.asin(1.0 / draft.index(spec.beam.wavelength_nm)))
            _role_error(f"the chief ray is totally reflected at {name}: internal incidence "
                        f"{math.degrees(h.aoi_rad):.3f} deg, above the critical angle {crit:.3f} deg",
                        "change the angles so the ray can leave, or mark the face "
                        "internal-reflection")
    if refractions and draft.roles[refractions[0].face] not in (FaceRole.ENTRY, FaceRole.ENTRY_EXIT):
        _role_error(f"the beam enters through P1 face {lab[refractions[0].face]}, marked "
                    f"{draft.roles[refractions[0].face].value}", "mark it entry (or entry-exit)")
    if len(refractions) > 1 and draft.roles[refractions[-1].face] not in (FaceRole.EXIT,
                                                                         FaceRole.ENTRY_EXIT):
        _role_error(f"the beam leaves through P1 face {lab[refractions[-1].face]}, marked "
                    f"{draft.roles[refractions[-1].face].value}", "mark it exit (or entry-exit)")
    if not path.complete:
        _role_error("the chief ray is trapped in the prism", "change the angles or the roles")
    used = {h.face for h in path.hits}
    for i, role in enumerate(draft.roles):
        if role.is_optical and i not in used:
            _role_error(f"P1 face {lab[i]} is marked {role.value} but the beam does not reach it",
                        "mark it ground, or move the part so the beam uses it")


def _role_error(problem: str, fix: str) -> None:
    raise DesignCheckError("design.roles", problem, reachable=fix)


def _check_beam(spec: Spec, draft: Draft, lab: tuple[str, ...]) -> None:
    """The 1/e^2 edge rays follow the chief ray's faces and each clear aperture fits its face."""
    placed = [draft.placed()]
    traced = trace_groups(placed, beam_groups(spec, start_z_mm=start_z_mm([draft])))
    for g, paths in traced:
        chief = [(h.face, h.event) for h in paths[0].hits]
        for edge in paths[1:]:
            seq = [(h.face, h.event) for h in edge.hits]
            if seq != chief:
                _spill(draft, lab, g, paths[0], edge)
    margin = spec.fabrication.clear_aperture_margin
    v = draft.vertices
    for i, role in enumerate(draft.roles):
        if not role.is_optical:
            continue
        lo, hi = clear_aperture(footprints(traced, 0, i, lambda h: h.along_mm), margin)
        length = float(np.linalg.norm(v[(i + 1) % len(v)] - v[i]))
        if lo < 0.0 or hi > length:
            raise DesignCheckError(
                "design.vertices_mm", f"the clear aperture on P1 face {lab[i]} ({margin:g} x the "
                f"traced 1/e^2 footprint over band and alignment) spans {lo:.3f} to {hi:.3f} mm "
                f"from its start vertex, off the {length:.3f} mm face",
                reachable=f"a face of at least {hi - min(lo, 0.0):.2f} mm with the beam centred, "
                "or a smaller beam or fabrication.clear_aperture_margin")


def _spill(draft: Draft, lab: tuple[str, ...], group, chief, edge) -> None:
    """Raise the error for an edge ray that leaves the chief ray's faces, with the numbers."""
    seq = [(h.face, h.event) for h in edge.hits]
    ref = [(h.face, h.event) for h in chief.hits]
    if not ref:
        raise DesignCheckError(
            "design.position_mm", f"at {group.wavelength_nm:g} nm ({group.case}) the chief ray "
            "misses the prism while part of the 1/e^2 beam meets it",
            reachable="move the datum vertex (position_mm) so the beam and its alignment "
            "allowance fall well inside the entry face")
    k = next((j for j, (a, b) in enumerate(zip(seq, ref)) if a != b), min(len(seq), len(ref)))
    k = min(k, len(ref) - 1)
    face = ref[k][0]
    v = draft.vertices
    a, b = v[face], v[(face + 1) % len(v)]
    length = float(np.linalg.norm(b - a))
    p = edge.points[k]
    d = (edge.points[k + 1] - p) if k + 1 < len(edge.points) else edge.direction
    e = (b - a) / length
    den = float(d[0] * e[1] - d[1] * e[0])
    where = ""
    if abs(den) > 1e-15:
        t = float((a - p)[0] * e[1] - (a - p)[1] * e[0]) / den
        s_edge = float((p + t * d - a) @ e)
        where = f", where a 1/e^2 edge ray needs {s_edge:.3f} mm"
    raise DesignCheckError(
        "design.vertices_mm", f"the 1/e^2 beam spills off P1 face {lab[face]} at "
        f"{group.wavelength_nm:g} nm ({group.case}): the face runs 0 to {length:.3f} mm from its "
        f"start vertex, the chief ray meets it at {chief.hits[k].along_mm:.3f} mm{where}",
        reachable="enlarge the face or move the part so the beam is centred on it")


def _check_tir(spec: Spec, draft: Draft, budget: tuple[rf.Reflection, ...],
               lab: tuple[str, ...]) -> list[str]:
    """TIR faces keep TIR under every allowance; warn under the 2 deg margin."""
    warnings = []
    tol = math.degrees(rf.angle_allowance_rad(spec)) * 3600.0
    for r in budget:
        if draft.roles[r.face] is not FaceRole.TIR:
            continue
        name = f"P1 face {lab[r.face]}"
        if not r.holds:
            raise DesignCheckError(
                "design.roles", f"{name} loses total internal reflection in the worst case: "
                f"internal incidence {r.aoi_deg:.3f} deg, critical angle {r.critical_deg:.3f} deg, "
                f"margin {r.nominal_margin_deg:.3f} deg at the design wavelength and "
                f"{r.worst_margin_deg:.3f} deg over the band, divergence, alignment tilt and a "
                f"{tol:.0f} arcsec angle tolerance",
                reachable=f"raise the internal incidence by at least {-r.worst_margin_deg:.3f} deg, "
                "or mark the face mirror for a coated reflector")
        if r.worst_margin_deg < rf.MARGIN_WARN_DEG:
            warnings.append(f"{name}: worst-case TIR margin {r.worst_margin_deg:.2f} deg (under "
                            f"{rf.MARGIN_WARN_DEG:g} deg) over the band, divergence, alignment "
                            f"tilt and a {tol:.0f} arcsec angle tolerance; keep the face clean and "
                            "free of mounting contact")
    return warnings


def _facts(spec: Spec, draft: Draft, budget: tuple[rf.Reflection, ...]
           ) -> list[tuple[str, float, str]]:
    placed = [draft.placed()]
    path = rf.chief_path(placed, spec.beam.wavelength_nm)
    facts = [("deviation", round(rf.deviation_deg(path), 9), "deg"),
             ("output direction from +z towards +x", round(rf.pointing_deg(path), 9), "deg"),
             ("path length in glass", round(rf.glass_path_mm(path), 4), "mm"),
             ("reflections", float(sum(h.event in ("tir", "mirror") for h in path.hits)), "")]
    return facts + rf.reflection_facts(spec, placed, budget, draft)


def _as_given(spec: Spec, system: System, part: np.ndarray) -> System:
    """Put the user's part frame and height back on the assembled prism."""
    d: CustomDesign = spec.design  # type: ignore[assignment]
    prism = system.prisms[0]
    height = prism.height_mm
    cas = system.clear_apertures
    if d.height_mm is not None:
        height = d.height_mm
        for ca in cas:
            if ca[3] > height + 1e-9:
                raise DesignCheckError(
                    "design.height_mm", f"the out-of-plane clear aperture of {ca[3]:.3f} mm on "
                    f"face {ca[1]} does not fit the {height:g} mm height",
                    reachable=f"a height of at least {ca[3]:.2f} mm, or leave it empty")
        cas = tuple((*ca[:5], round(height / 2.0, 4)) for ca in cas)
    pose = Pose.in_plane(angle_rad=math.radians(d.rotation_deg), x_mm=d.position_mm[0],
                         z_mm=d.position_mm[1], height_mm=height)
    verts = tuple((float(x), float(y)) for x, y in part)
    prism = dataclasses.replace(prism, vertices_mm=verts, height_mm=height, pose=pose)
    return dataclasses.replace(system, prisms=(prism,), clear_apertures=cas)
