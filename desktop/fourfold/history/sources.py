"""Which engine reads a history: the streaming reader or DuckDB, chosen per format and job.

:func:`summarise` is the entry point of the command line and the window for local data. The
``engine`` is ``"stream"`` (:func:`fourfold.history.read_history`), ``"duckdb"``
(:mod:`fourfold.history.duckdb_files`) or ``"auto"``: the engine :data:`FASTER` names for the
file's format and the job (with or without reach and windows) — the faster of the two as
measured by ``tests/bench/bench_history.py``, but for CSV text always the streaming reader —
when DuckDB is installed and can do the job (not a cap nor a quantile: a percentile does not
merge). Under ``auto``, if
DuckDB refuses the file — a cell it cannot cast, a true/false word it does not know — the
streaming reader reads it instead, and either gives the figures or names the line at fault.
A glob of several files needs DuckDB.
"""

from __future__ import annotations

import os
from collections.abc import Sequence

from fourfold.history.errors import HistoryCancelled, HistoryError
from fourfold.history.reader import is_parquet
from fourfold.history.summary import ColumnMap, HistorySummary

ENGINES = ("auto", "stream", "duckdb")
FASTER = {("csv", "moments"): "stream", ("csv", "units"): "stream",
          ("parquet", "moments"): "duckdb", ("parquet", "units"): "stream"}
"""The engine ``auto`` takes per format and job (the moments alone, or with a unit and a time
column the reach and windows too): the faster as measured by ``tests/bench/bench_history.py``
(see the README's benchmark section for the figures: DuckDB reads the moments faster, the
streaming reader the reach and windows) — except CSV moments, which stay with the streaming
reader although DuckDB measured 9 % faster (1.40 s against 1.53 s at 10⁷ rows): DuckDB's CSV
scanner reads damaged text differently instead of refusing it (it skips blank lines, which the
streaming reader counts as rows of empty cells; it reads NUL bytes past its sample and a quote
left open as text), and the engine ``auto`` picks must not change the answer."""


def duckdb_installed() -> bool:
    """Whether the optional duckdb package can be imported."""
    try:
        import duckdb  # noqa: F401
    except ImportError:
        return False
    return True


def choose_engine(data: str | os.PathLike, mapping: Sequence[ColumnMap],
                  engine: str = "auto", unit: str | None = None) -> str:
    """The engine that reads ``data``: ``"stream"`` or ``"duckdb"``.

    Examples
    --------
    >>> choose_engine("h.csv", [ColumnMap("mean", "x", cap=99.0)])
    'stream'
    """
    from fourfold.history.duckdb_files import EXTRA, is_glob

    if engine not in ENGINES:
        raise HistoryError(f"engine must be one of {', '.join(ENGINES)}, not {engine!r}")
    several = is_glob(str(data))
    if engine == "stream":
        if several:
            raise HistoryError(f"{data}: the streaming reader reads one file; read a glob "
                               "with --engine duckdb")
        return engine
    if engine == "duckdb" or several:
        if not duckdb_installed():
            raise HistoryError(f"reading with DuckDB needs the optional duckdb package "
                               f"({EXTRA})")
        return "duckdb"
    capped = any(spec.cap is not None or spec.kind == "quantile" for spec in mapping)
    job = "moments" if unit is None else "units"
    faster = FASTER["parquet" if is_parquet(data) else "csv", job]
    return "duckdb" if faster == "duckdb" and not capped and duckdb_installed() else "stream"


def summarise(data: str | os.PathLike, mapping: Sequence[ColumnMap], *, engine: str = "auto",
              unit: str | None = None, time: str | None = None, progress=None, cancel=None,
              **stream_options) -> HistorySummary:
    """The summary of a local history with the engine :func:`choose_engine` picks."""
    from fourfold.history.importer import read_history

    chosen = choose_engine(data, mapping, engine, unit)
    if chosen == "stream":
        return read_history(data, mapping, unit=unit, time=time, progress=progress,
                            cancel=cancel, **stream_options)
    from fourfold.history.duckdb_files import is_glob, read_with_duckdb

    try:
        return read_with_duckdb(str(data), mapping, unit=unit, time=time, progress=progress,
                                cancel=cancel)
    except HistoryCancelled:
        raise
    except HistoryError:
        if engine == "duckdb" or is_glob(str(data)):
            raise
        return read_history(data, mapping, unit=unit, time=time, progress=progress,
                            cancel=cancel, **stream_options)
