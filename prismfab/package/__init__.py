"""The vendor package: folder per revision, RFQ summary, manifest, zip, revisions, diff, batch.

``build_package(spec_path, out_dir=..., make_zip=...)`` is the one call a script needs; the
modules hold the parts: ``build`` (the sequence and the writer table), ``revisions`` (letters and
records), ``snapshot`` and ``diff`` (what changed, in engineering words), ``rfq``, ``manifest``
(hashes and the zip), ``atomic`` (lock, staging, safe names), ``batch`` (many variants in a
process pool). Nothing heavy is imported here.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

__all__ = ["build_package"]


def build_package(spec_path: Any, *, out_dir: Any = "outputs", make_zip: bool = False,
                  **kwargs: Any) -> Path:
    """See ``prismfab.package.build.build_package``."""
    from prismfab.package.build import build_package as _build

    return _build(spec_path, out_dir=out_dir, make_zip=make_zip, **kwargs)
