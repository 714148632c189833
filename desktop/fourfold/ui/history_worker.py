"""The history import's worker: a reading job on a thread of its own.

A job is a file read (:func:`fourfold.history.sources.summarise`, by the streaming reader in
short chunks so that the progress bar and Cancel stay lively, or by DuckDB) or a query run in a
warehouse (:class:`fourfold.history.connect.WarehouseQuery`). The worker always ends with one of
its signals, whatever goes wrong.
"""

from __future__ import annotations

import math
import threading

from PySide6.QtCore import QObject, Signal, Slot

from fourfold.errors import FourfoldError
from fourfold.history import ColumnMap, HistoryCancelled

CHUNK_ROWS = 50_000  # short chunks keep the progress bar and Cancel lively


class FileJob:
    """Read a local history with the engine the dialog chose."""

    def __init__(self, path: str, mapping: list[ColumnMap], *, engine: str = "auto",
                 unit: str | None = None, time: str | None = None) -> None:
        self.path, self.mapping = path, mapping
        self.options = {"engine": engine, "unit": unit, "time": time}
        self.name = path

    def __call__(self, progress, cancel):
        from fourfold.history.sources import choose_engine, summarise

        options = dict(self.options)
        if choose_engine(self.path, self.mapping, options["engine"],
                         options["unit"]) == "stream":
            options["chunk_rows"] = CHUNK_ROWS
        return summarise(self.path, self.mapping, progress=progress, cancel=cancel, **options)

    def cancel(self) -> None:
        """Nothing to do: the reader polls ``cancel`` between chunks."""


class QueryJob:
    """Run the history query in a warehouse; cancelled through the driver."""

    def __init__(self, query) -> None:
        self.query = query
        self.name = query.source

    def __call__(self, progress, cancel):
        return self.query.run()

    def cancel(self) -> None:
        self.query.cancel()


class HistoryWorker(QObject):
    """Runs a job on the worker thread and reports through signals."""

    progress = Signal(float, int)
    finished = Signal(object)
    failed = Signal(str)
    cancelled = Signal()

    def __init__(self, job, stop: threading.Event) -> None:
        super().__init__()
        self.job, self.stop = job, stop

    @Slot()
    def run(self) -> None:
        try:
            summary = self.job(self.progress.emit, self.stop.is_set)
        except HistoryCancelled:
            self.cancelled.emit()
        except FourfoldError as error:
            self.failed.emit(str(error))
        except (OSError, MemoryError) as error:
            self.failed.emit(f"{self.job.name}: {error}")
        except Exception as error:  # a bug, but the thread must still end and say so
            self.failed.emit(f"internal error while reading {self.job.name}: {error!r}")
        else:
            if self.stop.is_set():
                self.cancelled.emit()
            else:
                self.finished.emit(summary)


def rate_text(rows: int, seconds: float) -> str:
    """Rows per second as shown under the progress bar.

    Examples
    --------
    >>> rate_text(1_000_000, 0.5)
    '2,000,000 rows/s'
    """
    if not seconds > 0 or not math.isfinite(seconds):
        return ""
    return f"{rows / seconds:,.0f} rows/s"
