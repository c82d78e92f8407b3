"""Cross-field rules and material look-ups: checked plain values -> frozen ``Spec``.

``prismfab.spec.load`` has already checked every single value against the field table (type,
bounds, allowed words). This module knows the rules that involve several fields (band around
the wavelength, one of three dispersing targets, a convex counter-clockwise custom section,
coating reflectances that fit the coating type, ...) and resolves every material name in the
catalogue, checking each beam wavelength against the material's valid range. Every error names
the dotted field path and its YAML line. No YAML here: input is the walker's plain dicts.
"""

from __future__ import annotations

import dataclasses
import datetime
import math
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from prismfab.errors import MaterialError, SpecError
from prismfab.spec import types as t
from prismfab.spec.fields import COATING_KEYS

__all__ = ["MAGNIFICATION_RANGE", "UNIT_MAGNIFICATION_TOL", "build_spec", "prism_count"]

MAGNIFICATION_RANGE = (0.1, 10.0)
"""Sane in-plane magnification of anamorphic designs (reachability is the solver's job)."""
UNIT_MAGNIFICATION_TOL = 1e-3
"""|M - 1| below this is no anamorphic design (unless a tuning range asks for M = 1)."""
_ANGLE_SUM_TOL_DEG = 1e-6
_TURN_TOL_RAD = 1e-6
_MIRROR_DEFAULT_MIN_PCT = 99.0  # common practice: dielectric or protected-metal mirror coating

Data = Mapping[str, Any]


class _Where:
    """Finds the YAML line of a dotted path (or of its nearest parent) and raises located errors."""

    def __init__(self, lines: tuple[tuple[str, int, int], ...], source: str) -> None:
        self.table = {p: (ln, col) for p, ln, col in lines}
        self.source = source or None

    def of(self, path: str) -> tuple[int | None, int | None]:
        while path:
            if path in self.table:
                return self.table[path]
            path = path.rpartition(".")[0]
        return None, None

    def error(self, path: str, problem: str, fix: str | None = None, *,
              cls: type[SpecError] = SpecError) -> SpecError:
        line, col = self.of(path)
        return cls(path, problem, line=line, column=col, fix=fix, source=self.source)


def build_spec(data: Data, *, lines: tuple[tuple[str, int, int], ...], source: str,
               base_dir: Path) -> t.Spec:
    """Apply the cross-field rules and build the frozen spec.

    Args:
        data: the walker's output (plain dicts, tuples, enums) for the whole file.
        lines: (dotted path, line, column) of every field read.
        source: spec file name for messages ("" for text).
        base_dir: folder ``materials_file`` is relative to.

    Raises:
        SpecError: a cross-field rule is broken.
        MaterialError: a material is unknown, or a beam wavelength is outside its range.
    """
    where = _Where(lines, source)
    beam = _beam(data["beam"], where)
    design_data = data["design"]
    family = t.Family(design_data["family"])
    design = _DESIGNS[family](design_data, where)
    materials_file = _materials_file(data.get("materials_file"), base_dir, where)
    design = _resolve_materials(design, beam, materials_file, where)
    project = _project(data["project"], family, design, where)
    return t.Spec(
        project=project,
        beam=beam,
        design=design,
        requirements=t.Requirements(**data.get("requirements", {})),
        fabrication=_fabrication(data.get("fabrication", {}), where),
        sheet=t.SheetSpec(**data.get("sheet", {})),
        family=family,
        format=int(data["format"]),
        materials_file=materials_file,
        source=source,
        lines=lines,
        lock=_lock(data.get("lock"), family, design, where),
    )


def _lock(d: Data | None, family: t.Family, design: t.Design, where: _Where) -> t.Lock | None:
    """The ``lock`` section (written by ``prismfab solve --write-lock``), checked against the
    family and prism count; the solver checks it against the inputs and the solved geometry."""
    if d is None:
        return None
    if d["family"] != family.value:
        raise where.error("lock.family", f"('{d['family']}') does not match design.family "
                          f"('{family.value}')", "delete the lock section and write it again "
                          "with 'prismfab solve --write-lock'")
    count = prism_count(family, design)
    if family in (t.Family.ANAMORPHIC_SINGLE, t.Family.ANAMORPHIC_PAIR, t.Family.BREWSTER,
                  t.Family.DISPERSING) and len(d["prisms"]) != count:
        raise where.error("lock.prisms", f"holds {len(d['prisms'])} prisms but the design makes "
                          f"{count}", "delete the lock section and write it again")
    prisms = tuple(t.LockedPrism(**{**p, "vertices_mm": tuple(tuple(v) for v in p["vertices_mm"]),
                                    "rotation": tuple(tuple(r) for r in p["rotation"])})
                   for p in d["prisms"])
    return t.Lock(prismfab_version=d["prismfab_version"], family=d["family"],
                  inputs=tuple(sorted(d["inputs"].items())), prisms=prisms)


def prism_count(family: t.Family, design: t.Design) -> int:
    """How many prisms a design makes (for per-part titles and drawing numbers)."""
    if family is t.Family.ANAMORPHIC_PAIR:
        return 2
    return 2 if getattr(design, "pair", False) else 1


# ----------------------------------------------------------------------------- sections


def _project(d: Data, family: t.Family, design: t.Design, where: _Where) -> t.Project:
    if d.get("date"):
        try:
            datetime.date.fromisoformat(d["date"])
        except ValueError:
            raise where.error("project.date", f"('{d['date']}') is not a calendar date",
                              "write the date as YYYY-MM-DD, e.g. 2026-12-01") from None
    titles = tuple(d.get("part_titles", ()))
    count = prism_count(family, design)
    if len(titles) > count:
        raise where.error("project.part_titles", f"has {len(titles)} titles but the "
                          f"{family.value} design makes {count} prism{'s' if count > 1 else ''}",
                          f"give at most {count} title{'s' if count > 1 else ''}")
    return t.Project(**{**d, "part_titles": titles})


def _beam(d: Data, where: _Where) -> t.BeamSpec:
    wl = float(d["wavelength_nm"])
    lo, hi = d.get("band_nm", (wl, wl))
    if lo > hi:
        raise where.error("beam.band_nm", f"is reversed ([{lo:g}, {hi:g}])",
                          f"write it as [low, high]: [{hi:g}, {lo:g}]")
    if not lo <= wl <= hi:
        raise where.error("beam.wavelength_nm", f"({wl:g} nm) lies outside beam.band_nm "
                          f"[{lo:g}, {hi:g}]",
                          "choose a band that contains the design wavelength")
    div = d.get("divergence_mrad", {})
    optional = {"polarization": d["polarization"]} if "polarization" in d else {}
    return t.BeamSpec(
        wavelength_nm=wl,
        band_nm=(float(lo), float(hi)),
        diameter_in_plane_mm=d["diameter_mm"]["in_plane"],
        diameter_out_of_plane_mm=d["diameter_mm"]["out_of_plane"],
        **optional,
        divergence_in_plane_mrad=div.get("in_plane", 0.0),
        divergence_out_of_plane_mrad=div.get("out_of_plane", 0.0),
        alignment=t.Alignment(**d.get("alignment", {})),
    )


def _fabrication(d: Data, where: _Where) -> t.Fabrication:
    fields = {k: v for k, v in d.items() if k not in ("coatings", "surface_imperfections")}
    if "surface_imperfections" in d:
        fields["imperfection_notation"] = d["surface_imperfections"]
    fab = t.Fabrication(**fields)
    if fab.min_face_mm >= fab.max_face_mm:
        raise where.error("fabrication.min_face_mm", f"({fab.min_face_mm:g} mm) must be smaller "
                          f"than fabrication.max_face_mm ({fab.max_face_mm:g} mm)",
                          "lower min_face_mm or raise max_face_mm")
    if "coatings" in d:
        coatings = {k: _coating(v, f"fabrication.coatings.{k}", where)
                    for k, v in d["coatings"].items()}
        coatings.setdefault("default", t.CoatingSpec())
        ordered = tuple((k, coatings[k]) for k in COATING_KEYS if k in coatings)
        fab = t.Fabrication(**{**fields, "coatings": ordered})
    return fab


def _coating(d: Data, path: str, where: _Where) -> t.CoatingSpec:
    kind = d.get("type", "antireflection")
    r_max, r_min = d.get("reflectance_max_pct"), d.get("reflectance_min_pct")
    if kind == "antireflection":
        if r_min is not None:
            raise where.error(f"{path}.reflectance_min_pct", "does not apply to an "
                              "antireflection coating", "use reflectance_max_pct, or type: mirror")
        return t.CoatingSpec("antireflection", 0.5 if r_max is None else r_max, None)
    if kind == "mirror":
        if r_max is not None:
            raise where.error(f"{path}.reflectance_max_pct", "does not apply to a mirror coating",
                              "use reflectance_min_pct, or type: antireflection")
        return t.CoatingSpec("mirror", None, _MIRROR_DEFAULT_MIN_PCT if r_min is None else r_min)
    bad = next((k for k in ("reflectance_max_pct", "reflectance_min_pct") if d.get(k) is not None),
               None)
    if bad:
        raise where.error(f"{path}.{bad}", "does not apply to type: none",
                          "remove it, or choose type: antireflection or mirror")
    return t.CoatingSpec("none", None, None)


def _materials_file(value: str | None, base_dir: Path, where: _Where) -> str:
    if not value:
        return ""
    path = (base_dir / Path(value).expanduser()).resolve()
    if not path.is_file():
        raise where.error("materials_file", f"'{value}' does not exist (looked for {path})",
                          "give the catalogue path relative to the spec file")
    return str(path)


# ----------------------------------------------------------------------------- materials


def _material_paths(design: t.Design) -> list[tuple[str, str]]:
    if isinstance(design, t.AnamorphicPairDesign):
        return [(f"design.materials.{i}", m) for i, m in enumerate(design.materials)]
    return [("design.material", design.material)]


def _resolve_materials(design: t.Design, beam: t.BeamSpec, catalogue_file: str, where: _Where
                       ) -> t.Design:
    from prismfab import materials

    wavelengths = (("beam.wavelength_nm", beam.wavelength_nm),
                   ("beam.band_nm.0", beam.band_nm[0]), ("beam.band_nm.1", beam.band_nm[1]))
    keys = []
    for path, name in _material_paths(design):
        try:
            material = materials.get(name, catalogue_file=catalogue_file or None)
        except MaterialError as err:
            raise where.error(path, err.problem, err.fix, cls=MaterialError) from None
        for wl_path, wl in wavelengths:
            try:
                material.check_range(wl, path=wl_path)
            except MaterialError as err:
                raise where.error(wl_path, f"{err.problem} (material of {path})", err.fix,
                                  cls=MaterialError) from None
        keys.append(material.key)
    if isinstance(design, t.AnamorphicPairDesign):
        return _replace(design, materials=tuple(keys))
    return _replace(design, material=keys[0])


def _replace(obj: Any, **changes: Any) -> Any:
    return dataclasses.replace(obj, **changes)


# ----------------------------------------------------------------------------- families


def _check_magnification(m: float, path: str, where: _Where, *, tuning: bool = False) -> None:
    lo, hi = MAGNIFICATION_RANGE
    if not lo <= m <= hi:
        raise where.error(path, f"({m:g}) is outside the sane range {lo:g} to {hi:g}",
                          "use an in-plane magnification between 0.1 and 10 (< 1 compresses)")
    if abs(m - 1.0) < UNIT_MAGNIFICATION_TOL and not tuning:
        raise where.error(path, f"({m:g}) is 1: such a prism changes nothing",
                          "give the magnification the beam needs, e.g. 3.0 to circularise a "
                          "1:3 elliptical beam, or use family: wedge for a plain deviation")


def _pair(d: Data, where: _Where) -> t.AnamorphicPairDesign:
    fields = {k: v for k, v in d.items() if k not in ("family", "material")}
    if "material" in d and "materials" in d:
        raise where.error("design.material", "conflicts with design.materials",
                          "give either 'material' (both prisms alike) or 'materials' (a list)")
    if "material" in d:
        fields["materials"] = (d["material"],)
    if "materials" not in fields:
        raise where.error("design.materials", "is missing (one or two materials, in beam order)",
                          "add 'materials: [\"517642\"]' under 'design'")
    tuning = fields.get("tuning_range")
    _check_magnification(d["magnification"], "design.magnification", where,
                         tuning=tuning is not None)
    if tuning is not None:
        lo, hi = tuning
        if not lo < hi:
            raise where.error("design.tuning_range", f"[{lo:g}, {hi:g}] is not [low, high]",
                              "write the smaller magnification first")
        for i, m in enumerate(tuning):
            _check_magnification(m, f"design.tuning_range.{i}", where, tuning=True)
        if not lo <= d["magnification"] <= hi:
            raise where.error("design.magnification", f"({d['magnification']:g}) lies outside "
                              f"design.tuning_range [{lo:g}, {hi:g}]",
                              "choose a design magnification inside the tuning range")
    return t.AnamorphicPairDesign(**fields)


def _single(d: Data, where: _Where) -> t.AnamorphicSingleDesign:
    _check_magnification(d["magnification"], "design.magnification", where)
    return t.AnamorphicSingleDesign(**_without_family(d))


def _dispersing(d: Data, where: _Where) -> t.DispersingDesign:
    targets = [k for k in ("apex_deg", "dispersion_mrad_per_nm", "resolving_power")
               if d.get(k) is not None]
    if not targets:
        raise where.error("design", "needs one target: apex_deg, dispersion_mrad_per_nm or "
                          "resolving_power", "add exactly one of them, e.g. 'apex_deg: 60'")
    if len(targets) > 1:
        raise where.error(f"design.{targets[1]}", f"conflicts with design.{targets[0]}: a "
                          "dispersing prism takes exactly one target",
                          f"keep either '{targets[0]}' or '{targets[1]}'")
    return t.DispersingDesign(**_without_family(d))


def _custom(d: Data, where: _Where) -> t.CustomDesign:
    has_vertices, has_angles = bool(d.get("vertices_mm")), bool(d.get("angles_deg"))
    if has_vertices == has_angles:
        raise where.error("design.vertices_mm" if has_vertices else "design",
                          "needs the section either as vertices_mm or as angles_deg with "
                          "first_side_mm, not " + ("both" if has_vertices else "neither"),
                          "give one of the two")
    if has_angles:
        sides = _check_angles(d, where)
    else:
        sides = len(d["vertices_mm"])
        _check_polygon(d["vertices_mm"], where)
    roles = d["roles"]
    if len(roles) != sides:
        raise where.error("design.roles", f"has {len(roles)} entries but the section has "
                          f"{sides} sides", f"give exactly {sides} roles, one per side "
                          "(side i runs from vertex i to vertex i+1)")
    if not any(r in ("entry", "entry-exit") for r in roles):
        raise where.error("design.roles", "has no face where the beam enters",
                          "mark one face 'entry' (or 'entry-exit')")
    if not any(r in ("exit", "entry-exit") for r in roles):
        raise where.error("design.roles", "has no face where the beam leaves",
                          "mark one face 'exit' (or 'entry-exit')")
    return t.CustomDesign(**_without_family(d))


def _check_angles(d: Data, where: _Where) -> int:
    angles = d["angles_deg"]
    if len(angles) != 3:
        raise where.error("design.angles_deg", f"has {len(angles)} angles; angles and one side "
                          "fix only a triangle", "give vertices_mm for sections of four or more "
                          "sides")
    if abs(sum(angles) - 180.0) > _ANGLE_SUM_TOL_DEG:
        raise where.error("design.angles_deg", f"sum to {sum(angles):g} deg, not 180 deg",
                          "give the three interior angles of the triangle")
    if d.get("first_side_mm") is None:
        raise where.error("design.first_side_mm", "is missing (length of side 0 in mm)",
                          "add 'first_side_mm: 20' under 'design'")
    return 3


def _check_polygon(vertices: tuple[tuple[float, float], ...], where: _Where) -> None:
    n = len(vertices)
    turning = 0.0
    for i in range(n):
        (x0, y0), (x1, y1), (x2, y2) = vertices[i - 1], vertices[i], vertices[(i + 1) % n]
        ax, ay, bx, by = x1 - x0, y1 - y0, x2 - x1, y2 - y1
        if math.hypot(bx, by) < 1e-9:
            raise where.error(f"design.vertices_mm.{(i + 1) % n}", f"repeats vertex {i}",
                              "remove the repeated vertex")
        cross, dot = ax * by - ay * bx, ax * bx + ay * by
        if abs(cross) <= 1e-9 * math.hypot(ax, ay) * math.hypot(bx, by):
            raise where.error(f"design.vertices_mm.{i}", f"lies on the line through its "
                              "neighbours", f"remove vertex {i}")
        turning += math.atan2(cross, dot)
    signs = {_sign(vertices, i) for i in range(n)}
    if signs == {-1}:
        raise where.error("design.vertices_mm", "runs clockwise",
                          "list the vertices counter-clockwise (reverse their order)")
    if len(signs) > 1:
        bad = next(i for i in range(n) if _sign(vertices, i) < 0)
        raise where.error(f"design.vertices_mm.{bad}", f"makes the section non-convex "
                          f"(re-entrant corner at vertex {bad})",
                          "prisms are convex: move or remove that vertex")
    if abs(turning - 2 * math.pi) > _TURN_TOL_RAD:
        raise where.error("design.vertices_mm", "crosses itself",
                          "list the vertices in order around the section, counter-clockwise")


def _sign(vertices: tuple[tuple[float, float], ...], i: int) -> int:
    n = len(vertices)
    (x0, y0), (x1, y1), (x2, y2) = vertices[i - 1], vertices[i], vertices[(i + 1) % n]
    return 1 if (x1 - x0) * (y2 - y1) - (y1 - y0) * (x2 - x1) > 0 else -1


def _without_family(d: Data) -> dict[str, Any]:
    return {k: v for k, v in d.items() if k != "family"}


def _plain(cls: type) -> Callable[[Data, _Where], Any]:
    return lambda d, where: cls(**_without_family(d))


_DESIGNS: dict[t.Family, Callable[[Data, _Where], Any]] = {
    t.Family.ANAMORPHIC_SINGLE: _single,
    t.Family.ANAMORPHIC_PAIR: _pair,
    t.Family.BREWSTER: _plain(t.BrewsterDesign),
    t.Family.DISPERSING: _dispersing,
    t.Family.FOLD: _plain(t.FoldDesign),
    t.Family.WEDGE: _plain(t.WedgeDesign),
    t.Family.CUSTOM: _custom,
}
