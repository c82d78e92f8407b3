"""What a package is built from: the spec, its hash, its solve lock, and the spec text it carries.

The spec hash is the SHA-256 of the spec's canonical field list (``snapshot.spec_fields``), so
comments, key order and spacing in the YAML do not count as changes, while any field value
does. A user materials file and a solve lock count through their bytes.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from prismfab.package.revisions import dumps
from prismfab.package.snapshot import spec_fields

__all__ = ["LOCK_SUFFIXES", "Inputs", "edit_scalars", "find_lock", "inputs_from_file", "spec_hash"]

LOCK_SUFFIXES = (".lock.yaml", ".lock.yml", ".lock.json", ".lock")
"""Where a solve lock sits beside its spec: ``<spec stem><suffix>``, first found wins."""


def _sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def find_lock(spec_path: Path) -> Path | None:
    """The solve lock written beside a spec (``prismfab solve --write-lock``), if there is one."""
    stem = spec_path.name.rsplit(".", 1)[0] if "." in spec_path.name else spec_path.name
    for suffix in LOCK_SUFFIXES:
        candidate = spec_path.with_name(stem + suffix)
        if candidate.is_file():
            return candidate
    return None


@dataclass(frozen=True, slots=True)
class Inputs:
    """A spec ready to build, with the files the package copies.

    Args:
        spec: the validated spec (possibly a batch variant).
        spec_text: the YAML text to store in the package as the solved spec.
        spec_name: file name of that copy.
        lock_text: the solve lock text, or "" when there is none.
        lock_name: file name of the lock copy.
        notes: extra (key, value) lines for the manifest, e.g. a batch variant's overrides.
    """

    spec: Any
    spec_text: str
    spec_name: str = "spec.yaml"
    lock_text: str = ""
    lock_name: str = ""
    notes: tuple[tuple[str, str], ...] = ()

    @property
    def extra_sha256(self) -> str:
        """Hash of the materials file and the lock ("" when neither exists)."""
        parts = []
        if self.spec.materials_file:
            try:
                parts.append(_sha(Path(self.spec.materials_file).read_bytes()))
            except OSError:
                parts.append("unreadable materials file")
        if self.lock_text:
            parts.append(_sha(self.lock_text.encode("utf-8")))
        return _sha("\n".join(parts).encode()) if parts else ""

    @property
    def sha256(self) -> str:
        """The spec hash the revision record compares."""
        return spec_hash(self.spec, extra=self.extra_sha256)


def spec_hash(spec: Any, *, extra: str = "") -> str:
    """SHA-256 of the canonical spec fields (plus ``extra``, the inputs hash)."""
    return _sha((dumps(spec_fields(spec)) + extra).encode("utf-8"))


def inputs_from_file(spec_path: Path, spec: Any) -> Inputs:
    """The inputs of a spec file (its text, and its lock when one exists)."""
    text = spec_path.read_bytes().decode("utf-8-sig")
    lock = find_lock(spec_path)
    return Inputs(spec=spec, spec_text=text, spec_name=_yaml_name(spec_path.name),
                  lock_text=lock.read_text(encoding="utf-8") if lock else "",
                  lock_name=lock.name if lock else "")


def _yaml_name(name: str) -> str:
    return name if name.endswith((".yaml", ".yml")) else name + ".yaml"


_SCALAR_END = re.compile(r"\s+#|\s*[,}\]]|\s*$")


def edit_scalars(text: str, edits: Sequence[tuple[int, int, str]]) -> str | None:
    """Replace plain scalars in YAML text at 1-based (line, column) by new text.

    Returns None when a position does not hold a plain scalar (the caller then records the
    change another way).
    """
    lines = text.splitlines(keepends=True)
    for line_no, col, new in sorted(edits, reverse=True):
        if not 1 <= line_no <= len(lines):
            return None
        line = lines[line_no - 1]
        start = col - 1
        if start >= len(line) or line[start] in "\"'[{|>":
            return None
        end = _SCALAR_END.search(line, start)
        stop = end.start() if end else len(line.rstrip("\n"))
        lines[line_no - 1] = line[:start] + new + line[stop:]
    return "".join(lines)
