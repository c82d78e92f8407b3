"""``prismfab materials [QUERY]``: list catalogue entries with nd, vd, valid range and source.

A query that names exactly one material (or matches one entry) also prints its formula,
coefficients, temperature, thermal data, aliases and notes. ``--wavelength-nm`` adds the index at
given wavelengths; ``--json`` prints the same facts as JSON (sorted keys, stable output).
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING

from prismfab.errors import MaterialError

if TYPE_CHECKING:
    from prismfab.materials import Material

HELP = "list the material catalogue (nd, vd, valid range, source), or the materials matching QUERY"

_COLUMNS = ("key", "name", "nd", "vd", "range nm", "source")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the command's arguments."""
    parser.add_argument("query", nargs="*", metavar="QUERY",
                        help="words to look for in names, codes, types and sources, or a material name")
    parser.add_argument("--materials-file", metavar="PATH", default=None,
                        help="a user catalogue file that extends or overrides the shipped one")
    parser.add_argument("--wavelength-nm", metavar="NM", type=_positive, action="append",
                        default=[], help="also show the index at this vacuum wavelength (repeatable)")
    parser.add_argument("--json", action="store_true", help="print JSON instead of a table")


def _positive(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a number of nanometres") from None
    if not value > 0:
        raise argparse.ArgumentTypeError(f"{text} nm: a wavelength must be positive")
    return value


def run(args: argparse.Namespace) -> int:
    """List the matching materials; returns the exit code."""
    from prismfab.materials import search
    from prismfab.materials.catalogue import load_catalogue

    query = " ".join(args.query)
    found = search(query, catalogue_file=args.materials_file)
    if not found:
        hint = load_catalogue(args.materials_file).suggest(query)
        sys.stderr.write(f"prismfab materials: no material matches '{query}'; {hint}.\n")
        return 2
    wavelengths = tuple(args.wavelength_nm)
    if args.json:
        rows = [_record(m, wavelengths) for m in found]
        sys.stdout.write(json.dumps(rows, indent=2, sort_keys=True, ensure_ascii=False) + "\n")
        return 0
    sys.stdout.write(_table(found, wavelengths))
    if len(found) == 1:
        sys.stdout.write("\n" + _details(found[0]))
    return 0


def _maybe(getter: Callable[[], float]) -> float | None:
    """A reference-line value, or None where the line is outside the material's range."""
    try:
        return getter()
    except MaterialError:
        return None


def _code(material: Material) -> str | None:
    try:
        return material.glass_code
    except MaterialError:
        return None


def _fmt(value: float | None, digits: int) -> str:
    return "-" if value is None else f"{value:.{digits}f}"


def _range_text(material: Material) -> str:
    low, high = material.range_nm
    return f"{low:g}-{high:g}"


def _index_at(material: Material, wavelength_nm: float) -> float | None:
    if not material.covers(wavelength_nm):
        return None
    return float(material.n(wavelength_nm))


def _table(materials: Sequence[Material], wavelengths: Sequence[float]) -> str:
    header = list(_COLUMNS) + [f"n({w:g} nm)" for w in wavelengths]
    rows = [header]
    for m in materials:
        cells = [
            m.key, m.name,
            _fmt(_maybe(lambda m=m: m.nd), 6), _fmt(_maybe(lambda m=m: m.vd), 2),
            _range_text(m), m.citation or m.source,
        ]
        cells += [_fmt(_index_at(m, w), 6) for w in wavelengths]
        rows.append(cells)
    widths = [max(len(r[i]) for r in rows) for i in range(len(header))]
    lines = ["  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in rows]
    notes = ["nd, vd at the d line (587.5618 nm); '-' where the line or wavelength lies outside "
             "the valid range; indices relative to air"]
    return "\n".join(lines + notes) + "\n"


def _details(m: Material) -> str:
    temperature = "room temperature" if m.temperature_c is None else f"{m.temperature_c:g} °C"
    coefficients = "; ".join(
        f"{name} = {', '.join(f'{v:.10g}' for v in values)}" for name, values in m.coefficients
    )
    lines = [
        f"key          {m.key}",
        f"name         {m.name}",
        f"type         {m.type or '-'}",
        f"code         {m.code or '-'}",
        f"formula      {m.formula}: {coefficients}",
        f"valid range  {_range_text(m)} nm at {temperature}",
        f"ne, ve       {_fmt(_maybe(lambda: m.ne), 6)}, {_fmt(_maybe(lambda: m.ve), 2)} "
        "(e line 546.074 nm)",
        f"source       {m.source}",
    ]
    if m.dn_dt_per_k is not None:
        lines.append(f"dn/dT        {m.dn_dt_per_k:.3g} per K ({m.dn_dt_source})")
    if m.expansion_per_k is not None:
        lines.append(f"expansion    {m.expansion_per_k:.3g} per K ({m.expansion_source})")
    optional = (("aliases      ", ", ".join(m.aliases)), ("note         ", m.note),
                ("defined in   ", m.origin))
    lines += [label + text for label, text in optional if text]
    return "\n".join(lines) + "\n"


def _record(m: Material, wavelengths: Sequence[float]) -> dict[str, object]:
    """Every fact about one material as plain JSON-ready values."""
    record: dict[str, object] = {
        name: getattr(m, name)
        for name in ("key", "name", "code", "type", "formula", "temperature_c", "source",
                     "citation", "dn_dt_per_k", "dn_dt_source", "expansion_per_k",
                     "expansion_source", "note", "origin")
    }
    record["range_nm"] = list(m.range_nm)
    record["aliases"] = list(m.aliases)
    record["coefficients"] = {n: list(v) for n, v in m.coefficients}
    for line in ("nd", "ne", "vd", "ve"):
        record[line] = _maybe(lambda line=line: getattr(m, line))
    record["glass_code"] = _code(m)
    if wavelengths:
        record["n_at_nm"] = [[w, _index_at(m, w)] for w in wavelengths]
    return record
