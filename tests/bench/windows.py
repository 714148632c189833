"""Window helpers shared by the benchmark scripts in this folder (imported as ``windows``: a
script's own folder is on ``sys.path`` when it runs): a shown window on a plan, steps timed
against :func:`fourfold.plan.evaluation.compute` of the plan on show, and their report."""

from __future__ import annotations

import os
import statistics
import tempfile
import time

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the fourfold command sets it


def open_window(plan):
    """``(app, window)``: a 1400 × 900 window on ``plan`` with throw-away settings, shown."""
    from PySide6.QtCore import QSettings

    from fourfold.ui.app import application
    from fourfold.ui.main_window import MainWindow

    app = application()
    scratch = tempfile.mkdtemp()
    window = MainWindow(plan, None, QSettings(os.path.join(scratch, "s.ini"),
                                              QSettings.Format.IniFormat), data_dir=scratch)
    window.resize(1400, 900)
    window.show()
    app.processEvents()
    return app, window


def close_window(app, window) -> None:
    """Close the window without a prompt and let Qt delete it."""
    window.document.stack.mark_clean()
    window.close()
    window.deleteLater()
    app.processEvents()


def paired(app, window, step, count: int) -> tuple[list[float], list[float], list[float]]:
    """Time ``step(k)`` through to the repaint ``count`` times, each after the reference.

    Reference and steps alternate, so that both see the same machine (a shared machine's speed
    drifts by a factor of two between runs). Returns the three lists of seconds: the
    reference, the step through to the end of its redraws, and the step to the table's first
    repaint (the plots and the scenarios tab are redrawn in the turns after it).
    """
    from PySide6.QtCore import QEvent, QObject

    from fourfold.plan.evaluation import compute

    class Painted(QObject):
        at = None

        def eventFilter(self, obj, event):  # noqa: N802 (Qt's name)
            if event.type() == QEvent.Type.Paint and self.at is None:
                self.at = time.perf_counter()
            return False

    painted = Painted()
    window.table.viewport().installEventFilter(painted)
    reference, timings, first = [], [], []
    for k in range(count):
        start = time.perf_counter()
        compute(window.document.plan)
        reference.append(time.perf_counter() - start)
        painted.at = None
        start = time.perf_counter()
        step(k)
        app.processEvents()  # the coalesced recompute, the views and the repaint
        app.processEvents()  # anything posted meanwhile
        timings.append(time.perf_counter() - start)
        first.append((painted.at or time.perf_counter()) - start)
    window.table.viewport().removeEventFilter(painted)
    return reference, timings, first


def report(name: str, reference: list[float], timings: list[float],
           first: list[float]) -> None:
    """Print the median of ``timings``, its quartiles and its ratio to the reference's, and the
    median of the first repaints."""
    ms, ref = statistics.median(timings) * 1e3, statistics.median(reference) * 1e3
    low, high = (statistics.quantiles(timings, n=4)[k] * 1e3 for k in (0, 2))
    table = statistics.median(first) * 1e3
    print(f"{name}: compute alone {ref:.1f} ms; table repainted {table:.1f} ms; all redrawn "
          f"{ms:.1f} ms (quartiles {low:.1f}–{high:.1f}; target ≤ 16 ms); ratio {ms / ref:.2f}")
