"""Watch a spec file and rebuild its package when its content changes.

The loop polls the file's modification time and size; when either moves it hashes the bytes,
and only a new hash triggers a build (an editor that rewrites the same text triggers nothing).
The first pass builds the current state. Each result is handed to ``report`` as text lines:
the revision and its change list, "unchanged" when the spec matches the latest revision, or the
one-paragraph error when the spec does not load or solve (the watch goes on).
"""

from __future__ import annotations

import hashlib
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from prismfab.errors import OutputError, PrismfabError

__all__ = ["watch"]


def _state(path: Path) -> tuple[int, int] | None:
    try:
        st = path.stat()
    except OSError:
        return None
    return (st.st_mtime_ns, st.st_size)


def _digest(path: Path) -> str | None:
    try:
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError:
        return None


def _build_once(path: Path, out_dir: Path, make_zip: bool, report: Callable[[str], None],
                **kwargs: Any) -> None:
    from prismfab.commands.build import report as result_text
    from prismfab.package.build import build
    from prismfab.package.inputs import inputs_from_file
    from prismfab.spec.load import load_spec

    try:
        result = build(inputs_from_file(path, load_spec(path)), out_dir=out_dir,
                       make_zip=make_zip, **kwargs)
    except OutputError:
        raise  # the output folder is unusable: watching on would fail every time
    except PrismfabError as err:
        report(f"error: {err}")
        return
    report(result_text(result).rstrip("\n"))


def watch(spec_path: Path, *, out_dir: Path, interval_s: float = 1.0,
          max_builds: int | None = None, max_polls: int | None = None, make_zip: bool = False,
          report: Callable[[str], None], sleep: Callable[[float], None] = time.sleep,
          **build_kwargs: Any) -> int:
    """Poll ``spec_path`` and build on every content change.

    Args:
        spec_path: the spec file.
        out_dir: output folder of the packages.
        interval_s: seconds between polls.
        max_builds: stop after this many build attempts (None: no limit).
        max_polls: stop after this many polls (None: no limit; tests bound the loop with it).
        make_zip: also zip each revision.
        report: receives the text of each event.
        sleep: the wait between polls.
        build_kwargs: passed to ``prismfab.package.build.build`` (``solve``, ``writers``).

    Returns:
        The number of build attempts.

    Raises:
        OutputError: the package cannot be written (stops the watch).
    """
    builds = polls = 0
    last_state: tuple[int, int] | None = None
    last_hash: str | None = None
    report(f"watching {spec_path} (every {interval_s:g} s; Ctrl-C stops)")
    while (max_builds is None or builds < max_builds) and (max_polls is None or polls < max_polls):
        polls += 1
        state = _state(spec_path)
        if state is not None and state != last_state:
            last_state = state
            digest = _digest(spec_path)
            if digest is not None and digest != last_hash:
                last_hash = digest
                builds += 1
                _build_once(spec_path, out_dir, make_zip, report, **build_kwargs)
                continue
        sleep(interval_s)
    return builds
