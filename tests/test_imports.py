"""`import prismfab` and `prismfab check` stay light, and the public API is curated."""

from __future__ import annotations

import json
import subprocess
import sys

import prismfab
from prismfab.spec.load import templates_dir

HEAVY = ("cadquery", "OCP", "reportlab", "ezdxf", "matplotlib")

_PROBE = """
import json, sys
import prismfab
after_import = [m for m in {heavy!r} if m in sys.modules]
import prismfab.cli
code = prismfab.cli.main(["check", {spec!r}])
after_check = [m for m in {heavy!r} if m in sys.modules]
print(json.dumps({{"import": after_import, "check": after_check, "code": code}}))
"""


def test_import_and_check_leave_heavy_libraries_unloaded() -> None:
    """Neither `import prismfab` nor `prismfab check` loads a CAD, PDF, DXF or plot library."""
    spec = str(templates_dir() / "specs" / "anamorphic-pair.yaml")
    done = subprocess.run([sys.executable, "-c", _PROBE.format(heavy=HEAVY, spec=spec)],
                          capture_output=True, text=True, timeout=60, check=True)
    result = json.loads(done.stdout.strip().splitlines()[-1])
    assert {"import": [], "check": [], "code": 0} == result


def test_public_names_are_sorted_and_resolve() -> None:
    """prismfab.__all__ is sorted and every name in it exists."""
    assert sorted(prismfab.__all__) == list(prismfab.__all__)
    for name in prismfab.__all__:
        assert getattr(prismfab, name) is not None


def test_spec_package_exports_the_loader() -> None:
    """prismfab.spec exports load_spec, load_spec_text and json_schema, sorted."""
    import prismfab.spec as spec

    assert sorted(spec.__all__) == list(spec.__all__)
    for name in ("load_spec", "load_spec_text", "json_schema", "Spec", "Family"):
        assert name in spec.__all__
        assert getattr(spec, name) is not None
