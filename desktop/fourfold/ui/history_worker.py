"""The history import's worker: :func:`fourfold.history.read_history` on a thread of its own.

It reads in short chunks so that the dialog's progress bar and Cancel stay lively, and always
ends with one of its signals, whatever goes wrong.
"""

from __future__ import annotations

import math
import threading
from pathlib import Path

from PySide6.QtCore import QObject, Signal, Slot

from fourfold.errors import FourfoldError
from fourfold.history import ColumnMap, HistoryCancelled, read_history

CHUNK_ROWS = 50_000  # short chunks keep the progress bar and Cancel lively


class HistoryWorker(QObject):
    """Runs :func:`read_history` on the worker thread and reports through signals."""

    progress = Signal(float, int)
    finished = Signal(object)
    failed = Signal(str)
    cancelled = Signal()

    def __init__(self, path: str, mapping: list[ColumnMap], stop: threading.Event) -> None:
        super().__init__()
        self.path, self.mapping, self.stop = path, mapping, stop

    @Slot()
    def run(self) -> None:
        try:
            summary = read_history(self.path, self.mapping, chunk_rows=CHUNK_ROWS,
                                   progress=self.progress.emit, cancel=self.stop.is_set)
        except HistoryCancelled:
            self.cancelled.emit()
        except FourfoldError as error:
            self.failed.emit(str(error))
        except (OSError, MemoryError) as error:
            self.failed.emit(f"{Path(self.path).name}: {error}")
        except Exception as error:  # a bug, but the thread must still end and say so
            self.failed.emit(f"internal error while reading {Path(self.path).name}: {error!r}")
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
