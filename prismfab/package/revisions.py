"""Revision letters and revision records of a drawing set.

Letters follow the convention most drawing offices use (ASME Y14.35): A, B, C, ... skipping
I, O, Q, S, X and Z (they read like digits or other letters); after Y comes AA, AB, ... AY,
then BA, and so on. One letter covers the whole set of a drawing prefix (every part drawing,
model, sheet and report of the package carry the same letter).

Each revision folder holds its own record (``revision.json``): letter, date, spec hash, the
semantic snapshot of the solved design (``prismfab.package.snapshot``) and the change list
against the previous revision. The folders are the source of truth; ``revisions.json`` beside
them is an index rewritten from the folders after every build, so a build killed between the
folder rename and the index write loses nothing.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from prismfab.errors import OutputError

__all__ = [
    "LETTERS",
    "RECORD_FILE",
    "INDEX_FILE",
    "RevisionRecord",
    "build_date",
    "change_text",
    "dumps",
    "index_of",
    "letter_at",
    "next_letter",
    "read_records",
    "revision_table",
    "write_index",
]

LETTERS = "ABCDEFGHJKLMNPRTUVWY"
"""Single revision letters in order: the alphabet without I, O, Q, S, X, Z."""
RECORD_FILE = "revision.json"
INDEX_FILE = "revisions.json"
FIRST_ISSUE = "First issue"


def letter_at(index: int) -> str:
    """The revision letter at 0-based ``index``: 0 -> A, 19 -> Y, 20 -> AA, 21 -> AB."""
    if index < 0:
        raise ValueError(f"revision index must be >= 0, got {index}")
    n = len(LETTERS)
    if index < n:
        return LETTERS[index]
    index -= n
    width = 2
    while index >= n**width:
        index -= n**width
        width += 1
    out = []
    for _ in range(width):
        index, digit = divmod(index, n)
        out.append(LETTERS[digit])
    return "".join(reversed(out))


def index_of(letter: str) -> int:
    """The 0-based index of a revision letter (inverse of ``letter_at``).

    Raises:
        ValueError: the text is not a revision letter (empty, or holds I, O, Q, S, X, Z).
    """
    if not letter or any(c not in LETTERS for c in letter):
        raise ValueError(f"'{letter}' is not a revision letter (A-Y without I, O, Q, S, X, Z)")
    n = len(LETTERS)
    offset = sum(n**w for w in range(1, len(letter)))
    value = 0
    for c in letter:
        value = value * n + LETTERS.index(c)
    return offset + value


def next_letter(letter: str | None) -> str:
    """The letter after ``letter`` (None -> "A"): Y -> AA, AY -> BA."""
    return "A" if letter is None else letter_at(index_of(letter) + 1)


@dataclass(frozen=True, slots=True)
class RevisionRecord:
    """One issued revision of a drawing set.

    Args:
        letter: revision letter.
        date: date of issue, ISO 8601.
        spec_sha256: hash of the canonical spec (``prismfab.package.spechash``).
        snapshot: semantic snapshot of the solved design (JSON-ready, see ``snapshot``).
        changes: what changed against the previous revision, as (subject, text) pairs in
            engineering words: subject is a prism name ("P1") or "" for the system; empty for
            the first issue.
        approved_by: who approved it (the spec's project.approved_by).
    """

    letter: str
    date: str
    spec_sha256: str
    snapshot: dict[str, Any]
    changes: tuple[tuple[str, str], ...] = ()
    approved_by: str = ""

    def to_json(self) -> dict[str, Any]:
        """JSON-ready mapping (the ``revision.json`` content)."""
        return {"format": 1, "letter": self.letter, "date": self.date,
                "spec_sha256": self.spec_sha256, "approved_by": self.approved_by,
                "changes": [list(c) for c in self.changes], "snapshot": self.snapshot}

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> RevisionRecord:
        """Read a ``revision.json`` mapping back."""
        return cls(letter=str(data["letter"]), date=str(data["date"]),
                   spec_sha256=str(data["spec_sha256"]), snapshot=dict(data["snapshot"]),
                   changes=tuple((str(s), str(t)) for s, t in data.get("changes", ())),
                   approved_by=str(data.get("approved_by", "")))

    @property
    def description(self) -> str:
        """The revision-table description: the change list, or "First issue"."""
        return "; ".join(change_text(c) for c in self.changes) if self.changes else FIRST_ISSUE


def dumps(data: Any) -> str:
    """Deterministic JSON text (sorted keys, two-space indent, UTF-8, final newline)."""
    return json.dumps(data, indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def read_records(prefix_dir: Path) -> tuple[RevisionRecord, ...]:
    """The issued revisions under a prefix folder, oldest first (read from the folders).

    Folders without a readable record (foreign folders, hidden temporary folders) are skipped.
    """
    records = []
    if not prefix_dir.is_dir():
        return ()
    for child in prefix_dir.iterdir():
        if child.name.startswith(".") or not child.is_dir():
            continue
        try:
            index_of(child.name)
            data = json.loads((child / RECORD_FILE).read_text(encoding="utf-8"))
            record = RevisionRecord.from_json(data)
        except (ValueError, KeyError, TypeError, OSError):
            continue
        if record.letter == child.name:
            records.append(record)
    return tuple(sorted(records, key=lambda r: index_of(r.letter)))


def write_index(prefix_dir: Path, records: Sequence[RevisionRecord]) -> None:
    """Rewrite ``revisions.json`` (letter, date, hash, changes per revision) atomically."""
    rows = [{"letter": r.letter, "date": r.date, "spec_sha256": r.spec_sha256,
             "changes": [change_text(c) for c in r.changes], "approved_by": r.approved_by} for r in records]
    target = prefix_dir / INDEX_FILE
    tmp = prefix_dir / f".{INDEX_FILE}.{os.getpid()}.tmp"
    try:
        tmp.write_text(dumps({"format": 1, "revisions": rows}), encoding="utf-8")
        os.replace(tmp, target)
    except OSError as err:
        tmp.unlink(missing_ok=True)
        raise OutputError(f"cannot write the revision index '{target}': "
                          f"{err.strerror or err}; check the folder's permissions and free space"
                          ) from err


def build_date(project_date: str, *, today: _dt.date | None = None) -> str:
    """The date of a new revision: the spec's project.date when set, else today.

    ``SOURCE_DATE_EPOCH`` (seconds since 1970, the reproducible-builds convention) replaces
    "today" when set, so a fresh build on another day can give the same bytes.
    """
    if project_date:
        return project_date
    if today is None:
        epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
        if epoch.isdigit():
            today = _dt.datetime.fromtimestamp(int(epoch), tz=_dt.timezone.utc).date()
        else:
            today = _dt.date.today()
    return today.isoformat()


def revision_table(records: Sequence[RevisionRecord], part_key: str | None = None
                   ) -> tuple[tuple[str, str, str, str], ...]:
    """Revision-table rows (rev, description, date, approved by), oldest first.

    Args:
        records: the revisions up to and including the one being written.
        part_key: a prism name (e.g. "P1"): rows then list the changes of that part and the
            system-level changes; None lists every change.
    """
    rows = []
    for r in records:
        if part_key is None:
            texts = [change_text(c) for c in r.changes]
        else:  # the part's own changes without its name, then the system-level ones
            texts = [t for s, t in r.changes if s == part_key]
            texts += [t for s, t in r.changes if not s]
        if r.changes and not texts:
            text = "Reissued with the set; no change to this part"
        else:
            text = "; ".join(texts) if texts else FIRST_ISSUE
        rows.append((r.letter, text, r.date, r.approved_by))
    return tuple(rows)


def change_text(change: tuple[str, str]) -> str:
    """One change as a line: "P1 material 517642 → 785257" or "magnification 3.00 → 3.20"."""
    subject, text = change
    return f"{subject} {text}" if subject else text
