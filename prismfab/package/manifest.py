"""The package manifest (file hashes) and the deterministic zip of a revision folder.

``manifest.json`` lists every file of the revision folder (itself excepted) with its SHA-256 and
size, plus the spec hash, prismfab version, drawing prefix, revision and date. ``verify``
re-reads the files and reports any that are missing, extra or changed.

The zip holds the folder's files under ``<prefix>_<rev>/``, sorted, with a fixed time stamp
(1980-01-01, the earliest a zip can hold) and fixed permissions, so the same folder always
gives the same zip bytes.
"""

from __future__ import annotations

import hashlib
import json
import zipfile
from pathlib import Path
from typing import Any

from prismfab.errors import OutputError
from prismfab.package.revisions import dumps

__all__ = ["MANIFEST_FILE", "ZIP_TIME", "file_sha256", "manifest", "verify", "write_zip"]

MANIFEST_FILE = "manifest.json"
ZIP_TIME = (1980, 1, 1, 0, 0, 0)


def file_sha256(path: Path) -> str:
    """SHA-256 of a file's bytes, hex."""
    h = hashlib.sha256()
    with path.open("rb") as f:
        for block in iter(lambda: f.read(1 << 16), b""):
            h.update(block)
    return h.hexdigest()


def _files(folder: Path) -> list[Path]:
    return sorted((p for p in folder.rglob("*") if p.is_file() and p.name != MANIFEST_FILE),
                  key=lambda p: p.relative_to(folder).as_posix())


def manifest(folder: Path, *, spec_sha256: str, version: str, prefix: str, revision: str,
             date: str, extra: dict[str, Any] | None = None) -> dict[str, Any]:
    """Build the manifest of ``folder`` (every file but the manifest) and write it there.

    Returns:
        The manifest data written.
    """
    data: dict[str, Any] = {
        "format": 1,
        "drawing_prefix": prefix,
        "revision": revision,
        "date": date,
        "spec_sha256": spec_sha256,
        "prismfab_version": version,
        "files": [{"path": p.relative_to(folder).as_posix(), "sha256": file_sha256(p),
                   "bytes": p.stat().st_size} for p in _files(folder)],
    }
    data.update(extra or {})
    (folder / MANIFEST_FILE).write_text(dumps(data), encoding="utf-8")
    return data


def verify(folder: Path) -> list[str]:
    """Re-read the folder against its manifest; returns the problems (empty = intact)."""
    try:
        data = json.loads((folder / MANIFEST_FILE).read_text(encoding="utf-8"))
    except (OSError, ValueError) as err:
        return [f"manifest unreadable: {err}"]
    listed = {row["path"]: row for row in data["files"]}
    present = {p.relative_to(folder).as_posix() for p in _files(folder)}
    problems = [f"missing: {name}" for name in sorted(set(listed) - present)]
    problems += [f"not in manifest: {name}" for name in sorted(present - set(listed))]
    for name in sorted(set(listed) & present):
        if file_sha256(folder / name) != listed[name]["sha256"]:
            problems.append(f"changed: {name}")
    return problems


def write_zip(folder: Path, target: Path, *, root: str) -> Path:
    """Zip ``folder`` to ``target`` deterministically, entries under ``root/``.

    Written to a temporary name beside ``target`` and renamed.
    """
    tmp = target.with_name(f".{target.name}.tmp")
    files = sorted([*_files(folder), folder / MANIFEST_FILE],
                   key=lambda p: p.relative_to(folder).as_posix())
    try:
        with zipfile.ZipFile(tmp, "w", compression=zipfile.ZIP_DEFLATED) as z:
            for p in files:
                info = zipfile.ZipInfo(f"{root}/{p.relative_to(folder).as_posix()}", ZIP_TIME)
                info.compress_type = zipfile.ZIP_DEFLATED
                info.external_attr = 0o644 << 16
                info.create_system = 3  # unix, so the permission bits mean the same everywhere
                z.writestr(info, p.read_bytes(), compresslevel=9)
        tmp.replace(target)
    except OSError as err:
        raise OutputError(f"cannot write the zip '{target}': {err.strerror or err}") from err
    finally:
        tmp.unlink(missing_ok=True)
    return target
