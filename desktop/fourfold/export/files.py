"""Write export files all-or-nothing: a temporary file beside each target, renamed on success.

An export either replaces its output files completely or leaves them exactly as they were; a
failed export removes its temporary files. Problems the user can act on (a missing folder, no
permission, a full disk) become :class:`ExportError` with the path in the message.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path

from fourfold.errors import FourfoldError


class ExportError(FourfoldError):
    """An export could not be written; the message names the file and the reason."""


def _mode_for(target: Path) -> int:
    """Permission bits for a new output: those of the file it replaces, else 0o666 less umask."""
    try:
        return target.stat().st_mode & 0o777
    except OSError:
        mask = os.umask(0)
        os.umask(mask)
        return 0o666 & ~mask


def _reason(error: OSError) -> str:
    return error.strerror or str(error)


@contextlib.contextmanager
def replacing(*targets: os.PathLike | str) -> Iterator[list[Path]]:
    """Yield temporary paths to write; on success rename each over its target.

    Parameters
    ----------
    *targets : path-like
        The output files. Their folders must exist.

    Yields
    ------
    list of pathlib.Path
        One empty temporary file per target, in the same folder (so the rename is atomic).

    Raises
    ------
    ExportError
        When a folder is missing or not writable, or writing or renaming fails. The targets are
        then unchanged and the temporary files are gone. Any other exception raised inside the
        block also removes the temporary files and propagates unchanged.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> with replacing(folder / "a.txt") as (part,):
    ...     _ = part.write_text("done", encoding="utf-8")
    >>> (folder / "a.txt").read_text(encoding="utf-8")
    'done'
    >>> sorted(p.name for p in folder.iterdir())
    ['a.txt']
    """
    paths = [Path(target) for target in targets]
    parts: list[Path] = []
    try:
        for path in paths:
            if not path.parent.is_dir():
                problem = "is not a folder" if path.parent.exists() else "does not exist"
                raise ExportError(f"cannot write {path}: {path.parent} {problem}")
            if path.is_dir():
                raise ExportError(f"cannot write {path}: it is a folder")
            try:
                handle, name = tempfile.mkstemp(
                    prefix=f".{path.name}.", suffix=".part", dir=path.parent
                )
            except OSError as error:
                raise ExportError(f"cannot write {path}: {_reason(error)}") from error
            os.close(handle)
            parts.append(Path(name))
        yield list(parts)
        for path, part in zip(paths, parts, strict=True):
            try:
                os.chmod(part, _mode_for(path))
                os.replace(part, path)
            except OSError as error:
                raise ExportError(f"cannot write {path}: {_reason(error)}") from error
    except OSError as error:
        raise ExportError(f"cannot write {paths[0]}: {_reason(error)}") from error
    finally:
        for part in parts:
            with contextlib.suppress(FileNotFoundError):
                part.unlink()
