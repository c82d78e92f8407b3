"""Safe writing of package folders: sanitised names, a folder lock, stage-then-rename.

* ``safe_name`` turns any part number or prefix into one plain file-name component, and
  ``inside`` checks that a path cannot leave the output folder (``../../x`` stays inside).
* ``FolderLock`` is an exclusive lock file created with ``O_CREAT | O_EXCL``; it holds the
  owner's process id, so a lock left by a killed build is recognised and removed.
* ``Stage`` is a temporary folder beside the target (same file system, so the final
  ``os.rename`` is atomic): a killed or failed build leaves only a hidden ``.stage-*`` folder,
  which the next build under the lock removes; the revision folder appears complete or not at all.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import time
from collections.abc import Iterator
from pathlib import Path

from prismfab.errors import OutputError

__all__ = ["LOCK_FILE", "STAGE_PREFIX", "FolderLock", "Stage", "inside", "remove_stale_stages",
           "safe_name"]

LOCK_FILE = ".prismfab.lock"
STAGE_PREFIX = ".stage-"
_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def safe_name(text: str, *, what: str = "name") -> str:
    """``text`` as one safe file-name component: letters, digits, '.', '_' and '-' only.

    Other characters (path separators included) and runs of dots become '_', runs of '_'
    collapse, and leading dots and '_' are dropped, so the result is never hidden, never '.' or
    '..': ``../../x`` gives ``x``.

    Raises:
        OutputError: nothing usable is left.
    """
    name = re.sub(r"_+", "_", _UNSAFE.sub("_", re.sub(r"\.{2,}", "_", text))).strip("._")
    if not name:
        raise OutputError(f"the {what} '{text}' gives no usable file name; use letters, digits, "
                          "'-' and '_' in project.drawing_prefix and part names")
    return name[:120]


def inside(root: Path, *names: str) -> Path:
    """``root / safe_name(n) / ...`` after checking that the result stays inside ``root``."""
    path = root.joinpath(*(safe_name(n) for n in names))
    if not path.resolve().is_relative_to(root.resolve()):
        raise OutputError(f"output path '{path}' would leave the output folder '{root}'")
    return path


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class FolderLock:
    """An exclusive lock on one prefix folder for the length of a build.

    Args:
        folder: the folder to lock (created if missing).
        timeout_s: how long to wait for another build to finish before giving up.
        poll_s: how often to look again.
    """

    def __init__(self, folder: Path, *, timeout_s: float = 300.0, poll_s: float = 0.05) -> None:
        self.path = folder / LOCK_FILE
        self.timeout_s = timeout_s
        self.poll_s = poll_s
        self._held = False

    def acquire(self) -> None:
        """Take the lock, waiting for a live owner and breaking a dead owner's lock.

        Raises:
            OutputError: the folder stays locked by a live build beyond the timeout, or the
                lock file cannot be created.
        """
        deadline = time.monotonic() + self.timeout_s
        while True:
            try:
                fd = os.open(self.path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                owner = self._owner()
                if owner is not None and not _pid_alive(owner):
                    self._break(owner)
                    continue
                if time.monotonic() > deadline:
                    raise OutputError(
                        f"the package folder '{self.path.parent}' is locked by another build "
                        f"(process {owner}); wait for it to finish, or delete '{self.path}' if "
                        "no build is running") from None
                time.sleep(self.poll_s)
                continue
            except OSError as err:
                raise OutputError(f"cannot create the lock file '{self.path}': "
                                  f"{err.strerror or err}; check the output folder") from err
            with os.fdopen(fd, "w") as f:
                f.write(f"{os.getpid()}\n")
            self._held = True
            return

    def _owner(self) -> int | None:
        try:
            text = self.path.read_text().strip()
        except OSError:
            return None
        return int(text) if text.isdigit() else None

    def _break(self, owner: int) -> None:
        # Rename first: of two builds that both found the dead owner, only one rename succeeds.
        grave = self.path.with_name(f"{LOCK_FILE}.dead-{owner}-{os.getpid()}")
        with contextlib.suppress(OSError):
            os.rename(self.path, grave)
            grave.unlink()

    def release(self) -> None:
        """Give the lock back (only if this object holds it)."""
        if self._held:
            self._held = False
            with contextlib.suppress(FileNotFoundError):
                self.path.unlink()

    def __enter__(self) -> FolderLock:
        self.acquire()
        return self

    def __exit__(self, *exc: object) -> None:
        self.release()


class Stage:
    """A temporary folder beside ``target``; ``publish()`` renames it into place.

    Use as a context manager: on any error (or if ``publish`` was not reached) the temporary
    folder is removed and ``target`` is left as it was.
    """

    def __init__(self, target: Path) -> None:
        self.target = target
        self.path = target.with_name(f"{STAGE_PREFIX}{target.name}-{os.getpid()}")

    def __enter__(self) -> Stage:
        shutil.rmtree(self.path, ignore_errors=True)
        try:
            self.path.mkdir(parents=True)
        except OSError as err:
            raise OutputError(f"cannot create the folder '{self.path}': "
                              f"{err.strerror or err}; check the output folder") from err
        return self

    def publish(self) -> Path:
        """Rename the staged folder to the target (never over an existing target)."""
        if self.target.exists():
            raise OutputError(f"revision folder '{self.target}' already exists; an issued "
                              "revision is never overwritten (change the spec for a new revision)")
        try:
            os.rename(self.path, self.target)
        except OSError as err:
            raise OutputError(f"cannot move the finished package to '{self.target}': "
                              f"{err.strerror or err}") from err
        return self.target

    def __exit__(self, *exc: object) -> None:
        shutil.rmtree(self.path, ignore_errors=True)


def remove_stale_stages(folder: Path) -> tuple[Path, ...]:
    """Delete the staging folders killed builds left in ``folder`` (call with the lock held)."""
    removed = []
    for child in sorted(folder.glob(f"{STAGE_PREFIX}*")) if folder.is_dir() else ():
        shutil.rmtree(child, ignore_errors=True)
        removed.append(child)
    return tuple(removed)


@contextlib.contextmanager
def replacing(path: Path) -> Iterator[Path]:
    """Yield a temporary name beside ``path``; on success rename it over ``path``."""
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        yield tmp
        os.replace(tmp, path)
    except OSError as err:
        raise OutputError(f"cannot write '{path}': {err.strerror or err}") from err
    finally:
        tmp.unlink(missing_ok=True)
