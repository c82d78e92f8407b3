"""The last sizing step of every family: trace the sized drafts and assemble the ``System``.

A family hands its sized sections over as ``Draft`` objects; ``finish_system`` traces every
condition through them, checks the chief rays and clear apertures, chooses the coatings, and
returns the ``System`` with its clear apertures, AOI ranges, facts and warnings.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np

from prismfab.design._assembly import face_coating, labels, place_section
from prismfab.design._face_rules import height_mm
from prismfab.design._footprint import (
    Placed,
    beam_groups,
    clear_aperture,
    footprints,
    trace_groups,
)
from prismfab.design._plane import fresnel_r
from prismfab.errors import DesignCheckError
from prismfab.model import Beam, CoatingType, Face, FaceRole, System
from prismfab.spec.types import Spec

__all__ = ["Draft", "finish_system", "start_z_mm", "wavelengths_nm"]


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
                  path: str = "design", pivot_z_mm: float | None = None) -> System:
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
