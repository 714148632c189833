"""Write export files all-or-nothing (see :mod:`fourfold.atomic`).

An export either replaces its output files completely or leaves them exactly as they were; a
failed or interrupted export removes its temporary files. Problems the user can act on (a
missing folder, no permission, a full disk, a target that is a device) become
:class:`ExportError` with the path in the message.
"""

from __future__ import annotations

import os
from contextlib import AbstractContextManager
from pathlib import Path

from fourfold import atomic


class ExportError(atomic.WriteError):
    """An export could not be written; the message names the file and the reason."""


def replacing(*targets: os.PathLike | str,
              verify: atomic.Verify | None = None) -> AbstractContextManager[list[Path]]:
    """:func:`fourfold.atomic.replacing` raising :class:`ExportError`.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> with replacing(folder / "a.txt") as (part,):
    ...     _ = part.write_text("done", encoding="utf-8")
    >>> sorted(p.name for p in folder.iterdir())
    ['a.txt']
    >>> with replacing("/dev/null") as (part,):
    ...     pass
    Traceback (most recent call last):
    ...
    fourfold.export.files.ExportError: cannot write /dev/null: it is a device, not a regular file
    """
    return atomic.replacing(*targets, error=ExportError, verify=verify)


def write_parts(contents: dict[os.PathLike | str, bytes]) -> list[Path]:
    """Replace each target with its bytes, all-or-nothing, checking every size written.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> [p.name for p in write_parts({folder / "a.csv": b"x", folder / "b.csv": b"y"})]
    ['a.csv', 'b.csv']
    """
    targets = list(contents)
    expected: dict[Path, int] = {}

    def complete(part: Path) -> str | None:
        size = part.stat().st_size
        if size != expected[part]:
            return (f"{atomic.incomplete('file', part.parent)} "
                    f"({size:,} of {expected[part]:,} bytes)")
        return None

    with replacing(*targets, verify=complete) as parts:
        for part, data in zip(parts, contents.values(), strict=True):
            expected[part] = len(data)
            handle = os.open(part, os.O_WRONLY | os.O_TRUNC)
            try:
                atomic.write_all(handle, data)
            finally:
                os.close(handle)
    return [Path(target) for target in targets]


__all__ = ["ExportError", "replacing", "write_parts"]
