"""The ``Material`` value object and the catalogue: YAML data files -> materials, lookups.

The shipped catalogue (``data/*.yaml``) is parsed once per process; a user catalogue file is
parsed once per (path, modification time, size), so an edited file is re-read. The syntax is
documented in the header of ``data/catalogue.yaml``. Errors in a data file name the file, the
YAML line, the entry and the field.
"""

from __future__ import annotations

import difflib
import functools
import math
import os
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt

from prismfab.errors import MaterialError
from prismfab.materials.formulas import Dispersion, WavelengthLike, abbe_number, glass_code

__all__ = [
    "C_NM",
    "C_PRIME_NM",
    "D_NM",
    "E_NM",
    "F_NM",
    "F_PRIME_NM",
    "Catalogue",
    "Material",
    "build_catalogue",
    "load_catalogue",
    "normalise",
    "read_catalogue_file",
    "shipped",
]

D_NM = 587.5618
"""He d line (ISO 7944)."""
F_NM = 486.1327
"""H F line."""
C_NM = 656.2725
"""H C line."""
E_NM = 546.0740
"""Hg e line (ISO 7944)."""
F_PRIME_NM = 479.9914
"""Cd F' line."""
C_PRIME_NM = 643.8469
"""Cd C' line."""

_RANGE_REL_TOL = 1e-9
"""Relative slack at the ends of a valid range (float noise of the µm -> nm conversion)."""


@dataclass(frozen=True, slots=True)
class Material:
    """One catalogue entry: a dispersion law with its valid range and sources.

    Indices are relative to air at ``temperature_c``, as the sources give them. ``n`` evaluates
    anywhere (the tracer needs speed); specs call ``check_range`` first.

    Args:
        key: catalogue key, lowercase generic name or six-digit code, e.g. "fused silica", "517642".
        name: display name, e.g. "517642 borosilicate crown", "sapphire, ordinary ray".
        code: six-digit glass code, "" for crystals and fused silica.
        type: generic type, e.g. "borosilicate crown", "uniaxial crystal, ordinary ray".
        formula: data-file formula name, e.g. "sellmeier-resonance".
        range_nm: (low, high) valid vacuum wavelengths of the formula, nm.
        temperature_c: temperature of the data, °C; None where the source says "room temperature".
        source: the paper or standard, as cited.
        dn_dt_per_k: thermo-optic coefficient of this (relative) index, K⁻¹, or None.
        expansion_per_k: linear thermal expansion, K⁻¹, or None.
        dispersion: the formula in canonical form (λ in µm).
        coefficients: the coefficients as written in the data file, (name, values) pairs.
        citation: short form of the source for listings.
        dn_dt_source, expansion_source: where the thermal figures come from.
        aliases: other names that find this entry.
        note: what a user must know about the entry.
        origin: the user catalogue file that defined the entry, "" for the shipped catalogue.
    """

    key: str
    name: str
    code: str
    type: str
    formula: str
    range_nm: tuple[float, float]
    temperature_c: float | None
    source: str
    dn_dt_per_k: float | None
    expansion_per_k: float | None
    dispersion: Dispersion
    coefficients: tuple[tuple[str, tuple[float, ...]], ...] = ()
    citation: str = ""
    dn_dt_source: str = ""
    expansion_source: str = ""
    aliases: tuple[str, ...] = ()
    note: str = ""
    origin: str = ""

    def n(self, wavelength_nm: WavelengthLike) -> float | npt.NDArray[np.float64]:
        """Refractive index at vacuum wavelength(s) in nm; float in, float out; array in, array out."""
        if isinstance(wavelength_nm, (float, int)):
            return self.dispersion.n(wavelength_nm * 1e-3)
        return self.dispersion.n(np.asarray(wavelength_nm, dtype=float) * 1e-3)

    def dn_dlambda_per_um(self, wavelength_nm: WavelengthLike) -> float | npt.NDArray[np.float64]:
        """dn/dλ in µm⁻¹ (analytic) at vacuum wavelength(s) in nm."""
        if isinstance(wavelength_nm, (float, int)):
            return self.dispersion.dn_dlambda(wavelength_nm * 1e-3)
        return self.dispersion.dn_dlambda(np.asarray(wavelength_nm, dtype=float) * 1e-3)

    def group_index(self, wavelength_nm: WavelengthLike) -> float | npt.NDArray[np.float64]:
        """Group index n − λ dn/dλ at vacuum wavelength(s) in nm."""
        scalar = isinstance(wavelength_nm, (float, int))
        lam_nm = float(wavelength_nm) if scalar else np.asarray(wavelength_nm, dtype=float)  # type: ignore[arg-type]
        return self.n(lam_nm) - lam_nm * 1e-3 * self.dn_dlambda_per_um(lam_nm)  # type: ignore[operator]

    def covers(self, wavelength_nm: WavelengthLike) -> bool:
        """True when every wavelength (nm) lies inside the valid range."""
        lam = np.asarray(wavelength_nm, dtype=float)
        low, high = self.range_nm
        slack = _RANGE_REL_TOL * high
        return bool(np.all((lam >= low - slack) & (lam <= high + slack)))

    def check_range(self, wavelength_nm: WavelengthLike, *, path: str = "") -> None:
        """Raise unless every wavelength (nm) lies inside the formula's valid range.

        Args:
            wavelength_nm: vacuum wavelength(s), nm.
            path: the spec field the wavelength came from, e.g. ``beam.wavelengths_nm``.

        Raises:
            MaterialError: a wavelength is outside the range; names the material and its range.
        """
        if self.covers(wavelength_nm):
            return
        lam = np.atleast_1d(np.asarray(wavelength_nm, dtype=float))
        low, high = self.range_nm
        bad = [w for w in lam.tolist() if not self.covers(w)]
        raise MaterialError(
            path,
            f"asks for {_nm(bad[0])} nm, outside the valid range of {self.name} "
            f"({_nm(low)}–{_nm(high)} nm, {self.citation or self.source})",
            fix=f"use a wavelength from {_nm(low)} to {_nm(high)} nm, or a material whose data "
            "cover it ('prismfab materials' lists the ranges)",
        )

    def _line_index(self, wavelength_nm: float, quantity: str, line: str) -> float:
        if not self.covers(wavelength_nm):
            low, high = self.range_nm
            raise MaterialError(
                "",
                f"asks for {quantity} of {self.name}, but the {line} line ({wavelength_nm} nm) "
                f"is outside its valid range ({_nm(low)}–{_nm(high)} nm)",
                fix="evaluate n(wavelength_nm) inside the range instead",
            )
        return float(self.dispersion.n(wavelength_nm * 1e-3))

    @property
    def nd(self) -> float:
        """Index at the d line, 587.5618 nm. Raises MaterialError if outside the range."""
        return self._line_index(D_NM, "nd", "d")

    @property
    def ne(self) -> float:
        """Index at the e line, 546.0740 nm. Raises MaterialError if outside the range."""
        return self._line_index(E_NM, "ne", "e")

    @property
    def vd(self) -> float:
        """Abbe number (nd − 1)/(nF − nC). Raises MaterialError if a line is outside the range."""
        return abbe_number(self._line_index(D_NM, "vd", "d"), self._line_index(F_NM, "vd", "F"),
                           self._line_index(C_NM, "vd", "C"))

    @property
    def ve(self) -> float:
        """Abbe number (ne − 1)/(nF' − nC'). Raises MaterialError if a line is outside the range."""
        return abbe_number(self._line_index(E_NM, "ve", "e"),
                           self._line_index(F_PRIME_NM, "ve", "F'"),
                           self._line_index(C_PRIME_NM, "ve", "C'"))

    @property
    def glass_code(self) -> str:
        """Six-digit code from nd and vd: round((nd − 1)·1000), then round(vd·10)."""
        try:
            return glass_code(self.nd, self.vd)
        except ValueError as err:
            raise MaterialError("", f"asks for the six-digit glass code of {self.name}, but {err}",
                                fix="the code exists only for 1 <= nd < 1.9995 and vd < 99.95") from err


def _nm(value: float) -> str:
    return f"{value:.6g}"


# --------------------------------------------------------------------------- catalogue


@dataclass(frozen=True, slots=True)
class Catalogue:
    """Materials in file order plus the lookup tables (all names normalised).

    Args:
        materials: every entry, shipped first (user overrides in place), user additions last.
        index: normalised name -> key.
        ambiguous: normalised name -> keys it could mean.
        by_key_map: key -> material.
    """

    materials: tuple[Material, ...]
    index: Mapping[str, str]
    ambiguous: Mapping[str, tuple[str, ...]]
    by_key_map: Mapping[str, Material]

    def find(self, name: str, *, path: str = "") -> Material:
        """The material a name means; raises MaterialError with a suggestion."""
        norm = normalise(name)
        key = self.index.get(norm)
        if key is not None:
            return self.by_key(key)
        if norm in self.ambiguous:
            choices = ", ".join(f"'{k}'" for k in self.ambiguous[norm])
            raise MaterialError(path, f"names '{name}', which could mean {choices}",
                                fix=f"name one of them: {choices}")
        raise MaterialError(path, f"names an unknown material '{name}'", fix=self.suggest(name))

    def by_key(self, key: str) -> Material:
        """The entry with this exact key (KeyError if none)."""
        return self.by_key_map[key]

    def suggest(self, name: str) -> str:
        """A "did you mean" hint for a name that is not in the catalogue."""
        norm = normalise(name)
        names = list(self.index) + list(self.ambiguous)
        scored = sorted(
            ((difflib.SequenceMatcher(None, norm, n).ratio(), n) for n in names), reverse=True
        )
        best = scored[0][0] if scored else 0.0
        close = [n for score, n in scored if score >= max(0.6, best - 0.1)]
        close += [n for n in names if norm and norm in n and n not in close]
        keys: list[str] = []
        for n in close:
            label = self.index.get(n, n)
            if label not in keys:
                keys.append(label)
        tail = "'prismfab materials' lists the catalogue"
        if not keys:
            return f"{tail}, or add the material in a catalogue file (materials_file)"
        return "did you mean " + " or ".join(f"'{k}'" for k in keys[:3]) + f"? {tail}"


def normalise(name: str) -> str:
    """Lookup form of a name: lowercase, single spaces, no spaces inside parentheses."""
    text = " ".join(str(name).lower().split())
    return text.replace("( ", "(").replace(" )", ")")


_RAY_SUFFIX = re.compile(r"^(.*\S)\s*\((o|e|ordinary|extraordinary)\)$")


def _names(material: Material) -> list[str]:
    names = [material.key, material.name, *material.aliases]
    if material.code:
        names += [material.code, f"{material.code} {material.type}"]
    return list(dict.fromkeys(normalise(n) for n in names))


def build_catalogue(
    materials: Iterable[Material], ambiguous: Mapping[str, tuple[str, ...]]
) -> Catalogue:
    """Index materials by every name; bare names of (o)/(e) entries become ambiguous.

    Later materials win a name over earlier ones (user entries come last).
    """
    ordered = tuple(materials)
    index: dict[str, str] = {}
    for material in ordered:
        for name in _names(material):
            index[name] = material.key
    bare: dict[str, list[str]] = {}
    for material in ordered:
        for name in _names(material):
            match = _RAY_SUFFIX.match(name)
            if match and match.group(1) not in index:
                bare.setdefault(match.group(1), []).append(material.key)
    merged = {n: tuple(dict.fromkeys(k)) for n, k in bare.items()}
    keys = {m.key for m in ordered}
    for name, choices in ambiguous.items():
        if normalise(name) not in index:
            merged[normalise(name)] = tuple(k for k in choices if k in keys)
    return Catalogue(ordered, index, merged, {m.key: m for m in ordered})


@functools.lru_cache(maxsize=1)
def shipped() -> Catalogue:
    """The shipped catalogue, parsed once per process."""
    materials: list[Material] = []
    ambiguous: dict[str, tuple[str, ...]] = {}
    for path in sorted((Path(__file__).parent / "data").glob("*.yaml")):
        found, amb = read_catalogue_file(path, user=False)
        materials += found
        ambiguous.update(amb)
    return build_catalogue(materials, ambiguous)


@functools.lru_cache(maxsize=16)
def _with_user(path: str, mtime_ns: int, size: int) -> Catalogue:
    base = shipped()
    user, amb = read_catalogue_file(Path(path), user=True)
    replaced = {m.key: m for m in user}
    merged = [replaced.pop(m.key, m) for m in base.materials] + list(replaced.values())
    ambiguous = {**base.ambiguous, **amb}
    return build_catalogue(merged, ambiguous)


def load_catalogue(catalogue_file: str | os.PathLike[str] | None = None) -> Catalogue:
    """The shipped catalogue, extended or overridden by a user catalogue file.

    Args:
        catalogue_file: path of a user catalogue file (same syntax), or None / "" for none.

    Raises:
        MaterialError: the file cannot be read or an entry is wrong (names file, line, field).
    """
    if not catalogue_file:
        return shipped()
    path = os.path.abspath(os.fspath(catalogue_file))
    try:
        stat = os.stat(path)
    except OSError as err:
        raise MaterialError(
            "materials_file",
            f"points to '{path}', which cannot be read ({err.strerror or err})",
            fix="give the path of an existing catalogue file (syntax: header of the shipped "
            "prismfab/materials/data/catalogue.yaml)",
        ) from err
    return _with_user(path, stat.st_mtime_ns, stat.st_size)



# --------------------------------------------------------------------------- data-file reader

_FIELDS = (
    "name", "code", "type", "formula", "coefficients", "range_um", "temperature_c", "source",
    "citation", "dn_dt_per_k", "dn_dt_source", "expansion_per_k", "expansion_source", "aliases",
    "note",
)
_REQUIRED = ("formula", "coefficients", "range_um", "source")
_THERMAL_LIMIT_PER_K = 1e-3
"""Larger thermal coefficients are almost surely not per K (a unit slip)."""
_CODE_ND_TOL = 0.002
_CODE_VD_REL_TOL = 0.01
_GRID_POINTS = 64

FieldPath = tuple[str, ...]


class _File:
    """One data file being read: the plain data, the YAML line of every field, error builder."""

    def __init__(self, path: Path, *, user: bool) -> None:
        self.path = path
        self.user = user
        self.lines: dict[FieldPath, int] = {}
        self.data = self._parse()

    def fail(self, where: FieldPath, problem: str, fix: str | None = None) -> MaterialError:
        line = self.lines.get(where)
        field = ".".join(where) or "materials_file"
        return MaterialError(field, problem, line=line, fix=fix, source=str(self.path))

    def _parse(self) -> object:
        import yaml  # parsed once per file and process; keeps import prismfab.materials light

        try:
            text = self.path.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as err:
            raise MaterialError("materials_file", f"points to '{self.path}', which cannot be read "
                                f"({err})", fix="give a readable UTF-8 catalogue file") from err
        loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
        try:
            root = yaml.compose(text, Loader=loader)
        except yaml.YAMLError as err:
            mark = getattr(err, "problem_mark", None)
            raise MaterialError("materials_file", f"is not valid YAML ({getattr(err, 'problem', err)})",
                                line=mark.line + 1 if mark else None, source=str(self.path),
                                fix="fix the YAML syntax at that line") from err
        if root is None:
            raise self.fail((), "is empty", fix="start it with 'format: 1' and 'materials:'")
        return self._plain(root, (), yaml.SafeLoader(""))

    def _plain(self, node: object, where: FieldPath, constructor: object) -> object:
        import yaml

        self.lines.setdefault(where, node.start_mark.line + 1)  # type: ignore[attr-defined]
        if isinstance(node, yaml.MappingNode):
            out: dict[str, object] = {}
            for key_node, value_node in node.value:
                key = str(constructor.construct_object(key_node))  # type: ignore[attr-defined]
                sub = (*where, key)
                self.lines[sub] = key_node.start_mark.line + 1
                if key in out:
                    raise self.fail(sub, "appears twice", fix="keep one of them")
                out[key] = self._plain(value_node, sub, constructor)
            return out
        if isinstance(node, yaml.SequenceNode):
            return [self._plain(v, (*where, str(i)), constructor) for i, v in enumerate(node.value)]
        return constructor.construct_object(node)  # type: ignore[attr-defined]

    def mapping(self, value: object, where: FieldPath) -> dict[str, object]:
        if not isinstance(value, dict):
            raise self.fail(where, "must be a mapping of names to values")
        return value

    def number(self, value: object, where: FieldPath) -> float:
        if isinstance(value, bool):
            raise self.fail(where, f"must be a number, not {value}")
        try:
            number = float(value)  # type: ignore[arg-type]
        except (TypeError, ValueError):
            raise self.fail(where, f"must be a number, got '{value}'") from None
        if not math.isfinite(number):
            raise self.fail(where, f"must be a finite number, got {value}")
        return number

    def numbers(self, value: object, where: FieldPath) -> tuple[float, ...]:
        if not isinstance(value, list) or not value:
            raise self.fail(where, "must be a non-empty list of numbers, e.g. [0.69, 0.41, 0.90]")
        return tuple(self.number(v, (*where, str(i))) for i, v in enumerate(value))

    def text(self, value: object, where: FieldPath, *, required: bool = True) -> str:
        if not isinstance(value, str) or (required and not value.strip()):
            raise self.fail(where, "must be a non-empty text")
        return " ".join(value.split())


def read_catalogue_file(
    path: Path, *, user: bool
) -> tuple[list[Material], dict[str, tuple[str, ...]]]:
    """Read one catalogue file (syntax: header of ``data/catalogue.yaml``).

    Args:
        path: the YAML file.
        user: True for a user catalogue (recorded as each entry's ``origin``).

    Raises:
        MaterialError: naming the file, YAML line, entry and field.
    """
    f = _File(path, user=user)
    top = f.mapping(f.data, ())
    for name in top:
        if name not in ("format", "materials", "ambiguous"):
            raise f.fail((name,), "is not a catalogue section",
                         fix="use 'format', 'materials' and optionally 'ambiguous'")
    if top.get("format") != 1:
        raise f.fail(("format",), f"must be 1, got {top.get('format')!r}", fix="write 'format: 1'")
    entries = f.mapping(top.get("materials"), ("materials",))
    materials: list[Material] = []
    seen: set[str] = set()
    for raw_key, raw in entries.items():
        key = normalise(raw_key)
        if key in seen:
            raise f.fail(("materials", raw_key), f"repeats the key '{key}' (keys ignore case)",
                         fix="give each entry its own key")
        seen.add(key)
        materials.append(_entry(f, raw_key, key, raw))
    ambiguous: dict[str, tuple[str, ...]] = {}
    for name, keys in f.mapping(top.get("ambiguous", {}), ("ambiguous",)).items():
        if not isinstance(keys, list) or not all(isinstance(k, str) for k in keys):
            raise f.fail(("ambiguous", name), "must be a list of catalogue keys")
        ambiguous[normalise(name)] = tuple(normalise(k) for k in keys)
    return materials, ambiguous


def _entry(f: _File, raw_key: str, key: str, raw: object) -> Material:
    at: FieldPath = ("materials", raw_key)
    fields = f.mapping(raw, at)
    for name in fields:
        if name not in _FIELDS:
            close = difflib.get_close_matches(name, _FIELDS, n=1)
            hint = f"did you mean '{close[0]}'?" if close else f"fields: {', '.join(_FIELDS)}"
            raise f.fail((*at, name), "is not a material field", fix=hint)
    for name in _REQUIRED:
        if name not in fields:
            raise f.fail(at, f"has no '{name}'", fix=f"add '{name}:' to the entry (see the "
                         "header of the shipped catalogue.yaml)")
    formula, dispersion, coefficients = _formula(f, at, fields)
    low_nm, high_nm = _range(f, at, fields)
    _check_formula_in_range(f, at, dispersion, low_nm, high_nm)
    code, type_ = _code(f, at, fields), f.text(fields.get("type", ""), (*at, "type"), required=False)
    dn_dt, dn_dt_source = _thermal(f, at, fields, "dn_dt_per_k", "dn_dt_source")
    expansion, expansion_source = _thermal(f, at, fields, "expansion_per_k", "expansion_source")
    aliases = fields.get("aliases", [])
    if not isinstance(aliases, list) or not all(isinstance(a, str) for a in aliases):
        raise f.fail((*at, "aliases"), "must be a list of names, e.g. [caf2, fluorite]")
    temperature = fields.get("temperature_c")
    material = Material(
        key=key,
        name=f.text(fields.get("name", f"{code} {type_}" if code else key), (*at, "name")),
        code=code,
        type=type_,
        formula=formula,
        range_nm=(low_nm, high_nm),
        temperature_c=None if temperature is None else f.number(temperature, (*at, "temperature_c")),
        source=f.text(fields["source"], (*at, "source")),
        dn_dt_per_k=dn_dt,
        expansion_per_k=expansion,
        dispersion=dispersion,
        coefficients=coefficients,
        citation=f.text(fields.get("citation", ""), (*at, "citation"), required=False),
        dn_dt_source=dn_dt_source,
        expansion_source=expansion_source,
        aliases=tuple(" ".join(a.split()) for a in aliases),
        note=f.text(fields.get("note", ""), (*at, "note"), required=False),
        origin=str(f.path) if f.user else "",
    )
    _check_code(f, at, material)
    return material


def _formula(
    f: _File, at: FieldPath, fields: Mapping[str, object]
) -> tuple[str, Dispersion, tuple[tuple[str, tuple[float, ...]], ...]]:
    from prismfab.materials.formulas import FORMULAS

    formula = fields["formula"]
    if formula not in FORMULAS:
        raise f.fail((*at, "formula"), f"is '{formula}', which is not a known formula",
                     fix=f"use one of {', '.join(FORMULAS)}")
    spec = FORMULAS[str(formula)]
    where = (*at, "coefficients")
    given = f.mapping(fields["coefficients"], where)
    values: dict[str, object] = {}
    for name, value in given.items():
        if name not in spec.names:
            raise f.fail((*where, name), f"is not a coefficient of {formula} ({spec.text})",
                         fix=_coefficient_fix(str(formula), name, spec.names))
        is_scalar = name in spec.scalars
        values[name] = f.number(value, (*where, name)) if is_scalar else f.numbers(value, (*where, name))
    for name in spec.scalars + spec.lists:
        if name not in values:
            raise f.fail(where, f"has no '{name}' ({formula}: {spec.text})", fix=f"add '{name}:'")
    lengths = {n: len(v) for n, v in values.items() if isinstance(v, tuple)}
    pairs = (("B", "C_um2"), ("B", "resonance_um"), ("pole_D_um2", "pole_resonance_um"))
    for a, b in pairs:
        if a in spec.names and b in spec.names and (a in lengths or b in lengths) and lengths.get(a) != lengths.get(b):
            raise f.fail((*where, b), f"needs as many values as '{a}' ({lengths.get(a, 0)}), "
                         f"got {lengths.get(b, 0)}", fix="give one value per term")
    coefficients = tuple(
        (n, v if isinstance(v, tuple) else (float(v),)) for n, v in values.items()  # type: ignore[arg-type]
    )
    return str(formula), spec.build(values), coefficients


def _coefficient_fix(formula: str, name: str, names: tuple[str, ...]) -> str:
    if name == "resonance_um" and formula != "sellmeier-resonance":
        return ("resonance wavelengths belong to formula sellmeier-resonance (they are squared "
                "on load); or give their squares as C_um2")
    if name == "C_um2" and formula == "sellmeier-resonance":
        return "sellmeier-resonance takes resonance_um (um, not squared); for C in um2 use sellmeier-c"
    return f"{formula} takes {', '.join(names)}"


def _range(f: _File, at: FieldPath, fields: Mapping[str, object]) -> tuple[float, float]:
    where = (*at, "range_um")
    values = f.numbers(fields["range_um"], where)
    if len(values) != 2 or not 0 < values[0] < values[1]:
        raise f.fail(where, f"must be [low, high] in um with 0 < low < high, got {list(values)}")
    # µm -> nm, cleaned of binary noise (0.21 µm is 210 nm, not 210.00000000000003)
    return round(values[0] * 1000.0, 6), round(values[1] * 1000.0, 6)


def _check_formula_in_range(
    f: _File, at: FieldPath, dispersion: Dispersion, low_nm: float, high_nm: float
) -> None:
    low_um, high_um = low_nm * 1e-3, high_nm * 1e-3
    for pole in dispersion.poles_um2:
        if pole > 0 and low_um <= math.sqrt(pole) <= high_um:
            raise f.fail((*at, "coefficients"),
                         f"puts a pole at {math.sqrt(pole):.6g} um, inside the valid range "
                         f"{low_um:g}–{high_um:g} um",
                         fix="check whether the paper prints C in um2 (C_um2) or resonance "
                         "wavelengths in um (resonance_um, formula sellmeier-resonance)")
    n2 = dispersion.n_squared(np.geomspace(low_um, high_um, _GRID_POINTS))
    if not np.all(np.isfinite(n2)) or np.any(n2 <= 0.0):
        raise f.fail((*at, "coefficients"), "give n² ≤ 0 or a non-number inside the valid range",
                     fix="check the coefficients and their units against the source")


def _code(f: _File, at: FieldPath, fields: Mapping[str, object]) -> str:
    raw = fields.get("code", "")
    code = str(raw).strip() if not isinstance(raw, bool) else ""
    if code and not re.fullmatch(r"[0-9]{6}", code):
        raise f.fail((*at, "code"), f"must be six digits, e.g. \"517642\", got {raw!r}")
    return code


def _check_code(f: _File, at: FieldPath, material: Material) -> None:
    lines = (C_NM, D_NM, F_NM)
    if not material.code or not all(material.covers(w) for w in lines):
        return
    nd, vd = material.nd, material.vd
    code_nd = 1.0 + int(material.code[:3]) / 1000.0
    code_vd = int(material.code[3:]) / 10.0
    if abs(nd - code_nd) > _CODE_ND_TOL or abs(vd - code_vd) > _CODE_VD_REL_TOL * code_vd:
        raise f.fail((*at, "code"),
                     f"is {material.code}, but the coefficients give nd = {nd:.5f}, vd = {vd:.2f} "
                     f"(code {glass_code(nd, vd)})",
                     fix="check the code and the coefficients against the source")


def _thermal(
    f: _File, at: FieldPath, fields: Mapping[str, object], value_name: str, source_name: str
) -> tuple[float | None, str]:
    if value_name not in fields and source_name not in fields:
        return None, ""
    if value_name not in fields or source_name not in fields:
        missing = source_name if value_name in fields else value_name
        raise f.fail(at, f"gives one of '{value_name}' and '{source_name}' without the other",
                     fix=f"add '{missing}:'")
    value = f.number(fields[value_name], (*at, value_name))
    if abs(value) > _THERMAL_LIMIT_PER_K:
        raise f.fail((*at, value_name), f"is {value:g}, too large for a value per K",
                     fix="give it per kelvin, e.g. 1.0e-5")
    return value, f.text(fields[source_name], (*at, source_name))
