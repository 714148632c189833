"""The history query run by DuckDB over local CSV or Parquet files (optional extra ``duckdb``).

For files larger than memory, many files (``data/*.parquet``) or simply speed, the query of
:mod:`fourfold.history.sql` runs in an embedded DuckDB over the files themselves, and its result
is read with the same checks as any warehouse result
(:func:`fourfold.history.warehouse.read_warehouse_rows`). The files' names never enter the SQL:
DuckDB reads them into a view, and the query reads the view.

Before DuckDB reads anything, each file's header is checked as the streaming reader checks it
(:func:`fourfold.history.reader.read_columns`) and the mapping against it, so a missing column
or a damaged header gets the same message either way. Empty cells and the texts pandas reads as
missing (``NA``, ``NULL``, ``nan``, …) are missing for DuckDB too. DuckDB works within
:data:`MEMORY_LIMIT_MB` and spills to a temporary folder beyond it. A running query reports
DuckDB's own progress and stops on :meth:`DuckDBQuery.cancel` (DuckDB's ``interrupt``).
"""

from __future__ import annotations

import glob
import tempfile
import threading
from collections.abc import Callable, Sequence
from pathlib import Path

from fourfold.history.errors import HistoryCancelled, HistoryError
from fourfold.history.reader import is_parquet, read_columns
from fourfold.history.sql import check_mapping, history_query
from fourfold.history.summary import ColumnMap, HistorySummary
from fourfold.history.summary import check_mapping as check_columns
from fourfold.history.warehouse import read_warehouse_rows

EXTRA = "pip install 'fourfold[duckdb]'"
MEMORY_LIMIT_MB = 1024
"""DuckDB's memory limit here (it spills to a temporary folder beyond), as the streaming
reader's unit budget."""
VIEW = "fourfold_history"
MISSING_TEXTS = ("", "#N/A", "#N/A N/A", "#NA", "-1.#IND", "-1.#QNAN", "-NaN", "-nan",
                 "1.#IND", "1.#QNAN", "<NA>", "N/A", "NA", "NULL", "NaN", "None", "n/a", "nan",
                 "null")
"""Cells read as missing: pandas' default missing-value texts (pandas 3.1 ``read_csv``)."""


def is_glob(text: str) -> bool:
    """Whether a path names several files with ``*``, ``?`` or ``[…]``."""
    return any(mark in str(text) for mark in "*?[")


def expand(pattern: str) -> list[Path]:
    """The files a path or glob names (sorted); HistoryError when there are none."""
    if not is_glob(pattern):
        path = Path(pattern)
        if not path.is_file():
            raise HistoryError(f"{path}: no such file")
        return [path]
    files = sorted(Path(name) for name in glob.glob(str(pattern)) if Path(name).is_file())
    if not files:
        raise HistoryError(f"{pattern}: no file matches")
    return files


def _duckdb():
    try:
        import duckdb
    except ImportError:
        raise HistoryError(
            f"reading with DuckDB needs the optional duckdb package ({EXTRA})"
        ) from None
    return duckdb


class DuckDBQuery:
    """The history query over local files, run once, cancellable from another thread.

    Parameters
    ----------
    data : str
        A CSV or Parquet file, or a glob of files of one format with the same columns.
    mapping, unit, time, group_by
        As for :func:`fourfold.history.sql.history_query` (no caps).
    """

    def __init__(self, data: str, mapping: Sequence[ColumnMap], *, unit: str | None = None,
                 time: str | None = None, group_by: str | None = None) -> None:
        self.files = expand(str(data))
        self.source = str(data) if len(self.files) > 1 else self.files[0].name
        parquet = {is_parquet(path) for path in self.files}
        if len(parquet) > 1:
            raise HistoryError(f"{data}: mixes CSV and Parquet files; read one format at once")
        self.parquet = parquet.pop()
        self.mapping = check_mapping(mapping)
        header = None
        for path in self.files:
            columns = read_columns(path)
            check_columns(self.mapping, columns, path.name, unit=unit, time=time)
            if header is not None and columns != header:
                raise HistoryError(f"{path.name}: its columns differ from "
                                   f"{self.files[0].name}'s")
            header = columns
        self.sql = history_query(self.mapping, VIEW, dialect="duckdb", unit=unit, time=time,
                                 group_by=group_by)
        self._connection = None
        self._cancelled = False
        self._lock = threading.Lock()

    def run(self, *, progress: Callable[[float, int], None] | None = None,
            cancel: Callable[[], bool] | None = None) -> HistorySummary:
        """Run the query; ``progress(fraction, 0)`` while it runs, ``cancel()`` polled."""
        duckdb = _duckdb()
        with tempfile.TemporaryDirectory(prefix="fourfold-duckdb-") as spill:
            connection = duckdb.connect(":memory:")
            try:
                connection.execute("SET temp_directory = ?", [spill])
                connection.execute(f"SET memory_limit = '{MEMORY_LIMIT_MB}MB'")
                connection.execute("SET enable_progress_bar = true")  # for query_progress()
                connection.execute("SET enable_progress_bar_print = false")
                _keep_casts_out_of_the_csv_scan(connection, duckdb)
                names = [str(path) for path in self.files]
                if self.parquet:
                    relation = connection.read_parquet(names)
                else:
                    relation = connection.read_csv(names, header=True,
                                                   na_values=list(MISSING_TEXTS))
                relation.to_view(VIEW)
                with self._lock:
                    self._connection = connection
                return self._execute(connection, progress, cancel)
            except HistoryCancelled:
                raise
            except duckdb.Error as error:
                if self._cancelled:
                    raise HistoryCancelled("the DuckDB query was cancelled") from None
                text = str(error).split("\n")[0]
                raise HistoryError(f"{self.source}: DuckDB cannot read it ({text[:300]})") \
                    from None
            finally:
                with self._lock:
                    self._connection = None
                connection.close()

    def _execute(self, connection, progress, cancel) -> HistorySummary:
        outcome: dict = {}

        def work() -> None:
            try:
                result = connection.execute(self.sql)
                outcome["columns"] = [d[0] for d in result.description]
                outcome["rows"] = result.fetchall()
            except Exception as error:  # handed to the calling thread
                outcome["error"] = error

        worker = threading.Thread(target=work, name="fourfold-duckdb", daemon=True)
        worker.start()
        while worker.is_alive():
            worker.join(0.1)
            if cancel is not None and cancel():
                self.cancel()
            if progress is not None and worker.is_alive():
                done = connection.query_progress()
                progress(max(done, 0.0) / 100.0, 0)
        if self._cancelled:
            raise HistoryCancelled("the DuckDB query was cancelled")
        if "error" in outcome:
            raise outcome["error"]
        if progress is not None:
            progress(1.0, 0)
        return read_warehouse_rows(outcome["columns"], outcome["rows"], self.mapping,
                                   source=self.source)

    def cancel(self) -> None:
        """Stop the running query (its result is not read)."""
        with self._lock:
            self._cancelled = True
            connection = self._connection
        if connection is not None:
            connection.interrupt()


def _keep_casts_out_of_the_csv_scan(connection, duckdb) -> None:
    """Turn off DuckDB's ``type_pushdown`` (DuckDB 2.0): it hands the query's
    ``CAST(col AS DOUBLE)`` to the CSV scanner, which then parses ``true``/``false`` cells as
    numbers and fails, where casting the scanned boolean gives 1/0 (duckdb/duckdb issue
    #22738 and its pull requests). Older DuckDB has no such optimizer."""
    try:
        connection.execute("SET disabled_optimizers = 'type_pushdown'")
    except duckdb.Error:
        pass


def read_with_duckdb(data: str, mapping: Sequence[ColumnMap], **options) -> HistorySummary:
    """:class:`DuckDBQuery` of ``data`` run once (``progress`` and ``cancel`` as for
    :func:`fourfold.history.read_history`)."""
    progress = options.pop("progress", None)
    cancel = options.pop("cancel", None)
    return DuckDBQuery(data, mapping, **options).run(progress=progress, cancel=cancel)
