"""A first column mapping guessed from the top of a history file (the dialog's starting point).

The guess only looks at the first rows and is meant to be corrected by the user: a column of
only 0/1 or true/false is a proportion, a column of non-negative whole numbers a count, any
other numeric column (at least 90 % numbers) a mean, and a column called ``pre_X`` (or
``X_pre``) is the pre-period column of ``X``. Text columns (identifiers) are left out; ratios
are never guessed.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from fourfold.history.errors import HistoryError
from fourfold.history.reader import iter_chunks, numbers, read_columns
from fourfold.history.summary import ColumnMap

SAMPLE_ROWS = 20_000


def _kind(values: np.ndarray) -> str:
    present = values[~np.isnan(values)]
    if present.size and np.isin(present, (0.0, 1.0)).all():
        return "proportion"
    if present.size and (present >= 0).all() and (present == np.floor(present)).all():
        return "count"
    return "mean"


def _mostly_numbers(series) -> np.ndarray | None:
    """The parsable cells of a column whose filled cells are at least 90 % numbers, else None
    (a numeric column with a few stray cells is still offered; reading it names the cells)."""
    import pandas as pd

    filled = series.dropna().astype(str).str.strip()
    filled = filled[filled != ""]
    parsed = pd.to_numeric(filled, errors="coerce").to_numpy(np.float64)
    good = np.isfinite(parsed)
    if filled.size == 0 or good.mean() < 0.9:
        return None
    return parsed[good]


def _pre_of(name: str, header: set[str]) -> str | None:
    lowered = name.lower()
    for prefix in ("pre_", "pre-", "pre "):
        if lowered.startswith(prefix) and name[len(prefix):] in header:
            return name[len(prefix):]
    for suffix in ("_pre", "-pre", " pre"):
        if lowered.endswith(suffix) and name[: -len(suffix)] in header:
            return name[: -len(suffix)]
    return None


def guess_mapping(path: str | os.PathLike) -> tuple[list[str], list[ColumnMap]]:
    """The file's columns and a guessed mapping of its numeric columns.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> text = "id,bought,spend,pre_spend,visits\\nu1,0,1.5,2.0,3\\nu2,1,0.0,1.0,1\\n"
    >>> _ = (folder / "h.csv").write_text(text)
    >>> columns, mapping = guess_mapping(folder / "h.csv")
    >>> [(m.kind, m.column, m.pre) for m in mapping]
    [('proportion', 'bought', None), ('mean', 'spend', 'pre_spend'), ('count', 'visits', None)]
    """
    path = Path(path)
    header = read_columns(path)
    unique = list(dict.fromkeys(header))
    chunk = next(iter_chunks(path, unique, SAMPLE_ROWS), None)
    if chunk is None or chunk.rows == 0:
        raise HistoryError(f"{path.name}: the file has a header line but no rows")
    kinds: dict[str, str] = {}
    for column in unique:
        try:
            values = numbers(chunk.columns[column], column, proportion=True, path=path, start=0)
            kinds[column] = "proportion"
        except HistoryError:
            try:
                values = numbers(chunk.columns[column], column, proportion=False, path=path,
                                 start=0)
            except HistoryError:
                values = _mostly_numbers(chunk.columns[column])
                if values is None:
                    continue
            kinds[column] = _kind(values)
    known = set(kinds)
    pre = {}
    for column in kinds:
        target = _pre_of(column, known)
        if target is not None:
            pre[target] = column
    mapping = []
    for column, kind in kinds.items():
        if column in pre.values():
            continue
        mapping.append(ColumnMap(kind, column, pre=pre.get(column)))
    return header, mapping


_ID_WORDS = ("visitor", "user", "unit", "customer", "client", "account", "member", "device",
             "id")


def guess_units(path: str | os.PathLike, mapping: list[ColumnMap]) -> tuple[str | None,
                                                                             str | None]:
    """A unit column and a time column for the reach curve and windows, or (None, None).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> text = "visitor,time,spend\\nu1,2026-03-01 08:00:00,1.5\\nu2,2026-03-02 09:00:00,0\\n"
    >>> _ = (folder / "h.csv").write_text(text)
    >>> guess_units(folder / "h.csv", [ColumnMap("mean", "spend")])
    ('visitor', 'time')
    """
    from fourfold.history.days import DATES, DayReader

    path = Path(path)
    header = list(dict.fromkeys(read_columns(path)))
    chunk = next(iter_chunks(path, header, SAMPLE_ROWS), None)
    if chunk is None or chunk.rows == 0:
        return None, None
    used = {column for spec in mapping for column in spec.columns}
    time = None
    for column in header:
        if column in used:
            continue
        reader = DayReader(column)
        try:
            reader(chunk.columns[column], str)
        except HistoryError:
            continue
        if reader.form == DATES:
            time = column
            break
    if time is None:
        return None, None
    candidates = [c for c in header if c not in used and c != time
                  and chunk.columns[c].dtype.kind not in "fb"]
    named = [c for c in candidates if any(word in c.lower() for word in _ID_WORDS)]
    unit = (named or candidates or [None])[0]
    return (unit, time) if unit is not None else (None, None)
