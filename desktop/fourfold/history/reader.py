"""Reading a per-unit history file in chunks: CSV (always) and Parquet (with pyarrow).

Only the mapped columns are read, ``chunk_rows`` rows at a time, so memory does not grow with
the file. pandas and pyarrow are imported here, lazily, never at start-up. Every problem with
the file becomes a :class:`~fourfold.history.errors.HistoryError` that names the file, the
column and, where there is one, the first offending line (CSV) or row (Parquet).

A blank line is a unit with every cell empty (counted as missing), so CSV line numbers in
messages are exact as long as no quoted cell holds a line break. Cells beyond the header's
columns are ignored, as pandas does when it reads selected columns.
"""

from __future__ import annotations

import csv
import io
import os
import re
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from fourfold.history.blocks import MAX_LINE_BYTES, blocks, first_line, line_break
from fourfold.history.errors import HistoryError

PARQUET_SUFFIXES = (".parquet", ".pq")
TRUE_WORDS = frozenset({"1", "1.0", "true", "t", "yes", "y"})
FALSE_WORDS = frozenset({"0", "0.0", "false", "f", "no", "n"})
_PROBE_BYTES = 1 << 20


@dataclass(frozen=True)
class Chunk:
    """One block of rows: ``columns`` maps a column name to its raw pandas Series."""

    columns: dict
    start: int
    rows: int
    fraction: float


def is_parquet(path: str | os.PathLike) -> bool:
    """True when the file name says Parquet."""
    return Path(path).suffix.lower() in PARQUET_SUFFIXES


def location(path: str | os.PathLike, row: int) -> str:
    """Where data row ``row`` (0-based) is: a CSV line (header = line 1) or a Parquet row."""
    return f"row {row + 1}" if is_parquet(path) else f"line {row + 2}"


def read_columns(path: str | os.PathLike) -> list[str]:
    """The column names of a history file, checking that it is a readable CSV or Parquet.

    Raises
    ------
    HistoryError
        When the file is missing, empty, binary, not UTF-8 text, names a column twice, has a
        first line longer than :data:`~fourfold.history.blocks.MAX_LINE_BYTES`, or ends
        mid-line.
    """
    path = Path(path)
    if "\x00" in str(path):
        raise HistoryError(f"{str(path)!r}: the file name holds a NUL character")
    if not path.is_file():
        raise HistoryError(f"{path}: no such file")
    if is_parquet(path):
        names = _parquet_file(path).schema_arrow.names
        _check_unique(path, names, "the file's schema")
        return names
    with open(path, "rb") as handle:
        head = handle.read(_PROBE_BYTES)
    if not head.strip():
        raise HistoryError(f"{path.name}: the file is empty")
    if b"\x00" in head:
        raise HistoryError(f"{path.name}: not a CSV text file (it contains binary data)")
    first = first_line(head)
    if len(first) >= MAX_LINE_BYTES:
        raise HistoryError(f"{path.name}: the first line is longer than "
                           f"{MAX_LINE_BYTES >> 20} MB; it should name the columns")
    try:
        text = first.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise HistoryError(f"{path.name}: not a UTF-8 CSV text file") from None
    try:
        header = next(csv.reader([text]), [])
    except csv.Error as error:
        raise HistoryError(f"{path.name}: the first line cannot be read as CSV ({error})") \
            from None
    if not any(name.strip() for name in header):
        raise HistoryError(f"{path.name}: the first line must name the columns")
    _check_unique(path, header, "the first line")
    _check_last_line(path, len(header), line_break(head))
    return header


def _check_unique(path: Path, header: list[str], where: str) -> None:
    seen: dict[str, int] = {}
    for number, name in enumerate(header, start=1):
        if name.strip() and name in seen:
            raise HistoryError(
                f"{path.name}: {where} names column {name!r} twice (columns "
                f"{seen[name]} and {number}); give each column its own name"
            )
        seen.setdefault(name, number)


def _check_last_line(path: Path, fields: int, newline: bytes) -> None:
    size = path.stat().st_size
    with open(path, "rb") as handle:
        handle.seek(max(0, size - _PROBE_BYTES))
        tail = handle.read()
    if tail.endswith((b"\n", b"\r")) or newline not in tail:
        return
    last = tail.rsplit(newline, 1)[1].decode("utf-8", errors="replace")
    try:
        seen = len(next(csv.reader(last.splitlines()[-1:]), []))
    except csv.Error:
        return  # the reader names the line

    if seen < fields:
        raise HistoryError(
            f"{path.name}: the file ends in the middle of a line (its last line has {seen} of "
            f"{fields} fields); it looks truncated"
        )


def _parquet_file(path: Path):
    try:
        import pyarrow.parquet as pq
    except ImportError:
        raise HistoryError(
            f"{path.name}: reading Parquet needs the optional pyarrow package "
            "(pip install 'fourfold[parquet]')"
        ) from None
    try:
        return pq.ParquetFile(path)
    except Exception as error:  # pyarrow raises several unrelated types for a bad file
        raise HistoryError(f"{path.name}: not a readable Parquet file ({_said(error)})") \
            from None


def iter_chunks(path: str | os.PathLike, columns: list[str], chunk_rows: int) -> Iterator[Chunk]:
    """Yield the named columns of the file ``chunk_rows`` rows at a time."""
    path = Path(path)
    if chunk_rows < 1:
        raise ValueError(f"chunk_rows must be at least 1, not {chunk_rows}")
    if is_parquet(path):
        yield from _parquet_chunks(path, columns, chunk_rows)
    else:
        yield from _csv_chunks(path, columns, chunk_rows)


def _csv_chunks(path: Path, columns: list[str], chunk_rows: int) -> Iterator[Chunk]:
    """The file in blocks of whole lines (:mod:`fourfold.history.blocks`), each parsed by
    pandas under the header line, ``chunk_rows`` rows at a time."""
    import pandas as pd

    size = max(path.stat().st_size, 1)
    start = 0
    with open(path, "rb") as handle:
        head = handle.read(_PROBE_BYTES)
        newline = line_break(head)
        first = first_line(head)
        rest = head[len(first):]
        header = first + (b"\r\n" if rest.startswith(b"\r\n") else rest[:1])
        handle.seek(len(header))
        for block in blocks(handle, path.name, newline=newline, line=2, offset=len(header)):
            for frame in _frames(pd, path, header, block, columns, chunk_rows, newline):
                rows = len(frame)
                yield Chunk({name: frame[name] for name in columns}, start, rows,
                            min(block.end / size, 1.0))
                start += rows


def _frames(pd, path: Path, header: bytes, block, columns: list[str], chunk_rows: int,
            newline: bytes):
    """pandas' frames of one block, parsed under the file's header line."""
    try:
        reader = pd.read_csv(io.BytesIO(header + block.data), usecols=columns,
                             chunksize=chunk_rows, skip_blank_lines=False, encoding="utf-8-sig")
        with reader:
            yield from reader
    except pd.errors.ParserError as error:
        raise HistoryError(f"{path.name}: {_parser_message(error, block.first_line - 2)}") \
            from None
    except UnicodeDecodeError:
        try:
            block.data.decode("utf-8")
            line = block.first_line
        except UnicodeDecodeError as error:
            line = block.first_line + block.data[: error.start].count(newline)
        raise HistoryError(
            f"{path.name}: not a UTF-8 CSV text file (undecodable bytes on line {line})"
        ) from None
    except pd.errors.EmptyDataError:
        raise HistoryError(f"{path.name}: the file is empty") from None
    except ValueError as error:  # pandas' remaining complaints about the file's layout
        raise HistoryError(f"{path.name}: cannot be read as CSV ({error})") from None


def _parser_message(error: Exception, lines_before: int = 0) -> str:
    """pandas' parser message without its prefix, its line number counted in the file."""
    text = str(error).strip()
    marker = "C error: "
    text = text.split(marker, 1)[1] if marker in text else text
    if lines_before:
        text = re.sub(r"line (\d+)", lambda m: f"line {int(m.group(1)) + lines_before}", text)
    return text


def _parquet_chunks(path: Path, columns: list[str], chunk_rows: int) -> Iterator[Chunk]:
    parquet = _parquet_file(path)
    import pyarrow as pa

    _check_parquet_types(path, parquet.schema_arrow, columns)
    total = max(parquet.metadata.num_rows, 1)
    start = 0
    try:
        for batch in parquet.iter_batches(batch_size=chunk_rows, columns=columns):
            rows = batch.num_rows
            start_next = start + rows
            yield Chunk({name: _parquet_column(path, batch, name) for name in columns}, start,
                        rows, min(start_next / total, 1.0))
            start = start_next
    except (OSError, pa.ArrowException) as error:
        raise HistoryError(f"{path.name}: the Parquet file cannot be read ({_said(error)})") \
            from None


def _check_parquet_types(path: Path, schema, columns: list[str]) -> None:
    """Refuse a mapped column of nested values (lists, structs, maps): one value a cell."""
    import pyarrow as pa

    for name in columns:
        kind = schema.field(name).type
        if pa.types.is_dictionary(kind):
            kind = kind.value_type
        if pa.types.is_nested(kind):
            raise HistoryError(f"{path.name}: column {name!r} holds {kind} values, not one "
                               "number, id or time a cell")


def _parquet_column(path: Path, batch, name: str):
    """One column of a batch as a pandas Series, or a HistoryError naming it."""
    import pyarrow as pa

    try:
        column = batch.column(name)
        column.validate(full=True)  # text that is not UTF-8 fails here, not in pandas later
        return column.to_pandas()
    except (pa.ArrowException, ValueError, OverflowError) as error:
        raise HistoryError(f"{path.name}: column {name!r} holds values that cannot be read "
                           f"({_said(error)})") from None


def _said(error: Exception) -> str:
    """pyarrow's message on one line, cut at 300 characters (it may span several)."""
    text = " ".join(str(error).split())
    return text if len(text) <= 300 else text[:299] + "…"


def numbers(series, column: str, *, proportion: bool, path, start: int) -> np.ndarray:
    """A column chunk as float64 with nan for missing cells.

    Raises
    ------
    HistoryError
        On the first cell that is not a number (or, for a proportion, not 0/1 or true/false),
        or is infinite or beyond the largest double (about 1.8e308), naming the column and its
        line.
    """
    values = series.to_numpy()
    text = None
    if values.dtype.kind in "biuf":
        out = values.astype(np.float64, copy=False)
    else:
        out, text = _parse_cells(values, column, proportion=proportion, path=path, start=start)
    if not proportion:
        bad = np.isinf(out)
        if bad.any():
            raise _cell_error(path, column, start, int(np.argmax(bad)), out, text, _HUGE)
        return out
    bad = ~(np.isnan(out) | (out == 0.0) | (out == 1.0))
    if bad.any():
        raise _cell_error(path, column, start, int(np.argmax(bad)), out, text,
                          "is not 0/1 or true/false, as a proportion needs")
    return out


_HUGE = "is infinite or beyond the largest number a double holds (about ±1.8e308)"
_NUMERAL = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")


def _parse_cells(values: np.ndarray, column: str, *, proportion: bool, path, start: int):
    """The cells as float64 (nan where empty) and as stripped text."""
    import pandas as pd

    cells = pd.Series(values, dtype=object)
    missing = cells.isna().to_numpy().copy()
    try:
        text = cells.where(~missing, "").astype(str).str.strip()
    except UnicodeDecodeError:
        raise HistoryError(f"{Path(path).name}: column {column!r} holds binary data that is "
                           "not text, so not numbers") from None
    missing |= (text == "").to_numpy()
    parsed = pd.to_numeric(text.where(~missing, None), errors="coerce")
    out = parsed.to_numpy(np.float64, copy=True)
    if proportion:
        words = text.str.lower()
        out[words.isin(TRUE_WORDS).to_numpy()] = 1.0
        out[words.isin(FALSE_WORDS).to_numpy()] = 0.0
    bad = np.isnan(out) & ~missing
    if bad.any():
        i = int(np.argmax(bad))
        what = _HUGE if _NUMERAL.fullmatch(text.iloc[i]) else "is not a number"
        raise _cell_error(path, column, start, i, out, text, what)
    return out, text


def _cell_error(path, column: str, start: int, index: int, values, text, what: str
                ) -> HistoryError:
    if text is not None:
        cell = text.iloc[index]
        shown = repr(cell if len(cell) <= 40 else cell[:39] + "…")
    else:
        shown = f"{float(values[index]):g}"
    return HistoryError(
        f"{Path(path).name}: column {column!r} has {shown} on "
        f"{location(path, start + index)}, which {what}"
    )
