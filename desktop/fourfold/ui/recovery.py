"""Crash recovery: each window's periodic copy of its unsaved plan, in the application's folder.

Every window writes its own copy (``recovery-<token>.json``, the token made of the process id
and a random part) every minute while there are unsaved changes, and deletes it on a clean save
or exit; so two windows never overwrite each other's copy. While a window has a copy it holds a
lock file beside it (:class:`~PySide6.QtCore.QLockFile`), which the system frees when the
process ends, however it ends. On the next start, every copy whose lock is free — its window
is gone — and that is newer than the file it came from is offered back, newest first; a copy
still locked belongs to a window that is running and is left alone. A copy is written atomically
(a temporary file, then a rename), so a crash while writing never leaves half a file behind.
"""

from __future__ import annotations

import json
import os
import pathlib
import tempfile
import uuid
from dataclasses import dataclass

from PySide6.QtCore import QLockFile

from fourfold.errors import FourfoldError
from fourfold.plan import Plan, dumps, loads

FORMAT = "fourfold-recovery"
PREFIX = "recovery-"
LEGACY_NAME = "recovery.json"
"""The one copy every window shared before each had its own; still offered when found."""


@dataclass(frozen=True)
class Recovered:
    """A plan found in a left-over copy, the file it was being edited from, and the copy."""

    plan: Plan
    source: pathlib.Path | None
    saved_at: float
    path: pathlib.Path


def _lock_path(copy: pathlib.Path) -> pathlib.Path:
    return copy.with_suffix(".lock")


def _try_lock(copy: pathlib.Path) -> QLockFile | None:
    """The lock of ``copy`` if no running process holds it (a dead one's is taken over)."""
    lock = QLockFile(str(_lock_path(copy)))
    lock.setStaleLockTime(0)  # stale only when its process is gone, never by age
    return lock if lock.tryLock(0) else None


class Recovery:
    """One window's recovery copy in ``directory``, and the copies other windows left there.

    Parameters
    ----------
    directory : path-like
        The application's data folder (created on the first write).
    token : str, optional
        Names this window's copy (default: the process id and a random part).

    Examples
    --------
    >>> import shutil, tempfile
    >>> from fourfold.plan import Plan
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> first, second = Recovery(folder), Recovery(folder)
    >>> first.write(Plan.empty(), None); second.write(Plan.empty(), None)
    >>> first.path != second.path, second.leftovers()  # the other copy is still being written
    (True, [])
    >>> _ = shutil.copy(first.path, folder / "recovery-gone.json")  # a window that crashed
    >>> [found.path.name for found in second.leftovers()]
    ['recovery-gone.json']
    >>> second.drop(second.leftovers()[0]); first.discard(); second.discard()
    >>> sorted(path.name for path in folder.iterdir())
    []
    """

    def __init__(self, directory: str | os.PathLike, token: str | None = None) -> None:
        self.directory = pathlib.Path(directory)
        token = token or f"{os.getpid()}-{uuid.uuid4().hex[:8]}"
        self.path = self.directory / f"{PREFIX}{token}.json"
        self._lock: QLockFile | None = None
        self._claims: dict[pathlib.Path, QLockFile] = {}

    def write(self, plan: Plan, source: pathlib.Path | None) -> None:
        """Store ``plan`` (being edited from ``source``) atomically in this window's copy."""
        self.directory.mkdir(parents=True, exist_ok=True)
        if self._lock is None:
            self._lock = _try_lock(self.path)
            if self._lock is None:
                raise OSError(f"the recovery copy {self.path} is locked by another process")
        payload = {
            "format": FORMAT,
            "source": None if source is None else str(source),
            "plan": json.loads(dumps(plan)),
        }
        handle, temporary = tempfile.mkstemp(dir=self.directory, suffix=".tmp")
        try:
            with os.fdopen(handle, "w", encoding="utf-8") as stream:
                json.dump(payload, stream)
            os.replace(temporary, self.path)
        except BaseException:
            pathlib.Path(temporary).unlink(missing_ok=True)
            raise

    def discard(self) -> None:
        """Delete this window's copy and free its lock (after a clean save or exit)."""
        self.path.unlink(missing_ok=True)
        if self._lock is not None:
            self._lock.unlock()
            self._lock = None

    def leftovers(self) -> list[Recovered]:
        """Copies of windows that are gone, worth offering, newest first.

        A copy whose lock another running window holds is skipped, and so are unreadable
        copies (kept on disk). A copy older than the file it was edited from is deleted. Each
        copy returned is locked by this object until :meth:`drop` or :meth:`keep`, so that a
        window starting at the same moment does not offer it too.
        """
        if not self.directory.is_dir():
            return []
        copies = sorted(self.directory.glob(f"{PREFIX}*.json")) + [
            path for path in [self.directory / LEGACY_NAME] if path.exists()]
        found = []
        for copy in copies:
            if copy == self.path:
                continue
            lock = self._claims.get(copy) or _try_lock(copy)
            if lock is None:
                continue  # its window is still running
            self._claims[copy] = lock
            recovered = self._read(copy)
            if recovered is None:
                self._unclaim(copy)
            elif recovered.source is not None and recovered.source.exists() and (
                    recovered.source.stat().st_mtime >= recovered.saved_at):
                self.drop(recovered)  # the file was saved after the copy: nothing to offer
            else:
                found.append(recovered)
        return sorted(found, key=lambda item: item.saved_at, reverse=True)

    @staticmethod
    def _read(copy: pathlib.Path) -> Recovered | None:
        try:
            saved_at = copy.stat().st_mtime
            payload = json.loads(copy.read_text(encoding="utf-8"))
            if not isinstance(payload, dict) or payload.get("format") != FORMAT:
                return None
            plan = loads(json.dumps(payload["plan"]))
        except (OSError, ValueError, KeyError, FourfoldError):
            return None
        source = payload.get("source")
        source = pathlib.Path(source) if isinstance(source, str) else None
        return Recovered(plan, source, saved_at, copy)

    def drop(self, found: Recovered) -> None:
        """Delete a left-over copy (restored or declined) and its lock."""
        found.path.unlink(missing_ok=True)
        self._unclaim(found.path)

    def keep(self, found: Recovered) -> None:
        """Leave a left-over copy for a later window (its lock is freed, the copy stays)."""
        self._unclaim(found.path)

    def _unclaim(self, copy: pathlib.Path) -> None:
        lock = self._claims.pop(copy, None)
        if lock is not None:
            lock.unlock()
