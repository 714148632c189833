"""A CSV file's bytes in blocks of whole records, checked before any parser sees them.

The CSV reader hands pandas one block at a time (about :data:`BLOCK_BYTES`), cut after a line
break that is not inside a quoted cell, so memory stays bounded whatever the file holds: a NUL
byte (binary data, or a file padded with zeros) is refused with its line number, and so is a
line longer than :data:`MAX_LINE_BYTES` — a per-unit history has short lines, and a parser
would otherwise keep the whole run in memory as one row.

Lines end with ``\\n`` (or ``\\r\\n``); a file with no ``\\n`` in its first megabyte but with
``\\r`` ends its lines with ``\\r`` alone (old Mac style) and is read the same way.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass
from typing import BinaryIO

import numpy as np

from fourfold.history.errors import HistoryError

BLOCK_BYTES = 8 << 20
MAX_LINE_BYTES = 1 << 20
_BREAK = re.compile(rb"\r\n|\r|\n")


@dataclass(frozen=True)
class Block:
    """Whole records of the file: ``data``, its first line's number and the offset after it."""

    data: bytes
    first_line: int
    end: int


def line_break(head: bytes) -> bytes:
    r"""The line break of a file from its first bytes: ``b"\n"``, or ``b"\r"`` for a file
    whose lines end with a carriage return alone.

    Examples
    --------
    >>> line_break(b"a,b\r\n1,2\r\n"), line_break(b"a,b\r1,2\r")
    (b'\n', b'\r')
    """
    if b"\n" in head or b"\r" not in head:
        return b"\n"
    return b"\r"


def first_line(head: bytes) -> bytes:
    r"""The first line of ``head`` without its line break (``\n``, ``\r\n`` or ``\r``).

    Examples
    --------
    >>> first_line(b"a,b\r1,2\r")
    b'a,b'
    """
    return _BREAK.split(head, maxsplit=1)[0]


def _boundary(data: bytes, newline: bytes) -> int:
    """The offset just after the last line break of ``data`` outside quotes, or -1.

    ``data`` starts at a record boundary, so a break is outside quotes when an even number of
    ``"`` precede it (an escaped quote ``""`` counts twice). Linear in ``data``.
    """
    total = data.count(b'"')
    position = data.rfind(newline)
    after, end = 0, len(data)
    while position >= 0:
        after += data.count(b'"', position, end)
        if (total - after) % 2 == 0:
            return position + 1
        end = position
        position = data.rfind(newline, 0, position)
    return -1


def _longest_line(data: bytes, newline: bytes) -> tuple[int, int]:
    """The length of the longest line of ``data`` and its index (0-based)."""
    raw = np.frombuffer(data, dtype=np.uint8)
    ends = np.append(np.flatnonzero(raw == newline[0]), raw.size)
    lengths = np.diff(ends, prepend=-1) - 1
    index = int(np.argmax(lengths))
    return int(lengths[index]), index


def blocks(handle: BinaryIO, name: str, *, newline: bytes, line: int, offset: int,
           block_bytes: int = BLOCK_BYTES, max_line: int = MAX_LINE_BYTES) -> Iterator[Block]:
    """Read ``handle`` from its current position (``offset``, line ``line``) in blocks.

    Raises
    ------
    HistoryError
        At a NUL byte or a line longer than ``max_line``, naming the file and the line.

    Examples
    --------
    >>> import io
    >>> parts = blocks(io.BytesIO(b'1,"a\\nb"\\n2,c\\n3,d'), "h.csv", newline=b"\\n", line=2,
    ...                offset=0, block_bytes=4)
    >>> [(b.data, b.first_line) for b in parts]
    [(b'1,"a\\nb"\\n', 2), (b'2,c\\n', 4), (b'3,d', 5)]
    """
    pending = b""
    while True:
        chunk = handle.read(block_bytes)
        if b"\x00" in chunk:
            at = pending + chunk[: chunk.index(b"\x00")]
            raise HistoryError(f"{name}: line {line + at.count(newline)} holds a NUL byte: "
                               "this is binary data, not CSV text")
        pending += chunk
        if not chunk:
            if pending:
                _check_lines(pending, name, newline, line, max_line)
                if pending.count(b'"') % 2:
                    opened = line + pending[: max(_boundary(pending, newline), 0)].count(newline)
                    raise HistoryError(f"{name}: line {opened} opens a quote that is never "
                                       "closed")
                yield Block(pending, line, offset + len(pending))
            return
        cut = _boundary(pending, newline)
        if cut < 0:
            if len(pending) > max_line:
                raise HistoryError(_too_long(name, line, max_line))
            continue
        data, pending = pending[:cut], pending[cut:]
        _check_lines(data, name, newline, line, max_line)
        offset += len(data)
        yield Block(data, line, offset)
        line += data.count(newline)


def _check_lines(data: bytes, name: str, newline: bytes, line: int, max_line: int) -> None:
    if len(data) <= max_line:
        return
    longest, index = _longest_line(data, newline)
    if longest > max_line:
        raise HistoryError(_too_long(name, line + index, max_line))


def _too_long(name: str, line: int, max_line: int) -> str:
    return (f"{name}: line {line} is longer than {max_line >> 20} MB; a history file has one "
            "short line per unit (is it binary, or a quote left open?)")
