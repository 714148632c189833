"""Crash recovery: each window's periodic copy of its unsaved plan, in the application's folder.

Every window writes its own copy (``recovery-<token>.json``, the token made of the process id
and a random part) every minute while there are unsaved changes, and deletes it on a clean save
or exit; so two windows never overwrite each other's copy. While a window has a copy it holds a
lock file beside it (:class:`~PySide6.QtCore.QLockFile`), which the system frees when the
process ends, however it ends. On the next start, every copy whose lock is free — its window
is gone — and that is newer than the file it came from is offered back, newest first; a copy
still locked belongs to a window that is running and is left alone. A copy is written atomically
(a temporary file, checked, then a rename: :mod:`fourfold.atomic`), so a crash while writing
never leaves half a file behind, and the temporary files of writes that were killed are removed
on the next start.

A copy that cannot be read back as a plan (damaged on disk, or not Fourfold's) never stops a
window from starting: it is set aside as ``recovery-….json.damaged`` and reported in
:attr:`Recovery.set_aside`, so the window can say where it went.
"""

from __future__ import annotations

import json
import os
import pathlib
import uuid
from dataclasses import dataclass

from PySide6.QtCore import QLockFile

from fourfold import atomic
from fourfold.errors import FourfoldError
from fourfold.plan import Plan
from fourfold.plan.storage import from_dict, parse_json, to_dict

FORMAT = "fourfold-recovery"
PREFIX = "recovery-"
LEGACY_NAME = "recovery.json"
"""The one copy every window shared before each had its own; still offered when found."""
DAMAGED_SUFFIX = ".damaged"
MAX_BYTES = 256 << 20
"""A recovery copy larger than this is not read (no plan comes near it)."""


class Damaged(Exception):
    """A recovery copy that cannot be read back; the message says why."""


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


def _saved_since(found: Recovered) -> bool:
    """Whether the file a copy was edited from was saved after the copy was written."""
    if found.source is None:
        return False
    try:
        return found.source.stat().st_mtime >= found.saved_at
    except OSError:
        return False


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
        self.set_aside: list[tuple[pathlib.Path, str]] = []
        """Damaged copies moved aside by :meth:`leftovers`: (new path, what was wrong)."""

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
            "plan": to_dict(plan),
        }
        try:
            data = json.dumps(payload, allow_nan=False).encode("utf-8")
        except (TypeError, ValueError) as error:
            raise atomic.WriteError(f"cannot write {self.path}: {error}") from None
        atomic.write_bytes(self.path, data)

    def discard(self) -> None:
        """Delete this window's copy and free its lock (after a clean save or exit)."""
        self.path.unlink(missing_ok=True)
        if self._lock is not None:
            self._lock.unlock()
            self._lock = None

    def leftovers(self) -> list[Recovered]:
        """Copies of windows that are gone, worth offering, newest first.

        A copy whose lock another running window holds is skipped. A copy that cannot be read
        back is set aside (renamed ``….damaged``) and listed in :attr:`set_aside`. A copy
        older than the file it was edited from is deleted. Each copy returned is locked by this
        object until :meth:`drop` or :meth:`keep`, so that a window starting at the same moment
        does not offer it too. Temporary files of copies whose writing was killed are removed.
        """
        if not self.directory.is_dir():
            return []
        atomic.clean_stale(self.directory, f".{PREFIX}*{atomic.PART_SUFFIX}")
        atomic.clean_stale(self.directory, "tmp*.tmp")  # written by earlier versions
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
            try:
                recovered = self._read(copy)
            except Damaged as damaged:
                self._set_aside(copy, str(damaged))
                continue
            if _saved_since(recovered):
                self.drop(recovered)  # the file was saved after the copy: nothing to offer
            else:
                found.append(recovered)
        return sorted(found, key=lambda item: item.saved_at, reverse=True)

    @staticmethod
    def _read(copy: pathlib.Path) -> Recovered:
        """The plan in ``copy``; :class:`Damaged` when it cannot be read back."""
        try:
            saved_at = copy.stat().st_mtime
            if copy.stat().st_size > MAX_BYTES:
                raise Damaged(f"it is larger than {MAX_BYTES >> 20} MB")
            payload = parse_json(copy.read_text(encoding="utf-8"))
            if not isinstance(payload, dict) or payload.get("format") != FORMAT:
                raise Damaged("it is not a Fourfold recovery copy")
            if "plan" not in payload:
                raise Damaged("it holds no plan")
            plan = from_dict(payload["plan"])
        except (OSError, ValueError, ArithmeticError, RecursionError, FourfoldError) as error:
            raise Damaged(str(error) or type(error).__name__) from None
        source = payload.get("source")
        usable = isinstance(source, str) and "\x00" not in source
        source = pathlib.Path(source) if usable else None
        return Recovered(plan, source, saved_at, copy)

    def _set_aside(self, copy: pathlib.Path, why: str) -> None:
        """Rename a damaged copy out of the way (``….damaged``) and note it."""
        aside = copy.with_name(copy.name + DAMAGED_SUFFIX)
        try:
            os.replace(copy, aside)
        except OSError as error:
            why = f"{why} (it could not be moved aside: {atomic.reason(error)})"
            aside = copy
        self._unclaim(copy)
        self.set_aside.append((aside, why))

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
