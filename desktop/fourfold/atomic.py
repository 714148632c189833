"""Write files all-or-nothing: a temporary file beside the target, checked, then renamed.

Every file Fourfold writes — a plan, a recovery copy, the CSV pair, the PDF, a PNG — goes
through :func:`replacing`: the content is written to a hidden temporary file in the target's
folder (``.NAME.PID.RANDOM.part``), flushed to the disk, checked (its size, and for a PDF or a
PNG its ending) and only then moved over the target with :func:`os.replace`. A failure at any
step — a full disk, no permission, a writer that stops half-way, an interruption — removes the
temporary file and leaves the target exactly as it was.

Targets that are not regular files are refused before anything is written: a folder, a device
(``/dev/null``), a named pipe or a socket, and names holding a NUL character. A symbolic link
is followed: its target is replaced and the link stays.

A process killed while writing cannot remove its temporary file; the next write beside the same
target removes every temporary file whose process has ended (or, where that cannot be told,
that is older than an hour), so killed saves never pile up.

Qt-free; used by :mod:`fourfold.plan.storage`, :mod:`fourfold.export` and :mod:`fourfold.ui`.
"""

from __future__ import annotations

import contextlib
import errno
import os
import stat
import time
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path

from fourfold.errors import FourfoldError

PART_SUFFIX = ".part"
STALE_SECONDS = 3600.0
"""Age after which a temporary file whose process cannot be checked counts as left over."""

Verify = Callable[[Path], str | None]
"""Checks a written temporary file; returns what is wrong with it, or None when it is fine."""


class WriteError(FourfoldError, OSError):
    """A file could not be written; the message names it and says why."""


def reason(error: OSError) -> str:
    """The readable part of an OS error ("No space left on device")."""
    return error.strerror or str(error)


def target_path(path: os.PathLike | str, *, error: type[Exception] = WriteError,
                verb: str = "write") -> Path:
    """The file a write to ``path`` replaces, after checking that it may be replaced.

    Parameters
    ----------
    path : path-like
        Where the user asked to write.
    error : exception class
        Raised (with a message naming the path) when the target cannot be written.
    verb : str
        The message's verb: "cannot VERB PATH: why".

    Returns
    -------
    pathlib.Path
        The absolute path of the file to replace (a symbolic link's target).

    Raises
    ------
    error
        For a name with a NUL character, a missing folder, or a target that is a folder, a
        device, a pipe or a socket.

    Examples
    --------
    >>> target_path("/dev/null")
    Traceback (most recent call last):
    ...
    fourfold.atomic.WriteError: cannot write /dev/null: it is a device, not a regular file
    >>> target_path("plan\\x00.json")
    Traceback (most recent call last):
    ...
    fourfold.atomic.WriteError: cannot write 'plan\\x00.json': the file name holds a NUL character
    """
    text = os.fspath(path)
    if isinstance(text, bytes):
        text = os.fsdecode(text)
    if "\x00" in text:
        raise error(f"cannot {verb} {text!r}: the file name holds a NUL character")
    if not text.strip():
        raise error(f"cannot {verb} a file without a name")
    real = Path(os.path.realpath(text))
    folder = real.parent
    if not folder.is_dir():
        problem = "is not a folder" if folder.exists() else "does not exist"
        raise error(f"cannot {verb} {text}: {folder} {problem}")
    try:
        mode = real.stat().st_mode
    except FileNotFoundError:
        return real
    except OSError as caught:
        raise error(f"cannot {verb} {text}: {reason(caught)}") from None
    if stat.S_ISDIR(mode):
        raise error(f"cannot {verb} {text}: it is a folder")
    if not stat.S_ISREG(mode):
        what = ("a device" if stat.S_ISCHR(mode) or stat.S_ISBLK(mode) else
                "a named pipe" if stat.S_ISFIFO(mode) else
                "a socket" if stat.S_ISSOCK(mode) else "a special file")
        raise error(f"cannot {verb} {text}: it is {what}, not a regular file")
    return real


def _mode_for(target: Path) -> int:
    """Permission bits for the new file: those of the file it replaces, else 0o666 less umask."""
    try:
        return stat.S_IMODE(target.stat().st_mode)
    except OSError:
        mask = os.umask(0)
        os.umask(mask)
        return 0o666 & ~mask


def _part_name(target: Path) -> str:
    return f".{target.name}.{os.getpid()}.{uuid.uuid4().hex[:8]}{PART_SUFFIX}"


def _process_gone(pid: int) -> bool | None:
    """Whether process ``pid`` has ended; None where that cannot be told safely."""
    if os.name != "posix":
        return None  # on Windows os.kill(pid, 0) would end the process
    if pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except OSError:
        return False  # it exists, owned by someone else
    return False


def is_stale(part: Path, now: float | None = None) -> bool:
    """Whether the temporary file ``part`` was left by a write that can no longer finish.

    A name ``.NAME.PID.RANDOM.part`` whose process has ended is left over; any other one (a
    name without a process id, or a system where processes cannot be checked) when it is
    older than :data:`STALE_SECONDS`.
    """
    pieces = part.name.rsplit(".", 3)
    gone = None
    if len(pieces) == 4 and pieces[1].isdigit():
        gone = _process_gone(int(pieces[1]))
    if gone is not None:
        return gone
    try:
        age = (time.time() if now is None else now) - part.stat().st_mtime
    except OSError:
        return False
    return age > STALE_SECONDS


def clean_stale(folder: Path, pattern: str) -> list[Path]:
    """Remove the left-over temporary files matching ``pattern`` in ``folder``; return them.

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> _ = (folder / ".plan.json.999999999.ab12cd34.part").write_text("half")
    >>> [p.name for p in clean_stale(folder, ".plan.json.*.part")]
    ['.plan.json.999999999.ab12cd34.part']
    """
    removed = []
    try:
        candidates = list(folder.glob(pattern))
    except OSError:
        return removed
    for part in candidates:
        if is_stale(part):
            with contextlib.suppress(OSError):
                part.unlink()
                removed.append(part)
    return removed


def _parts_of(target: Path) -> str:
    return f".{target.name}.*{PART_SUFFIX}"


def write_all(handle: int, data: bytes) -> None:
    """Write every byte of ``data`` to the file descriptor and flush it to the disk."""
    view = memoryview(data)
    while view:
        written = os.write(handle, view)
        if written <= 0:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        view = view[written:]
    os.fsync(handle)


def sync(path: Path) -> int:
    """Flush a written file to the disk; return its size in bytes."""
    handle = os.open(path, os.O_RDWR)
    try:
        os.fsync(handle)
        return os.fstat(handle).st_size
    finally:
        os.close(handle)


def _sync_folder(folder: Path) -> None:
    """Make a rename in ``folder`` durable (where the system allows opening a folder)."""
    if os.name != "posix":
        return
    with contextlib.suppress(OSError):
        handle = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(handle)
        finally:
            os.close(handle)


def disk_full(folder: Path, margin: int = 64 * 1024) -> bool:
    """Whether the disk holding ``folder`` has (almost) no space left."""
    try:
        info = os.statvfs(folder)
    except (OSError, AttributeError):
        return False
    return info.f_bavail * info.f_frsize < margin


def incomplete(what: str, folder: Path) -> str:
    """The message for a writer that stopped before the end of its file."""
    if disk_full(folder):
        return f"the disk is full, so the {what} came out incomplete"
    return f"the {what} came out incomplete"


@contextlib.contextmanager
def replacing(*targets: os.PathLike | str, error: type[Exception] = WriteError,
              verify: Verify | None = None, verb: str = "write") -> Iterator[list[Path]]:
    """Yield temporary paths to write; when the block succeeds, check each and rename it.

    Parameters
    ----------
    *targets : path-like
        The files to write. Their folders must exist.
    error : exception class
        The error raised for a problem with a file (message: "cannot write PATH: why").
    verify : callable, optional
        ``verify(part)`` returns what is wrong with a written temporary file, or None.
    verb : str
        The messages' verb ("cannot save plan.json: …").

    Yields
    ------
    list of pathlib.Path
        One empty temporary file per target, in the target's folder (so the rename is
        atomic).

    Raises
    ------
    error
        When a target may not be written, or writing, checking or renaming fails. The targets
        are then unchanged and the temporary files are gone; so they are when the block raises
        anything else (which propagates unchanged) or is interrupted.

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> with replacing(folder / "a.txt") as (part,):
    ...     _ = part.write_text("done", encoding="utf-8")
    >>> (folder / "a.txt").read_text(encoding="utf-8")
    'done'
    >>> sorted(p.name for p in folder.iterdir())
    ['a.txt']
    """
    shown = [os.fspath(target) for target in targets]
    paths = [target_path(target, error=error, verb=verb) for target in targets]
    parts: list[Path] = []
    try:
        for path, name in zip(paths, shown, strict=True):
            clean_stale(path.parent, _parts_of(path))
            part = path.parent / _part_name(path)
            try:
                os.close(os.open(part, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600))
            except OSError as caught:
                raise error(f"cannot {verb} {name}: {reason(caught)}") from None
            parts.append(part)
        yield list(parts)
        for path, name, part in zip(paths, shown, parts, strict=True):
            try:
                sync(part)
                problem = verify(part) if verify is not None else None
                if problem:
                    raise error(f"cannot {verb} {name}: {problem}; the old file is unchanged"
                                if path.exists() else f"cannot {verb} {name}: {problem}")
                os.chmod(part, _mode_for(path))
                os.replace(part, path)
            except OSError as caught:
                if isinstance(caught, error):
                    raise
                raise error(f"cannot {verb} {name}: {reason(caught)}") from None
        _sync_folder(paths[0].parent)
    except OSError as caught:
        if isinstance(caught, error):
            raise
        raise error(f"cannot {verb} {shown[0]}: {reason(caught)}") from None
    finally:
        for part in parts:
            with contextlib.suppress(OSError):
                part.unlink()


def write_bytes(target: os.PathLike | str, data: bytes, *,
                error: type[Exception] = WriteError, verb: str = "write") -> Path:
    """Replace ``target`` with ``data`` all-or-nothing, checking the size written.

    Examples
    --------
    >>> import tempfile
    >>> path = Path(tempfile.mkdtemp()) / "a.json"
    >>> write_bytes(path, b"{}").read_bytes()
    b'{}'
    """
    def complete(part: Path) -> str | None:
        size = part.stat().st_size
        if size != len(data):
            return f"{incomplete('file', part.parent)} ({size:,} of {len(data):,} bytes)"
        return None

    with replacing(target, error=error, verify=complete, verb=verb) as (part,):
        handle = os.open(part, os.O_WRONLY | os.O_TRUNC)
        try:
            write_all(handle, data)
        finally:
            os.close(handle)
    return Path(os.fspath(target))
