"""make_parts: numbering, titles, faces, edges, datums, functional angles, ray path, notes."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from prismfab.design import classes as C
from prismfab.design.parts import apex_flats, make_parts, part_title
from prismfab.materials import get
from prismfab.model import CoatingType, Face, FaceRole, Performance, System
from prismfab.spec.types import Fabrication, Grade, ImperfectionNotation, Project, SheetSpec
from tests.tolerance_systems import aim, beam, brewster, brewster_pair, right_angle, spec_for

N = float(get("517642").n(780.0))
EMPTY = Performance(results=())


def _parts(system: System, **spec_changes):  # type: ignore[no-untyped-def]
    return make_parts(spec_for(system, **spec_changes), system, EMPTY)


def test_numbers_titles_and_quantity():
    """Part numbers run <prefix>-01..; titles are generated (≤ 25 chars) or taken from the spec."""
    system = brewster_pair(N)
    parts = _parts(system)
    assert [p.number for p in parts] == ["TB-7-01", "TB-7-02"]
    assert [p.title for p in parts] == ["Anamorphic prism 1 of 2", "Anamorphic prism 2 of 2"]
    assert all(len(p.title) <= 25 for p in parts)
    spec = spec_for(system, project=Project(title="x", drawing_prefix="Q", quantity=7,
                                            part_titles=("Expander A", "A very long title that overflows")))
    assert part_title(spec, system, 0) == "Expander A"
    assert len(part_title(spec, system, 1)) == 25
    assert make_parts(spec, system, EMPTY)[0].quantity == 7


def test_brewster_prism_faces_datums_and_angles():
    """Ground base is datum B; apex and 90° exit angle are functional; Brewster face uncoated."""
    part = _parts(brewster(N))[0]
    assert part.datums == (("A", "lower end face"), ("B", "face A (reference ground face)"))
    assert part.functional_angles == (0, 2)
    a, b, c = part.faces
    assert (a.polished, b.polished, c.polished) == (False, True, True)
    assert b.coating_text == "uncoated: Brewster"
    assert c.coating.type is CoatingType.ANTIREFLECTION
    assert "775-785 nm" in c.coating_text and "in glass" in c.coating_text
    # entry AOI is Brewster's angle of the glass at 780 nm (tan θB = n)
    assert b.aoi_deg[0] == np.float64(b.aoi_deg[0])
    assert abs(b.aoi_deg[0] - math.degrees(math.atan(N))) < 1e-9
    assert part.polarization_note.startswith("p:")
    assert part.material_code == "517642" and abs(part.nd - 1.5168) < 1e-4
    assert part.tolerances.angle_arcsec == C.GRADES["precision"].angle_arcsec
    assert any("Brewster angle" in n for n in part.notes)


def test_tir_face_and_all_optical_datum():
    """A right-angle fold: hypotenuse uncoated (internal reflection), datum B an optical face."""
    part = _parts(right_angle(N))[0]
    assert part.faces[1].coating_text == "uncoated: internal reflection"
    assert part.datums[1][1].startswith("face B (optical face")
    assert len(part.functional_angles) == 2  # the third angle is auxiliary


def test_ray_path_crosses_the_part_with_lead_in_and_out():
    """The part-frame ray path enters through the entry face and leaves through the exit face."""
    part = _parts(brewster(N))[0]
    path = np.array(part.ray_path_mm)
    verts = np.array(part.prism.vertices_mm)
    (x1, y1), (x2, y2) = verts[1], verts[2]
    entry = path[1]
    # on the hypotenuse (face B, vertex 1 -> 2)
    assert abs((x2 - x1) * (entry[1] - y1) - (y2 - y1) * (entry[0] - x1)) < 1e-4  # 6-decimal rounding
    assert abs(path[-2][0]) < 1e-9  # exit point on face C (X = 0)
    assert np.linalg.norm(path[0] - path[1]) >= 3.0 and np.linalg.norm(path[-1] - path[-2]) >= 3.0


def test_imperfection_notation_and_decimal_comma():
    """MIL-PRF-13830B gives scratch-dig; ISO 10110-7 with a decimal comma on request."""
    system = brewster(N)
    mil = _parts(system, fabrication=Fabrication(imperfection_notation=ImperfectionNotation.MIL_PRF_13830B))
    assert mil[0].faces[2].surface_imperfections == "40-20"
    comma = _parts(system, sheet=SheetSpec(decimal_comma=True))
    assert comma[0].faces[2].surface_form == "3/ 1(0,5); λ = 632,8 nm"
    assert comma[0].faces[2].surface_imperfections.startswith("5/ ")
    high = _parts(system, fabrication=Fabrication(grade=Grade.HIGH_PRECISION))
    assert high[0].tolerances.angle_arcsec == 10.0
    assert high[0].material_indications[0] == "0/2"


def test_edges_near_the_clear_aperture_stay_sharp():
    """A clear aperture reaching to within the bevel of an edge leaves that edge sharp."""
    system = brewster(N)
    prism = system.prisms[0]
    length_c = prism.face_length_mm(2)
    cas = (("P1", "B", 2.0, 4.0, 7.0, 5.0), ("P1", "C", 4.0, 4.0, length_c - 2.05, 5.0))
    part = make_parts(spec_for(system), replace(system, clear_apertures=cas), EMPTY)[0]
    assert ("C", "A") in part.sharp_edges  # face C ends at vertex 0, 0.05 mm from its aperture
    assert ("C", "A") not in part.bevelled_edges
    assert ("B", "BOTTOM") in part.bevelled_edges
    assert any(n.startswith("Edge C/A sharp") and "chips ≤" in n for n in part.notes)


def test_acute_apex_flat_edges_are_sharp():
    """The edges of a flat on an acute apex stay sharp; the flat is auxiliary, not datum B."""
    s = 20.0
    verts = ((0.0, 0.0), (s, 0.0), (s / 2 + 0.5, s * math.sqrt(3) / 2 - 0.866),
             (s / 2 - 0.5, s * math.sqrt(3) / 2 - 0.866))
    faces = (Face("A", FaceRole.GROUND), Face("B", FaceRole.EXIT), Face("C", FaceRole.GROUND, note="apex flat"),
             Face("D", FaceRole.ENTRY))
    prism = aim(verts, faces, n=N, entry_face=3, along=0.5, internal_dir=(1.0, 0.0))
    system = System("dispersing", (prism,), beam())
    part = make_parts(spec_for(system), system, EMPTY)[0]
    assert apex_flats(prism) == (2,)
    assert ("B", "C") in part.sharp_edges and ("C", "D") in part.sharp_edges
    assert part.datums[1][1].startswith("face A")
    assert any("across C" in n for n in part.notes)  # the apex angle spans the flat
