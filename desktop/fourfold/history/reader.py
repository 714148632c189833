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
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

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
        When the file is missing, empty, binary, not UTF-8 text, or ends mid-line.
    """
    path = Path(path)
    if not path.is_file():
        raise HistoryError(f"{path}: no such file")
    if is_parquet(path):
        return _parquet_file(path).schema_arrow.names
    with open(path, "rb") as handle:
        head = handle.read(_PROBE_BYTES)
    if not head.strip():
        raise HistoryError(f"{path.name}: the file is empty")
    if b"\x00" in head:
        raise HistoryError(f"{path.name}: not a CSV text file (it contains binary data)")
    first = head.split(b"\n", 1)[0]
    try:
        text = first.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise HistoryError(f"{path.name}: not a UTF-8 CSV text file") from None
    header = next(csv.reader(io.StringIO(text)), [])
    if not any(name.strip() for name in header):
        raise HistoryError(f"{path.name}: the first line must name the columns")
    _check_last_line(path, len(header))
    return header


def _check_last_line(path: Path, fields: int) -> None:
    size = path.stat().st_size
    with open(path, "rb") as handle:
        handle.seek(max(0, size - _PROBE_BYTES))
        tail = handle.read()
    if tail.endswith((b"\n", b"\r")) or b"\n" not in tail:
        return
    last = tail.rsplit(b"\n", 1)[1].decode("utf-8", errors="replace")
    seen = len(next(csv.reader(io.StringIO(last)), []))
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
        raise HistoryError(f"{path.name}: not a readable Parquet file ({error})") from None


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
    import pandas as pd

    size = max(path.stat().st_size, 1)
    start = 0
    with open(path, "rb") as handle:
        try:
            reader = pd.read_csv(
                handle,
                usecols=columns,
                chunksize=chunk_rows,
                skip_blank_lines=False,
                encoding="utf-8-sig",
            )
            with reader:
                for frame in reader:
                    rows = len(frame)
                    yield Chunk(
                        {name: frame[name] for name in columns},
                        start,
                        rows,
                        min(handle.tell() / size, 1.0),
                    )
                    start += rows
        except pd.errors.ParserError as error:
            raise HistoryError(f"{path.name}: {_parser_message(error)}") from None
        except UnicodeDecodeError:
            raise HistoryError(
                f"{path.name}: not a UTF-8 CSV text file (undecodable bytes after "
                f"{location(path, start)})"
            ) from None
        except pd.errors.EmptyDataError:
            raise HistoryError(f"{path.name}: the file is empty") from None
        except ValueError as error:  # pandas' remaining complaints about the file's layout
            raise HistoryError(f"{path.name}: cannot be read as CSV ({error})") from None


def _parser_message(error: Exception) -> str:
    text = str(error).strip()
    marker = "C error: "
    return text.split(marker, 1)[1] if marker in text else text


def _parquet_chunks(path: Path, columns: list[str], chunk_rows: int) -> Iterator[Chunk]:
    parquet = _parquet_file(path)
    total = max(parquet.metadata.num_rows, 1)
    start = 0
    try:
        for batch in parquet.iter_batches(batch_size=chunk_rows, columns=columns):
            frame = batch.to_pandas()
            rows = len(frame)
            start_next = start + rows
            yield Chunk({name: frame[name] for name in columns}, start, rows,
                        min(start_next / total, 1.0))
            start = start_next
    except OSError as error:
        raise HistoryError(f"{path.name}: the Parquet file cannot be read ({error})") from None


def numbers(series, column: str, *, proportion: bool, path, start: int) -> np.ndarray:
    """A column chunk as float64 with nan for missing cells.

    Raises
    ------
    HistoryError
        On the first cell that is not a number (or, for a proportion, not 0/1 or true/false),
        naming the column and its line.
    """
    values = series.to_numpy()
    if values.dtype.kind in "biuf":
        out = values.astype(np.float64, copy=False)
    else:
        out = _parse_cells(values, column, proportion=proportion, path=path, start=start)
    if not proportion:
        bad = np.isinf(out)
        if bad.any():
            raise _cell_error(path, column, start, int(np.argmax(bad)), out, "is infinite")
        return out
    bad = ~(np.isnan(out) | (out == 0.0) | (out == 1.0))
    if bad.any():
        raise _cell_error(path, column, start, int(np.argmax(bad)), out,
                          "is not 0/1 or true/false, as a proportion needs")
    return out


def _parse_cells(values: np.ndarray, column: str, *, proportion: bool, path, start: int):
    import pandas as pd

    cells = pd.Series(values, dtype=object)
    missing = cells.isna().to_numpy().copy()
    text = cells.where(~missing, "").astype(str).str.strip()
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
        raise HistoryError(
            f"{Path(path).name}: column {column!r} has {text.iloc[i][:40]!r} on "
            f"{location(path, start + i)}, which is not a number"
        )
    return out


def _cell_error(path, column: str, start: int, index: int, values, what: str) -> HistoryError:
    shown = f"{float(values[index]):g}"
    return HistoryError(
        f"{Path(path).name}: column {column!r} has {shown} on "
        f"{location(path, start + index)}, which {what}"
    )
