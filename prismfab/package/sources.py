"""Where a snapshot comes from: a spec file (solved), a revision folder, a prefix folder."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from prismfab.errors import SpecError
from prismfab.package.revisions import RECORD_FILE, RevisionRecord, read_records

__all__ = ["snapshot_of"]


def snapshot_of(source: str, *, solve: Any = None) -> dict[str, Any]:
    """The design snapshot of ``source``.

    Args:
        source: a spec file, a revision folder, a prefix folder (latest revision) or a
            ``revision.json`` file.
        solve: spec -> Solution (default: ``prismfab.pipeline.run``).

    Raises:
        SpecError: the path does not exist or holds none of these (exit 2).
    """
    path = Path(source)
    if path.is_dir():
        return _from_folder(path)
    if path.name == RECORD_FILE:
        return _read_record(path).snapshot
    from prismfab.package.inputs import inputs_from_file
    from prismfab.package.snapshot import snapshot
    from prismfab.spec.load import load_spec

    spec = load_spec(path)  # raises SpecError naming the file when it is missing or wrong
    if solve is None:
        from prismfab.pipeline import run as solve
    return snapshot(solve(spec), extra_hash=inputs_from_file(path, spec).extra_sha256)


def _from_folder(path: Path) -> dict[str, Any]:
    if (path / RECORD_FILE).is_file():
        return _read_record(path / RECORD_FILE).snapshot
    records = read_records(path)
    if not records:
        raise SpecError("", f"'{path}' is neither a spec file nor a package folder (no "
                        f"{RECORD_FILE} in it or in a revision folder under it)",
                        fix="give a spec file, a revision folder such as outputs/RA-3107/B, or "
                        "a prefix folder such as outputs/RA-3107")
    return records[-1].snapshot


def _read_record(path: Path) -> RevisionRecord:
    try:
        return RevisionRecord.from_json(json.loads(path.read_text(encoding="utf-8")))
    except (OSError, ValueError, KeyError, TypeError) as err:
        raise SpecError("", f"'{path}' is not a readable revision record ({err})",
                        fix="give a package folder written by 'prismfab build'") from None
