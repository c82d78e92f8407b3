"""Fold prisms: right-angle, penta, dove and retro, sized from the traced beam.

Each prism is drawn in a local section frame (its datum vertex at the origin, face A along +X),
then turned and shifted so the input chief ray (the system z axis) enters its entry face at the
system origin. Reflecting faces stay uncoated where total internal reflection holds over the
band, the in-plane divergence, the alignment tilt and the grade's angle tolerance
(``_reflecting.reflections``); elsewhere they get a mirror coating (role MIRROR), unless
``design.coat_reflecting_faces`` forces a choice (True: coat every reflecting face; False: never,
and a lost TIR is an error).

* **right-angle**: 45-90-45 section; the beam enters a leg at normal incidence, reflects once at
  the hypotenuse (internal incidence 45 deg, so TIR needs n > sqrt 2) and
  leaves through the other leg: 90 deg deviation, towards -x.
* **penta**: entry and exit faces at 90 deg, two reflecting faces 45 deg apart (interior angles
  90, 4 x 112.5 deg): the deviation is twice the angle between the reflectors, 90 deg, whatever
  the input tilt. Internal incidence 22.5 deg, so both reflectors get a mirror coating (without
  a warning: that is the usual penta) unless n > 1/sin 22.5 deg = 2.613. The prism is set
  ``ANTI_FEEDBACK_TILT_DEG`` off square to the beam so the entry and exit faces do not return
  their reflections into the source; the 90 deg deviation does not change.
* **dove**: isosceles trapezoid with 45 deg base angles; the beam, parallel to the base, refracts
  at the inclined entry face, reflects at the base (TIR) and leaves the other inclined face
  parallel to the input. The base length ``L = 2 K y`` (``K = 1/tan a + 1/tan g``, ``g`` the
  internal descent angle, ``y`` the chief-ray height) puts the output on the input axis at the
  design wavelength. Rolling the prism by r about the axis rotates the image by 2 r, so the faces
  are sized for the larger beam diameter in both axes (any roll).
* **retro**: right-angle section entered through the hypotenuse at normal incidence (role
  ENTRY_EXIT), two internal reflections at the legs (45 deg each), return beam antiparallel,
  displaced by about half the hypotenuse. Like the penta it is set ``ANTI_FEEDBACK_TILT_DEG``
  off square (an in-plane 180 deg return does not depend on the tilt), so the hypotenuse's
  first-surface reflection misses the source.
* **right-angle** and **dove** keep their textbook orientation: tilting a right-angle prism
  turns its fold by twice the tilt, so its normal-incidence legs are reported by the trace's
  back-reflection check instead (tilt the prism and accept 90 deg + 2 x tilt, or add an
  isolator).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from prismfab.design import _reflecting as rf
from prismfab.design.common import labels, material_of
from prismfab.design.sizing import Draft, finish_system, round_up
from prismfab.errors import DesignCheckError
from prismfab.model import FaceRole, System
from prismfab.spec.types import FoldDesign, FoldType, Spec

__all__ = ["DOVE_BASE_ANGLE_DEG", "design"]

DOVE_BASE_ANGLE_DEG = 45.0
"""Base angle of the dove prism's inclined faces (the usual choice, common practice)."""
ANTI_FEEDBACK_TILT_DEG = {FoldType.PENTA: 1.0, FoldType.RETRO: 1.0}
"""Tilt of the constant-deviation types about the chief ray's entry point, so the reflections
of the entry face (and the retro's exit face) miss the source by twice that; their in-plane
deviation does not depend on the tilt (common practice)."""
_PENTA_HALF_RAD = math.radians(22.5)


@dataclass(frozen=True, slots=True)
class _Layout:
    """A fold section in its local frame, and where the chief ray enters it.

    Args:
        vertices: CCW section, local frame (datum vertex at the origin), mm.
        roles: role per face (reflecting faces as TIR candidates).
        notes: note per face.
        entry: chief-ray entry point on the entry face, local frame, mm.
        direction: chief-ray direction inside the local frame before refraction (unit).
    """

    vertices: np.ndarray
    roles: tuple[FaceRole, ...]
    notes: tuple[str, ...]
    entry: np.ndarray
    direction: np.ndarray


def _right_angle(leg_mm: float, _n: float) -> _Layout:
    v = np.array([[0.0, 0.0], [leg_mm, 0.0], [0.0, leg_mm]])
    return _Layout(v, (FaceRole.EXIT, FaceRole.TIR, FaceRole.ENTRY), ("", "hypotenuse", ""),
                   np.array([0.0, leg_mm / 2.0]), np.array([1.0, 0.0]))


def _penta(side_mm: float, _n: float) -> _Layout:
    c, s = math.cos(_PENTA_HALF_RAD), math.sin(_PENTA_HALF_RAD)
    r = side_mm / c  # reflector length: holds every ray that enters the entry face
    v = np.array([[0.0, 0.0], [side_mm, 0.0], [side_mm + r * s, r * c],
                  [r * c, side_mm + r * s], [0.0, side_mm]])
    roles = (FaceRole.EXIT, FaceRole.TIR, FaceRole.GROUND, FaceRole.TIR, FaceRole.ENTRY)
    notes = ("", "first reflector", "", "second reflector", "")
    return _Layout(v, roles, notes, np.array([0.0, side_mm / 2.0]), np.array([1.0, 0.0]))


def dove_k(n: float, base_angle_rad: float = math.radians(DOVE_BASE_ANGLE_DEG)) -> float:
    """``K = 1/tan a + 1/tan g``: base length per unit chief-ray height for a collinear output.

    ``g = (90 deg - a) - asin(cos a / n)`` is the chief ray's descent below the base inside.
    """
    theta = math.pi / 2 - base_angle_rad
    gamma = theta - math.asin(math.sin(theta) / n)
    return 1.0 / math.tan(base_angle_rad) + 1.0 / math.tan(gamma)


def _dove(height_mm: float, n: float) -> _Layout:
    a = math.radians(DOVE_BASE_ANGLE_DEG)
    k = dove_k(n, a)
    base = round_up(k * height_mm)
    y = base / (2.0 * k)  # chief-ray height that makes the output collinear
    run = height_mm / math.tan(a)
    v = np.array([[0.0, 0.0], [base, 0.0], [base - run, height_mm], [run, height_mm]])
    roles = (FaceRole.TIR, FaceRole.EXIT, FaceRole.GROUND, FaceRole.ENTRY)
    return _Layout(v, roles, ("base", "", "", ""), np.array([y / math.tan(a), y]),
                   np.array([1.0, 0.0]))


def _retro(hypotenuse_mm: float, _n: float) -> _Layout:
    h = hypotenuse_mm
    v = np.array([[0.0, 0.0], [h, 0.0], [h / 2.0, h / 2.0]])
    roles = (FaceRole.ENTRY_EXIT, FaceRole.TIR, FaceRole.TIR)
    return _Layout(v, roles, ("hypotenuse", "", ""), np.array([h / 4.0, 0.0]),
                   np.array([0.0, 1.0]))


_SHAPES: dict[FoldType, Callable[[float, float], _Layout]] = {
    FoldType.RIGHT_ANGLE: _right_angle,
    FoldType.PENTA: _penta,
    FoldType.DOVE: _dove,
    FoldType.RETRO: _retro,
}


def _to_plane(layout: _Layout, tilt_rad: float = 0.0) -> np.ndarray:
    """Section vertices in plane coordinates with the entry point at the origin and the entry
    direction along +z, then the prism turned by ``tilt_rad`` about the entry point."""
    ang = math.atan2(layout.direction[1], layout.direction[0]) - tilt_rad
    c, s = math.cos(-ang), math.sin(-ang)
    rot = np.array([[c, -s], [s, c]])
    return (layout.vertices - layout.entry) @ rot.T


def _maker(shape: Callable[[float, float], _Layout], n0: float, index: Callable[[float], float],
           material: str, roles: dict[int, FaceRole], tilt_rad: float = 0.0
           ) -> Callable[[float], tuple[Draft, ...]]:
    def make(scale_mm: float) -> tuple[Draft, ...]:
        lay = shape(scale_mm, n0)
        rr = tuple(roles.get(i, r) for i, r in enumerate(lay.roles))
        return (Draft("P1", material, index, _to_plane(lay, tilt_rad), rr, lay.notes),)
    return make


def _sizing_spec(spec: Spec, fold: FoldType) -> Spec:
    """The spec the faces are sized for: a dove is sized for any roll (round envelope)."""
    return rf.round_beam_spec(spec) if fold is FoldType.DOVE else spec


def design(spec: Spec) -> System:
    """Solve a fold prism (``spec.design`` is a ``FoldDesign``) into a sized, traced System.

    Raises:
        DesignCheckError: TIR is lost and ``coat_reflecting_faces`` is false, or a face exceeds
            ``fabrication.max_face_mm``.
        MaterialError: unknown material or a band wavelength outside its range.
    """
    d: FoldDesign = spec.design  # type: ignore[assignment]
    mat = material_of(spec, d.material, path="design.material")
    index = lambda wl: float(mat.n(wl))  # noqa: E731
    n0 = index(spec.beam.wavelength_nm)
    shape = _SHAPES[d.type]
    sized_spec = _sizing_spec(spec, d.type)
    b = sized_spec.beam
    guess = sized_spec.fabrication.clear_aperture_margin * b.diameter_in_plane_mm
    guess += 2.0 * b.alignment.decenter_mm
    # Size with every reflector traced as a mirror (a TIR face turns the beam the same way),
    # then give each its role: the geometry does not depend on the choice.
    mirrors = {i: FaceRole.MIRROR for i, r in enumerate(shape(1.0, n0).roles) if r.reflects}
    tilt = math.radians(ANTI_FEEDBACK_TILT_DEG.get(d.type, 0.0))
    scale, drafts = rf.fit_scale(sized_spec, _maker(shape, n0, index, mat.key, mirrors, tilt),
                                 guess, path="design")
    budget = rf.reflections(spec, [p.placed() for p in drafts])
    roles, warnings = _reflector_roles(spec, d, budget, drafts[0])
    drafts = _maker(shape, n0, index, mat.key, roles, tilt)(scale)
    placed = [p.placed() for p in drafts]
    facts = _facts(spec, d.type, placed, budget, drafts[0])
    if tilt:
        facts.append(("anti-feedback tilt of the prism (deviation unchanged)",
                      ANTI_FEEDBACK_TILT_DEG[d.type], "deg"))
    system = finish_system(sized_spec, drafts, facts=facts, warnings=warnings, path="design")
    system = rf.without_generic_tir_warnings(system, budget)
    if sized_spec is not spec:
        beam = dataclasses.replace(system.beam, diameter_in_plane_mm=spec.beam.diameter_in_plane_mm,
                                   diameter_out_of_plane_mm=spec.beam.diameter_out_of_plane_mm,
                                   divergence_in_plane_mrad=spec.beam.divergence_in_plane_mrad,
                                   divergence_out_of_plane_mrad=spec.beam.divergence_out_of_plane_mrad)
        system = dataclasses.replace(system, beam=beam)
    return system


def _reflector_roles(spec: Spec, d: FoldDesign, budget: tuple[rf.Reflection, ...], draft: Draft
                     ) -> tuple[dict[int, FaceRole], list[str]]:
    """TIR or MIRROR per reflecting face, with the warnings the choice deserves."""
    lab = labels(len(draft.roles))
    tol = math.degrees(rf.angle_allowance_rad(spec)) * 3600.0
    roles: dict[int, FaceRole] = {}
    warnings: list[str] = []
    for r in budget:
        name = f"{draft.name} face {lab[r.face]}"
        n0 = draft.index(spec.beam.wavelength_nm)
        if d.coat_reflecting_faces is True:
            roles[r.face] = FaceRole.MIRROR
            continue
        if r.holds:
            roles[r.face] = FaceRole.TIR
            if r.worst_margin_deg < rf.MARGIN_WARN_DEG:
                warnings.append(
                    f"{name}: worst-case TIR margin {r.worst_margin_deg:.2f} deg (under "
                    f"{rf.MARGIN_WARN_DEG:g} deg) over the band, divergence, alignment tilt and "
                    f"a {tol:.0f} arcsec angle tolerance; keep the face clean and free of "
                    "mounting contact, or set design.coat_reflecting_faces: true")
            continue
        lost = (f"{name}: total internal reflection is lost (internal incidence "
                f"{r.aoi_deg:.3f} deg, critical angle {r.critical_deg:.3f} deg at n = {n0:.5f}; "
                f"worst-case margin {r.worst_margin_deg:.3f} deg with band, divergence, "
                f"alignment and a {tol:.0f} arcsec angle tolerance)")
        aoi_eff = math.radians(r.aoi_deg - (r.nominal_margin_deg - r.worst_margin_deg))
        if d.coat_reflecting_faces is None and d.type is FoldType.PENTA:
            roles[r.face] = FaceRole.MIRROR  # the usual penta: both reflectors coated, no news
            continue
        if d.coat_reflecting_faces is False:
            need = (f"TIR there needs n above about {1.0 / math.sin(aoi_eff):.4f}"
                    if math.sin(aoi_eff) > 1e-3 else "no index keeps TIR over that input spread")
            raise DesignCheckError(
                "design.coat_reflecting_faces", lost,
                reachable=need + "; set coat_reflecting_faces to true (or leave it empty) for a "
                "mirror coating, or choose a material of higher index")
        roles[r.face] = FaceRole.MIRROR
        warnings.append(lost + "; the face gets a mirror coating")
    return roles, warnings


def _facts(spec: Spec, fold: FoldType, placed: list, budget: tuple[rf.Reflection, ...],
           draft: Draft) -> list[tuple[str, float, str]]:
    """Deviation, glass path, TIR margins and the type's own figures, design wavelength."""
    wl0 = spec.beam.wavelength_nm
    path = rf.chief_path(placed, wl0)
    lab = labels(len(draft.roles))
    facts = [("deviation", round(rf.deviation_deg(path), 9), "deg"),
             ("output direction from +z towards +x", round(rf.pointing_deg(path), 9), "deg"),
             ("path length in glass", round(rf.glass_path_mm(path), 4), "mm"),
             ("reflections", float(sum(h.event in ("tir", "mirror") for h in path.hits)), "")]
    facts += rf.reflection_facts(spec, placed, budget, draft)
    facts += _type_facts(spec, fold, placed, path)
    return facts


def _type_facts(spec: Spec, fold: FoldType, placed: list, path) -> list[tuple[str, float, str]]:
    wl0 = spec.beam.wavelength_nm
    if fold is FoldType.PENTA:
        tilted = rf.chief_path(placed, wl0, tilt_rad=math.radians(1.0))
        out = math.degrees(math.acos(max(-1.0, min(1.0, float(
            tilted.direction @ np.array([math.cos(math.radians(1.0)),
                                         math.sin(math.radians(1.0))]))))))
        return [("deviation change for a 1 deg input tilt",
                 round(out - rf.deviation_deg(path), 12), "deg")]
    if fold is FoldType.DOVE:
        facts = [("base angle", DOVE_BASE_ANGLE_DEG, "deg"),
                 ("image rotation per degree of prism roll", 2.0, "deg/deg")]
        for wl in dict.fromkeys(spec.beam.band_nm):
            p = rf.chief_path(placed, wl)
            facts.append((f"output offset from the input axis at {wl:g} nm",
                          round(float(p.points[-1][1]), 4), "mm"))
        return facts
    if fold is FoldType.RETRO:
        return [("return-beam displacement", round(abs(float(path.points[-1][1])), 4), "mm")]
    return []
