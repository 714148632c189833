"""Window benchmarks (run on demand: ``python3 tests/bench/bench_window.py``).

1. Start-up: process start to the first painted window, through the command line
   (``fourfold`` on the bundled sample plan: :func:`fourfold.cli.main`, as a user starts it),
   median of 7 subprocess runs, each after a reference run (target ≤ 1.3 × the reference).
   Reference, measured in the same run: a process that only imports PySide6.QtWidgets,
   pyqtgraph and scipy.special (the floor no window can beat). "First painted" is the table's
   first paint; the trade-off plots are built right after it, and the time to their first paint
   is printed too. The processes run with their own empty settings and data folders and may
   write bytecode (an installed package has its ``.pyc`` files; one untimed run of each writes
   them first).
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
import tempfile
import time

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the fourfold command sets it

RUNS = 7
EDITS = 60
STARTUP_TARGET = 1.3

IMPORTS_ONLY = """
import PySide6.QtWidgets, pyqtgraph, scipy.special
print("ready", flush=True)
"""

FIRST_PAINT = """
import os
from PySide6.QtCore import QEvent, QObject
from PySide6.QtWidgets import QApplication, QTableView
import pyqtgraph
from fourfold import cli
from fourfold.ui import app as app_module

class Watch(QObject):
    table = False

    def eventFilter(self, obj, event):
        if event.type() == QEvent.Type.Paint:
            if not self.table and isinstance(obj.parent(), QTableView):
                self.table = True
                print("ready", flush=True)
            elif self.table and isinstance(obj.parent(), pyqtgraph.GraphicsView):
                print("plots", flush=True)
                os._exit(0)
        return False

watch = Watch()
made = app_module.application

def application():
    app = made()
    app.installEventFilter(watch)
    return app

app_module.application = application
cli.main([])
"""


def _environment(folder: str) -> dict:
    environment = dict(os.environ, XDG_CONFIG_HOME=folder, XDG_DATA_HOME=folder,
                       XDG_CACHE_HOME=folder)
    environment.pop("PYTHONDONTWRITEBYTECODE", None)
    return environment


def _time_process(code: str, environment: dict) -> list[float]:
    """Seconds from the process's start to each line it prints."""
    start = time.perf_counter()
    process = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE,
                               stderr=subprocess.DEVNULL, text=True, env=environment)
    times, lines = [], []
    for line in process.stdout:
        times.append(time.perf_counter() - start)
        lines.append(line.strip())
    process.wait()
    if not lines or lines[0] != "ready":
        raise RuntimeError(f"the benchmark process failed (exit {process.returncode})")
    return times


def startup() -> None:
    with tempfile.TemporaryDirectory() as folder:
        environment = _environment(folder)
        _time_process(IMPORTS_ONLY, environment)  # bytecode written, files cached
        _time_process(FIRST_PAINT, environment)
        reference, window, plots = [], [], []
        for _ in range(RUNS):
            reference.append(_time_process(IMPORTS_ONLY, environment)[0])
            painted = _time_process(FIRST_PAINT, environment)
            window.append(painted[0])
            plots.append(painted[-1])
    ref, first = statistics.median(reference), statistics.median(window)
    print(f"start-up: imports only {ref:.3f} s; first painted window {first:.3f} s, ratio "
          f"{first / ref:.2f} (target ≤ {STARTUP_TARGET}); plots painted "
          f"{statistics.median(plots):.3f} s, ratio {statistics.median(plots) / ref:.2f}")


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
