"""``prismfab check SPEC``: validate a spec file and summarise it in one paragraph.

Exit 0 when the spec is valid; a bad field raises ``SpecError`` (exit 2) whose message names
the field, its YAML line and the fix. Nothing is solved and nothing is written.
"""

from __future__ import annotations

import argparse
import sys
import textwrap

from prismfab.spec import types as t

HELP = "validate a spec file (every field, material and wavelength) and summarise it"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments."""
    parser.add_argument("spec", metavar="SPEC", help="the YAML design spec")


def run(args: argparse.Namespace) -> int:
    """Validate and summarise; returns the exit code."""
    from prismfab.spec.load import load_spec

    spec = load_spec(args.spec)
    lines = textwrap.wrap(summary(spec), width=100, break_on_hyphens=False)
    sys.stdout.write("\n".join(lines) + "\n")
    return 0


def summary(spec: t.Spec) -> str:
    """One paragraph: family, materials, wavelengths, targets and requirements of a valid spec."""
    from prismfab import materials
    from prismfab.spec.validate import prism_count

    p, b, r = spec.project, spec.beam, spec.requirements
    count = prism_count(spec.family, spec.design)
    names = [materials.get(key, catalogue_file=spec.materials_file or None).name
             for key in _material_keys(spec.design)]
    band = (f"{_g(b.wavelength_nm)} nm" if b.band_nm[0] == b.band_nm[1] else
            f"{_g(b.wavelength_nm)} nm (band {_g(b.band_nm[0])}-{_g(b.band_nm[1])} nm)")
    return (
        f"{spec.source or 'spec'}: valid (format {spec.format}). '{p.title}', drawings "
        f"{p.drawing_prefix}-01{'' if count == 1 else f' to {p.drawing_prefix}-{count:02d}'}, "
        f"quantity {p.quantity}: {spec.family.value}, {count} prism{'s' if count > 1 else ''} "
        f"in {' and '.join(dict.fromkeys(names))}; beam {band}, "
        f"{b.polarization.value}-polarised, 1/e^2 diameter {_g(b.diameter_in_plane_mm)} mm in "
        f"plane x {_g(b.diameter_out_of_plane_mm)} mm out of plane; target: "
        f"{_targets(spec.design)}. Requirements: pointing {_g(r.pointing_mrad)} mrad, "
        f"magnification {_g(r.magnification_pct)} %, offset {_g(r.offset_mm)} mm, wavefront "
        f"{_g(r.wavefront_waves_pv)} waves PV at {_g(r.wavefront_wavelength_nm)} nm, yield "
        f"{_g(100 * r.yield_target)} %; {spec.fabrication.grade.value} grade."
    )


def _material_keys(design: t.Design) -> tuple[str, ...]:
    if isinstance(design, t.AnamorphicPairDesign):
        return design.materials
    return (design.material,)


def _g(value: float) -> str:
    return f"{value:g}"


def _targets(d: t.Design) -> str:
    if isinstance(d, t.AnamorphicPairDesign):
        words = [f"in-plane magnification {_g(d.magnification)}"]
        if d.tuning_range:
            words.append(f"tunable {_g(d.tuning_range[0])} to {_g(d.tuning_range[1])}")
        words.append("achromatic" if d.achromatic else "not achromatic")
        if d.normal_exit:
            words.append(f"normal exit tilted {_g(d.exit_tilt_deg)} deg")
        words.append("compact spacing" if d.separation_mm is None else
                     f"{_g(d.separation_mm)} mm between prisms")
        return ", ".join(words)
    if isinstance(d, t.AnamorphicSingleDesign):
        aoi = "entry angle solved" if d.entry_aoi_deg is None else \
            f"entry at {_g(d.entry_aoi_deg)} deg"
        return f"in-plane magnification {_g(d.magnification)}, output {d.output.value}, {aoi}"
    if isinstance(d, t.BrewsterDesign):
        pair = f", pair {_g(d.separation_mm)} mm apex to apex" if d.pair else ""
        return f"Brewster cut at minimum deviation{pair}"
    if isinstance(d, t.DispersingDesign):
        aim = (f"apex {_g(d.apex_deg)} deg" if d.apex_deg is not None else
               f"dispersion {_g(d.dispersion_mrad_per_nm)} mrad/nm"
               if d.dispersion_mrad_per_nm is not None else
               f"resolving power {_g(d.resolving_power or 0.0)}")
        return aim + (", Littrow" if d.littrow else ", minimum deviation")
    if isinstance(d, t.FoldDesign):
        coat = {None: "reflecting faces coated only where TIR fails", True:
                "reflecting faces coated", False: "reflecting faces uncoated"}
        return f"{d.type.value} fold, {coat[d.coat_reflecting_faces]}"
    if isinstance(d, t.WedgeDesign):
        pair = ", rotating pair" if d.pair else ""
        return f"deviation {_g(d.deviation_deg)} deg at {_g(d.incidence_deg)} deg incidence{pair}"
    sides = len(d.roles)
    return f"{sides}-sided section, faces {', '.join(d.roles)}"
