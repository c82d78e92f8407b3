"""JSON Schema (draft 2020-12) of the spec format, rendered from the field table.

``prismfab schema`` prints it for editors (completion and checks while a spec is typed). It is
rendered from ``prismfab.spec.fields.SPEC``, the table the loader validates against, so the two
cannot disagree; defaults are read from the value objects in ``prismfab.spec.types``.
"""

from __future__ import annotations

import dataclasses
from enum import Enum
from typing import Any

from prismfab.spec.fields import (
    FAMILY_SECTIONS,
    NO_DEFAULT,
    SPEC,
    Choice,
    Field,
    Flag,
    Kind,
    ListOf,
    Number,
    Section,
    Text,
)

__all__ = ["json_schema"]


def _json_default(value: Any) -> Any:
    if isinstance(value, Enum):
        return value.value
    if isinstance(value, tuple):
        return [_json_default(v) for v in value]
    return value


def _model_default(model: type | None, name: str) -> Any:
    if model is None:
        return NO_DEFAULT
    for f in dataclasses.fields(model):
        if f.name == name:
            if f.default is not dataclasses.MISSING:
                return _json_default(f.default)
            if f.default_factory is not dataclasses.MISSING:
                return NO_DEFAULT  # a nested section: its own fields carry defaults
    return NO_DEFAULT


def _kind_schema(kind: Kind) -> dict[str, Any]:
    if isinstance(kind, Number):
        out: dict[str, Any] = {"type": "integer" if kind.integer else "number"}
        for key, value in (("minimum", kind.minimum), ("maximum", kind.maximum),
                           ("exclusiveMinimum", kind.exclusive_minimum),
                           ("exclusiveMaximum", kind.exclusive_maximum)):
            if value is not None:
                out[key] = int(value) if kind.integer else value
        return out
    if isinstance(kind, Text):
        out = {"type": "string", "maxLength": kind.max_length}
        if kind.nonempty:
            out["minLength"] = 1
        if kind.pattern:
            out["pattern"] = f"^(?:{kind.pattern})$"
        return out
    if isinstance(kind, Flag):
        return {"type": "boolean"}
    if isinstance(kind, Choice):
        return {"type": "string", "enum": list(kind.values)}
    if isinstance(kind, ListOf):
        out = {"type": "array", "items": _kind_schema(kind.item), "minItems": kind.min_items}
        if kind.max_items is not None:
            out["maxItems"] = kind.max_items
        return out
    if isinstance(kind, Section):
        return _section_schema(kind)
    return {"oneOf": [{"$ref": f"#/$defs/{name}"} for name, _ in kind.cases]}


def _field_schema(f: Field, model: type | None) -> dict[str, Any]:
    body = _kind_schema(f.kind)
    if f.nullable:
        body = {"anyOf": [body, {"type": "null"}]}
    body["description"] = f.doc
    default = f.default if f.default is not NO_DEFAULT else _model_default(model, f.name)
    if default is not NO_DEFAULT and not f.required:
        body["default"] = default
    return body


def _section_schema(section: Section, *, extra: dict[str, Any] | None = None) -> dict[str, Any]:
    props = dict(extra or {})
    props.update({f.name: _field_schema(f, section.model) for f in section.fields})
    out: dict[str, Any] = {"type": "object", "properties": props, "additionalProperties": False}
    required = ([*(extra or {})] + [f.name for f in section.fields if f.required])
    if required:
        out["required"] = required
    if section.doc:
        out["description"] = section.doc
    return out


def json_schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of a spec file, rendered from ``SPEC``.

    Returns:
        A JSON-serialisable dict; the design section is a ``oneOf`` over the families, each
        selected by its ``family`` constant.
    """
    defs = {
        name: _section_schema(section, extra={"family": {"const": name,
                                                         "description": "prism family"}})
        for name, section in FAMILY_SECTIONS
    }
    out = _section_schema(SPEC)
    out["properties"]["design"] = {"oneOf": [{"$ref": f"#/$defs/{n}"} for n in defs],
                                   "description": "the prism family and its targets"}
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": "urn:prismfab:spec:1",
        "title": "prismfab design spec, format 1",
        **out,
        "$defs": defs,
    }
