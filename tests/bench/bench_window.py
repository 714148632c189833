"""Window benchmarks (run on demand: ``python3 tests/bench/bench_window.py``).

1. Start-up: process start to the first painted window on the sample plan, median of 5
   subprocess runs (target ≤ 1.2 s). Reference, measured in the same run: a process that only
   imports PySide6.QtWidgets, pyqtgraph and scipy.special (the floor no window can beat).
2. Edit: one cell edit of a 500-row plan → recomputed, table repainted, plots redrawn; median of
   60 edits (target ≤ 16 ms). Reference: :func:`fourfold.plan.evaluation.compute` alone on the
   same plan without the row cache, measured before each edit. The same again with the sample's
   reach curve and ramp-up (its returning-visitors scenario's traffic): days from a curve should
   add nothing noticeable.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the fourfold command sets it

RUNS = 5
EDITS = 60

IMPORTS_ONLY = """
import PySide6.QtWidgets, pyqtgraph, scipy.special
print("ready", flush=True)
"""

FIRST_PAINT = """
import os, sys, tempfile
from PySide6.QtCore import QEvent, QObject, QSettings
from PySide6.QtWidgets import QApplication
from fourfold.plan import load, sample_path
from fourfold.ui.app import application
from fourfold.ui.main_window import MainWindow

app = application()
scratch = tempfile.mkdtemp()
window = MainWindow(load(sample_path()), None,
                    QSettings(os.path.join(scratch, "s.ini"), QSettings.Format.IniFormat),
                    data_dir=scratch)

class FirstPaint(QObject):
    def eventFilter(self, obj, event):
        if event.type() == QEvent.Type.Paint:
            print("ready", flush=True)
            app.quit()
        return False

watcher = FirstPaint()
window.table.viewport().installEventFilter(watcher)
window.resize(1400, 900)
window.show()
app.exec()
window.document.stack.mark_clean()
window.close()
window.deleteLater()
app.processEvents()
"""


def _time_process(code: str) -> float:
    start = time.perf_counter()
    process = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE,
                               stderr=subprocess.DEVNULL, text=True)
    line = process.stdout.readline()
    elapsed = time.perf_counter() - start
    process.wait()
    if line.strip() != "ready":
        raise RuntimeError(f"the benchmark process failed (exit {process.returncode})")
    return elapsed


def startup() -> None:
    reference = statistics.median(_time_process(IMPORTS_ONLY) for _ in range(RUNS))
    window = statistics.median(_time_process(FIRST_PAINT) for _ in range(RUNS))
    print(f"start-up: imports only {reference:.3f} s; first painted window {window:.3f} s "
          f"(target ≤ 1.2 s); ratio {window / reference:.2f}")


def edits(traffic: str = "constant") -> None:
    import dataclasses

    from windows import close_window, open_window, paired, report

    from fourfold.plan import Plan, effective, load, sample_path
    from fourfold.ui.columns import column_index

    sample = load(sample_path())
    settings = sample.settings
    if traffic == "reach":
        returning = next(s.name for s in sample.scenarios if "reach" in s.settings)
        settings = effective(sample, returning).settings
    metrics = [dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}")
               for i in range(500)]
    app, window = open_window(Plan(settings, metrics))
    model = window.model
    column = column_index("sd")
    row = 1
    window.table.setCurrentIndex(model.index(row, column))
    app.processEvents()
    reference, timings = paired(app, window, lambda step: model.setData(
        model.index(row, column), f"{14.0 + 0.01 * step:.2f}"), EDITS)
    report(f"edit of a 500-row plan ({traffic} traffic) → table and plots", reference, timings)
    close_window(app, window)


if __name__ == "__main__":
    startup()
    edits()
    edits("reach")
