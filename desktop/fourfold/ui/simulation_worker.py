"""Run a plan's simulation check in a worker thread, with progress and cancellation.

The job works on a copy of the plan taken when it starts, so nothing the window does can
race with it; it never touches the document. The dialog applies its result as one undoable
edit when the job has finished.
"""

from __future__ import annotations

import copy
import threading
import time

from PySide6.QtCore import QObject, Qt, QThread, Signal, Slot

from fourfold.errors import FourfoldError
from fourfold.simulation import SimulationCancelled, check_plan


def remaining_text(elapsed, done, total):
    """A plain estimate of the time left from the pace so far.

    Examples
    --------
    >>> remaining_text(2.0, 100, 400)
    'about 6 s left'
    >>> remaining_text(0.0, 0, 400)
    'estimating the time left…'
    >>> remaining_text(30.0, 10, 100)
    'about 4 min 30 s left'
    """
    if done <= 0 or elapsed <= 0:
        return "estimating the time left…"
    left = elapsed * (total - done) / done
    if left < 1:
        return "less than a second left"
    if left < 60:
        return f"about {left:.0f} s left"
    minutes, seconds = divmod(round(left), 60)
    return f"about {minutes} min {seconds} s left"


class SimulationJob(QObject):
    """A check of some rows of a plan, run by :func:`fourfold.simulation.check_plan`.

    ``load_history``, when given, is called on the worker thread and returns the historical
    values to bootstrap from (reading a large file does not block the window).

    Signals
    -------
    progressed(int, int)
        Replicates done and in all (both scenarios of every row).
    finished(object)
        The :class:`fourfold.simulation.PlanCheck`.
    failed(str)
        A message for the user; nothing was computed.
    cancelled()
        The user cancelled; nothing was computed.
    """

    progressed = Signal(int, int)
    finished = Signal(object)
    failed = Signal(str)
    cancelled = Signal()

    def __init__(self, plan, rows=None, *, reps=2000, seed=0, load_history=None,
                 history_effect="shift") -> None:
        super().__init__()
        self.plan = copy.deepcopy(plan)
        self.rows = None if rows is None else list(rows)
        self.reps = reps
        self.seed = seed
        self.load_history = load_history
        self.history_effect = history_effect
        self.started_at = None
        self._stop = threading.Event()

    def cancel(self) -> None:
        """Ask the job to stop at the next chunk of replicates (safe from any thread)."""
        self._stop.set()

    @property
    def stopping(self) -> bool:
        """Whether cancel() was called (a result arriving after it must not be used)."""
        return self._stop.is_set()

    @Slot()
    def run(self) -> None:
        """Run the check; ends with exactly one of ``finished``, ``failed``, ``cancelled``."""
        self.started_at = time.monotonic()
        try:
            history = None if self.load_history is None else self.load_history()
            outcome = check_plan(
                self.plan, rows=self.rows, reps=self.reps, seed=self.seed,
                history=history, history_effect=self.history_effect,
                progress=lambda done, total: self.progressed.emit(done, total),
                cancelled=self._stop.is_set,
            )
        except SimulationCancelled:
            self.cancelled.emit()
        except (FourfoldError, ValueError, MemoryError) as error:
            self.failed.emit(str(error))
        else:
            self.finished.emit(outcome)


def start_in_thread(job: SimulationJob, parent: QObject) -> QThread:
    """Move ``job`` to a new thread and start it; the thread quits when the job ends."""
    thread = QThread(parent)
    job.moveToThread(thread)
    thread.started.connect(job.run)
    for signal in (job.finished, job.failed, job.cancelled):
        # Direct: quit from the worker thread, so a main thread blocked in wait() wakes.
        signal.connect(thread.quit, Qt.ConnectionType.DirectConnection)
    thread.start()
    return thread
