"""The design spec: value objects (``types``), the field table (``fields``), YAML loading
(``load``), cross-field rules and material look-ups (``validate``), and the JSON Schema export
(``schema``)."""

from prismfab.spec.load import load_spec, load_spec_text
from prismfab.spec.schema import json_schema
from prismfab.spec.types import *  # noqa: F403
from prismfab.spec.types import __all__ as _types_all

__all__ = sorted([*_types_all, "json_schema", "load_spec", "load_spec_text"])
