"""``prismfab solve SPEC [--json] [--write-lock FILE]``: solve, verify and tolerance a spec.

Prints a readable table (per prism: material, index per wavelength, interior angles, face
lengths, height, clear apertures, role and incidence per face, TIR margins, tolerances; system:
magnification, pointing, offset, transmission per wavelength, ghosts and warnings). Nothing
heavy is imported (no CAD, drawing or PDF library).

``--json`` prints one JSON object with these stable keys (sorted, numbers as plain floats)::

    prisms[]:  name, material, n {"<nm>": n}, interior_angles_deg[], height_mm,
               faces[]: label, role, length_mm, clear_aperture_mm [along face, along height]
                        or null, aoi_deg (nominal chief-ray incidence) or null, coating, note
               tolerances: angle_arcsec, pyramidal_arcsec, length_mm, yield (null if not derived)
    system:    family, magnification_in_plane, magnification_out_of_plane,
               wavelengths_nm[] (design first, then band edges), pointing_mrad[],
               lateral_offset_mm[], transmission[] (per wavelength, same order),
               facts[]: [name, value, unit], tuning[]: rows of numbers,
               tuning_columns[]: what each tuning column holds (with its unit),
               warnings[] (solver, measurement and the checks listed below)

``--write-lock FILE`` writes the spec back with a ``lock:`` section (``prismfab.design.lock``):
the prismfab version, digests of the inputs, and per prism the exact section vertices, height
and pose. Loading and solving that file gives exactly the same prisms; a lock whose inputs no
longer match the spec is refused, naming the changed sections. An existing ``lock:`` section is
replaced.

Warnings added here: a TIR margin under 2 deg, an antireflection face above 60 deg incidence,
and a back reflection within the ghost limit (2 mrad) of the source (laser safety: IEC 60825-1,
ANSI Z136.1; follow local regulations and the laser safety officer).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import sys
import tempfile
from pathlib import Path

from prismfab.errors import OutputError

HELP = "solve a spec, verify it by ray trace and print the prisms, faces, tolerances and performance"
TIR_MARGIN_MIN_DEG = 2.0
AR_AOI_MAX_DEG = 60.0


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments."""
    parser.add_argument("spec", metavar="SPEC", help="the YAML design spec")
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    parser.add_argument("--write-lock", metavar="FILE", help="write the spec with the solved geometry recorded")


def run(args: argparse.Namespace) -> int:
    """Solve and print; returns the exit code."""
    from prismfab.spec.load import load_spec

    spec = load_spec(args.spec)
    sol = solution(spec)
    data = to_json(sol)
    if args.write_lock:
        write_lock(spec, sol, Path(args.write_lock))
    if args.json:
        sys.stdout.write(json.dumps(data, sort_keys=True, indent=2) + "\n")
    else:
        sys.stdout.write(table(data))
    return 0


def solution(spec):  # type: ignore[no-untyped-def]
    """The whole model of the spec: solved, traced, sized into parts and toleranced."""
    from prismfab import pipeline

    return pipeline.run(spec)


def _r(x: float, nd: int = 6) -> float:
    return float(round(float(x), nd))


def to_json(sol) -> dict:  # type: ignore[no-untyped-def]
    """The stable JSON object of a solution (see the module docstring)."""
    system, perf = sol.system, sol.performance
    wls = list(system.beam.wavelengths_nm)
    ca = {(c[0], c[1]): c for c in system.clear_apertures}
    aoi = {(a[0], a[1]): a for a in system.aoi_ranges_deg}
    parts = {p.prism.name: p for p in sol.parts}
    from prismfab import materials

    prisms = []
    for pr in system.prisms:
        mat = materials.get(pr.material, catalogue_file=sol.spec.materials_file or None)
        faces = []
        for i, f in enumerate(pr.faces):
            c, a = ca.get((pr.name, f.label)), aoi.get((pr.name, f.label))
            faces.append({"label": f.label, "role": f.role.value,
                          "length_mm": _r(pr.face_length_mm(i), 4),
                          "clear_aperture_mm": [_r(c[2], 4), _r(c[3], 4)] if c else None,
                          "aoi_deg": _r(a[2], 4) if a else None,
                          "coating": f.coating.type.value, "note": f.note})
        part = parts.get(pr.name)
        tol = None
        if part is not None:
            t = part.tolerances
            tol = {"angle_arcsec": _r(t.angle_arcsec, 2), "pyramidal_arcsec": _r(t.pyramidal_arcsec, 2),
                   "length_mm": _r(t.length_mm, 4), "yield": _r(t.yield_fraction, 4)}
        prisms.append({
            "name": pr.name, "material": mat.name,
            "n": {f"{w:g}": _r(mat.n(w), 7) for w in wls},
            "interior_angles_deg": [_r(math.degrees(pr.interior_angle_rad(i)), 6)
                                    for i in range(len(pr.vertices_mm))],
            "height_mm": _r(pr.height_mm, 4), "faces": faces, "tolerances": tol,
        })
    res = {r.wavelength_nm: r for r in perf.results}
    ordered = [res[w] for w in wls if w in res]
    sysd = {
        "family": system.family,
        "magnification_in_plane": _r(perf.design.magnification_in_plane, 9),
        "magnification_out_of_plane": _r(perf.design.magnification_out_of_plane, 9),
        "wavelengths_nm": [_r(r.wavelength_nm, 6) for r in ordered],
        "pointing_mrad": [_r(r.pointing_mrad, 6) for r in ordered],
        "lateral_offset_mm": [_r(r.lateral_offset_mm, 6) for r in ordered],
        "transmission": [_r(r.transmission, 6) for r in ordered],
        "facts": [[n, _r(v, 6), u] for n, v, u in system.facts],
        "tuning": [[_r(x, 6) for x in row] for row in system.tuning],
        "tuning_columns": list(system.tuning_labels()) if system.tuning else [],
        "warnings": warnings(sol),
    }
    return {"prisms": prisms, "system": sysd}


def warnings(sol) -> list[str]:  # type: ignore[no-untyped-def]
    """Solver and measurement warnings plus the checks of the module docstring, de-duplicated."""
    out = list(sol.system.warnings) + list(sol.performance.warnings)
    faces = {(p.name, f.label): f for p in sol.system.prisms for f in p.faces}
    for r in sol.performance.results:
        for pr, lab, m in r.tir_margin_deg:
            if m < TIR_MARGIN_MIN_DEG:
                out.append(f"{pr} face {lab}: TIR margin {m:.2f} deg at {r.wavelength_nm:g} nm "
                           f"(under {TIR_MARGIN_MIN_DEG:g} deg)")
    for pr, lab, _nom, _lo, hi in sol.system.aoi_ranges_deg:
        f = faces[(pr, lab)]
        said = any(f"{pr} face {lab}: antireflection" in w for w in out)
        if f.coating.type.value == "antireflection" and f.role.transmits and hi > AR_AOI_MAX_DEG \
                and not said:
            out.append(f"{pr} face {lab}: antireflection coating at {hi:.1f} deg incidence "
                       f"(above {AR_AOI_MAX_DEG:g} deg)")
    for g in sol.performance.ghosts:
        said = any(g.where in w and "reflection" in w for w in out)
        if g.warning and not said:
            out.append(f"back reflection from {g.where} returns "
                       f"{g.angle_to_source_mrad:.2f} mrad from the source ({100 * g.power_fraction:.3g} % "
                       "of the power): tilt the face; laser safety per IEC 60825-1 / ANSI Z136.1")
    return list(dict.fromkeys(out))


def table(data: dict) -> str:
    """A plain-text report of the JSON object."""
    lines = []
    for p in data["prisms"]:
        n = ", ".join(f"{v:.6f} @ {k} nm" for k, v in p["n"].items())
        lines.append(f"{p['name']}  {p['material']}  n: {n}")
        lines.append("  interior angles (deg): " + ", ".join(f"{a:.4f}" for a in p["interior_angles_deg"])
                     + f"   height {p['height_mm']:.1f} mm")
        lines.append(f"  {'face':<5}{'role':<20}{'length mm':>10}{'CA mm':>16}{'AOI deg':>10}  coating / note")
        for f in p["faces"]:
            ca = f"{f['clear_aperture_mm'][0]:.2f} x {f['clear_aperture_mm'][1]:.2f}" if f["clear_aperture_mm"] else "-"
            aoi = f"{f['aoi_deg']:.3f}" if f["aoi_deg"] is not None else "-"
            lines.append(f"  {f['label']:<5}{f['role']:<20}{f['length_mm']:>10.3f}{ca:>16}{aoi:>10}  "
                         f"{f['coating']}{' / ' + f['note'] if f['note'] else ''}")
        t = p["tolerances"]
        if t:
            lines.append(f"  tolerances: angle +/-{t['angle_arcsec']:g}\"  pyramidal {t['pyramidal_arcsec']:g}\"  "
                         f"length +/-{t['length_mm']:g} mm  yield {100 * t['yield']:.1f} %")
        lines.append("")
    s = data["system"]
    lines.append(f"system ({s['family']}): magnification in plane {s['magnification_in_plane']:.6f}, "
                 f"out of plane {s['magnification_out_of_plane']:.6f}")
    lines.append(f"  {'wavelength nm':>14}{'pointing mrad':>15}{'offset mm':>12}{'transmission':>14}")
    for w, pt, off, tr in zip(s["wavelengths_nm"], s["pointing_mrad"], s["lateral_offset_mm"],
                              s["transmission"], strict=True):
        lines.append(f"  {w:>14g}{pt:>15.6f}{off:>12.4f}{tr:>14.4f}")
    for name, value, unit in s["facts"]:
        lines.append(f"  {name}: {value:g} {unit}".rstrip())
    if s["tuning"]:
        lines.append(f"  tuning ({', '.join(s['tuning_columns'])}): " + "; ".join(
            ", ".join(f"{x:g}" for x in row) for row in s["tuning"]))
    for w in s["warnings"]:
        lines.append(f"  warning: {w}")
    return "\n".join(lines) + "\n"


def write_lock(spec, sol, path: Path) -> None:  # type: ignore[no-untyped-def]
    """Write the spec text with its ``lock:`` section (replacing an old one), atomically."""
    from prismfab.design.lock import lock_yaml

    text = Path(spec.source).read_text(encoding="utf-8") if spec.source else ""
    body = _without_lock(text).rstrip("\n") + "\n\n" + lock_yaml(spec, sol.system)
    try:
        fd, tmp = tempfile.mkstemp(dir=path.parent or Path("."), prefix=".lock-")
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(body)
        os.replace(tmp, path)
    except OSError as err:
        raise OutputError(f"cannot write the lock file {path}: {err.strerror or err}") from err


def _without_lock(text: str) -> str:
    """The spec text without a top-level ``lock:`` block (and its indented lines)."""
    out, skipping = [], False
    for line in text.splitlines(keepends=True):
        top = line[:1] not in (" ", "\t", "\n", "\r", "#", "")
        if top:
            skipping = line.split(":", 1)[0].strip() == "lock"
        if not skipping:
            out.append(line)
    return "".join(out)
