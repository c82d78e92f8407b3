"""The design spec: value objects (``types``), YAML loading and validation (``load``), and the
JSON Schema export (``schema``)."""

from prismfab.spec.types import *  # noqa: F403
from prismfab.spec.types import __all__ as _types_all

__all__ = list(_types_all)
