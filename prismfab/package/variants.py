"""Batch variants: a spec with one or more numeric fields swept, each a spec of its own.

``--vary design.magnification=2:4:0.25`` sweeps 2.00, 2.25, ... 4.00 (the end included when the
step lands on it); ``=2,2.5,3.2`` lists values; several ``--vary`` options give every
combination. A variant is the base ``Spec`` with ``dataclasses.replace`` applied along the
field path (each step must be a field; the leaf must be a number), and its drawing prefix gets a
suffix ``-V01``, ``-V02``... so part numbers and folders of different variants never collide.

When the field is written in the YAML, the variant's spec text is the base text with that value
(and the prefix) edited in place and loaded again, so the loader checks the value exactly as it
checks a hand-written spec, and the package carries a spec file that rebuilds the variant.
"""

from __future__ import annotations

import dataclasses
import itertools
import typing
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from prismfab.errors import SpecError
from prismfab.package.inputs import Inputs, edit_scalars, inputs_from_file

__all__ = ["Sweep", "Variant", "expand", "parse_sweep", "with_value"]

_MAX_VALUES = 10_000


@dataclass(frozen=True, slots=True)
class Sweep:
    """One swept field: dotted spec path and its values."""

    path: str
    values: tuple[float, ...]


@dataclass(frozen=True, slots=True)
class Variant:
    """One batch item: its name, the inputs to build, and the field values it sets."""

    name: str
    inputs: Inputs
    overrides: tuple[tuple[str, float], ...] = ()


def _bad(text: str, problem: str) -> SpecError:
    return SpecError("", f"--vary '{text}' {problem}",
                     fix="write PATH=START:STOP:STEP or PATH=V1,V2,..., e.g. "
                     "design.magnification=2:4:0.25")


def parse_sweep(text: str) -> Sweep:
    """Parse one ``--vary`` argument.

    Raises:
        SpecError: the text is not ``PATH=START:STOP:STEP`` or ``PATH=V1,V2,...``.
    """
    path, sep, values = text.partition("=")
    if not sep or not path.strip() or not values.strip():
        raise _bad(text, "has no PATH=VALUES form")
    try:
        if ":" in values:
            start, stop, step = (float(v) for v in values.split(":"))
            if step <= 0 or stop < start:
                raise _bad(text, "needs STEP > 0 and STOP >= START")
            count = int((stop - start) / step + 1e-9) + 1
            if count > _MAX_VALUES:
                raise _bad(text, f"gives {count} values (limit {_MAX_VALUES})")
            nums = tuple(round(start + i * step, 12) for i in range(count))
        else:
            nums = tuple(float(v) for v in values.split(","))
    except ValueError:
        raise _bad(text, "holds a value that is not a number") from None
    return Sweep(path.strip(), nums)


def _field_type(obj: Any, name: str) -> str:
    hints = typing.get_type_hints(type(obj))
    return str(hints.get(name, ""))


def with_value(spec: Any, path: str, value: float) -> Any:
    """A copy of ``spec`` with the numeric field at ``path`` set to ``value``.

    Raises:
        SpecError: the path names no field of the spec, or not a number field, or an integer
            field gets a fraction.
    """
    names = path.split(".")
    chain = [spec]
    for name in names[:-1]:
        obj = chain[-1]
        if not dataclasses.is_dataclass(obj) or name not in {f.name for f in dataclasses.fields(obj)}:
            raise SpecError(path, "is not a field of this spec",
                            fix="name a numeric field, e.g. design.magnification or "
                            "requirements.pointing_mrad ('prismfab schema' lists them)")
        chain.append(getattr(obj, name))
    leaf, obj = names[-1], chain[-1]
    if not dataclasses.is_dataclass(obj) or leaf not in {f.name for f in dataclasses.fields(obj)}:
        raise SpecError(path, "is not a field of this spec",
                        fix="name a numeric field, e.g. design.magnification ('prismfab schema' "
                        "lists the fields of each family)")
    kind = _field_type(obj, leaf)
    current = getattr(obj, leaf)
    if isinstance(current, bool) or not ("float" in kind or "int" in kind) or "tuple" in kind:
        raise SpecError(path, "is not a number field and cannot be swept",
                        fix="sweep a single number, e.g. design.magnification")
    new: float | int = value
    if "float" not in kind:
        if value != int(value):
            raise SpecError(path, f"must be a whole number, got {value:g}",
                            fix="sweep it with whole-number values")
        new = int(value)
    for parent, name in zip(reversed(chain), reversed(names), strict=True):
        new = dataclasses.replace(parent, **{name: new})
    return new


def _value_text(value: float) -> str:
    return str(int(value)) if value == int(value) else repr(value)


def _variant_inputs(base: Inputs, overrides: tuple[tuple[str, float], ...], index: int) -> Inputs:
    from prismfab.spec.load import load_spec_text

    spec = base.spec
    for path, value in overrides:
        spec = with_value(spec, path, value)
    prefix = f"{base.spec.project.drawing_prefix}-V{index:02d}"
    spec = dataclasses.replace(spec, project=dataclasses.replace(spec.project,
                                                                 drawing_prefix=prefix))
    where = {p: (line, col) for p, line, col in base.spec.lines}
    edits = [(*where[p], _value_text(v)) for p, v in overrides if p in where]
    if "project.drawing_prefix" in where:
        edits.append((*where["project.drawing_prefix"], prefix))
    text = edit_scalars(base.spec_text, edits) if len(edits) == len(overrides) + 1 else None
    if text is not None:  # the loader checks the edited text like any spec
        source = base.spec.source or "spec"
        base_dir = Path(source).resolve().parent if base.spec.source else None
        load_spec_text(text, source=f"{source} (variant {index:02d})", base_dir=base_dir)
    else:
        head = "".join(f"# batch variant {index:02d}: {p} = {_value_text(v)} (set in memory; "
                       "not in the text below)\n" for p, v in overrides)
        text = head + f"# drawing prefix of this variant: {prefix}\n" + base.spec_text
    notes = tuple((p, _value_text(v)) for p, v in overrides)
    return dataclasses.replace(base, spec=spec, spec_text=text, notes=notes)


def expand(spec_paths: Sequence[str], sweeps: Sequence[Sweep]) -> list[Variant]:
    """Every (spec, combination of swept values) as a batch item.

    Without sweeps each spec is one item, built as it is. Bad paths or values raise at once,
    before anything runs.

    Raises:
        SpecError: a spec file is wrong, or a sweep names a bad path or value.
    """
    from prismfab.spec.load import load_spec

    items = []
    for spec_path in spec_paths:
        path = Path(spec_path)
        base = inputs_from_file(path, load_spec(path))
        stem = path.name.rsplit(".", 1)[0]
        if not sweeps:
            items.append(Variant(stem, base))
            continue
        combos = itertools.product(*[[(s.path, v) for v in s.values] for s in sweeps])
        for index, combo in enumerate(combos, start=1):
            inputs = _variant_inputs(base, tuple(combo), index)
            label = ", ".join(f"{p.rpartition('.')[2]}={_value_text(v)}" for p, v in combo)
            items.append(Variant(f"{stem} V{index:02d} ({label})", inputs, tuple(combo)))
    return items
