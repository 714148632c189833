"""Window benchmarks (run on demand: ``python3 tests/bench/bench_window.py``).

1. Start-up: process start to the first painted window, through the command line
   (``fourfold`` on the bundled sample plan: :func:`fourfold.cli.main`, as a user starts it),
   median of 7 subprocess runs, each after a reference run (target ≤ 1.3 × the reference).
   Reference, measured in the same run: a process that only imports PySide6.QtWidgets,
   pyqtgraph and scipy.special (the floor no window can beat). "First painted" is the table's
   first paint; the trade-off plots are built right after it, and the time to their first paint
   is printed too. The processes run with their own empty settings and data folders and may
   write bytecode (an installed package has its ``.pyc`` files; one untimed run of each writes
   them first). The process imports the window's modules in the command's order before the
   classes it watches the paint with (PySide6 is slower to import modules after it).
2. Edit: one cell edit of a 500-row plan → recomputed, table repainted, plots redrawn; median of
   60 edits (target ≤ 16 ms). Reference: :func:`fourfold.plan.evaluation.compute` alone on the
   same plan without the row cache, measured before each edit. The same again with the sample's
   reach curve and ramp-up (its returning-visitors scenario's traffic): days from a curve should
   add nothing noticeable.
3. Looks: the number of interim looks changed, 1 → 5 with every design met for the first time,
   on the sample plan and on a 500-row plan, to the table's first repaint (target ≤ 16 ms); the
   500-row plan again with its rows solved afresh too, and the 500-row plan with its rows and
   designs met afresh, stepped by one look with the spin box's arrow after the window was
   idle, and the same plan with numbers typed after the window was idle (1 → 3 → 7 → 12 →
   20; its work ahead for every other number of looks done) (:func:`looks`).
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
from fourfold import cli
from fourfold.ui import app as app_module
from PySide6.QtCore import QEvent, QObject
from PySide6.QtWidgets import QTableView
import pyqtgraph

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


def _rows(sample, count: int) -> list:
    import dataclasses

    return [dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}")
            for i in range(count)]


def edits(traffic: str = "constant", rows: int = 500) -> None:
    from windows import close_window, open_window, paired, report

    from fourfold.plan import Plan, effective, load, sample_path
    from fourfold.ui.columns import column_index

    sample = load(sample_path())
    settings = sample.settings
    if traffic == "reach":
        returning = next(s.name for s in sample.scenarios if "reach" in s.settings)
        settings = effective(sample, returning).settings
    app, window = open_window(Plan(settings, _rows(sample, rows)))
    model = window.model
    column = column_index("sd")
    row = 1
    window.table.setCurrentIndex(model.index(row, column))
    app.processEvents()
    count = EDITS if rows <= 5_000 else EDITS // 2
    reference, timings, first = paired(app, window, lambda step: model.setData(
        model.index(row, column), f"{14.0 + 0.01 * step:.2f}"), count)
    report(f"edit of a {rows:,}-row plan ({traffic} traffic) → table and plots", reference,
           timings, first)
    close_window(app, window)


LOOKS = (2, 3, 4, 5)
TYPED = (3, 7, 12, 20)
LOOK_RUNS = 5


def looks(rows: int | None = None, fresh: bool = False, stepped: bool = False,
          typed: bool = False) -> None:
    """The number of interim looks changed (1 → 2 → 3 → 4 → 5, each met for the first time:
    the design caches are emptied before each run) on the sample plan (7 rows, 4 scenarios;
    ``rows`` None) or a plan of ``rows`` of its rows without scenarios: the time from the
    change to the table's first repaint with the new looks (target ≤ 16 ms) and to the end of
    its recompute and redraw. Reference: ``compute`` of the plan before the change, without a
    cache, measured before each change.

    After the first of the runs the document's pool of row results (shared by its scenarios'
    caches) holds every row at each number of looks, so the rows are taken from it and only
    the designs are made again. ``fresh`` empties that pool too before each run: the rows are
    solved as when a plan meets a number of looks for the first time, the path a user takes
    on a plan just opened (same target; each design met for the first time costs some
    milliseconds of it, see DEVELOPERS.md). ``stepped`` (with ``fresh``) steps the looks up by one
    with the spin box's arrow (:meth:`QSpinBox.stepUp`) after the window was idle, as a user
    steps them, its work ahead for the neighbouring numbers of looks done
    (:mod:`fourfold.plan.prepare`; the waits are not timed): the path of a step. ``typed``
    (with ``fresh``) types the numbers 3, 7, 12 and 20 into the field instead, each after the
    window was idle (its work ahead done for every other number of looks), timed from the
    Enter key: the path of a number typed. Waiting for the work ahead is not timed; the
    first wait of each run takes most of a second of processor time (see
    :mod:`fourfold.plan.prepare`)."""
    import statistics

    from PySide6.QtCore import QEvent, QObject, Qt
    from PySide6.QtTest import QTest
    from timing import forget_designs
    from windows import close_window, open_window

    from fourfold.plan import Plan, load, sample_path
    from fourfold.plan.evaluation import compute

    sample = load(sample_path())
    plan = sample if rows is None else Plan(sample.settings, _rows(sample, rows))
    app, window = open_window(plan)
    spin = window.settings_panel.fields["looks"]
    window.table.setCurrentIndex(window.model.index(0, 0))
    app.processEvents()

    class Painted(QObject):
        at = None

        def eventFilter(self, obj, event):  # noqa: N802 (Qt's name)
            if event.type() == QEvent.Type.Paint and self.at is None and computed:
                self.at = time.perf_counter()
            return False

    painted, computed = Painted(), []
    window.table.viewport().installEventFilter(painted)
    window.document.computed.connect(lambda: computed.append(True))
    numbers = TYPED if typed else LOOKS
    first = {k: [] for k in numbers}
    settled = {k: [] for k in numbers}
    reference = []
    for _ in range(LOOK_RUNS):
        spin.setValue(1)
        for _ in range(5):
            app.processEvents()
        forget_designs()
        if fresh:
            window.document._caches.pool.clear()
        for k in numbers:
            start = time.perf_counter()
            compute(window.document.plan)
            reference.append(time.perf_counter() - start)
            computed.clear()
            painted.at = None
            if stepped or typed:
                while window.work_ahead.preparing():
                    app.processEvents()
            if typed:
                spin.setFocus()
                QTest.keyClick(spin, Qt.Key.Key_A, Qt.KeyboardModifier.ControlModifier)
                QTest.keyClicks(spin, str(k))
                start = time.perf_counter()
                QTest.keyClick(spin, Qt.Key.Key_Return)
            elif stepped:
                start = time.perf_counter()
                spin.stepUp()
            else:
                start = time.perf_counter()
                spin.setValue(k)
            while painted.at is None:
                app.processEvents()
            first[k].append(painted.at - start)
            while window.document.pending() or window.plots._redraw_timer.isActive():
                app.processEvents()
            app.processEvents()
            settled[k].append(time.perf_counter() - start)
    ref = statistics.median(reference) * 1e3
    name = (f"the sample plan ({len(sample.metrics)} rows, {len(sample.scenarios)} scenarios)"
            if rows is None else f"a {rows}-row plan")
    if fresh:
        name += ", its rows solved afresh (no pooled rows)"
    if stepped:
        name += ", stepped by one after the window was idle"
    if typed:
        name += ", numbers typed after the window was idle"
    print(f"looks changed, {name}: compute alone {ref:.1f} ms")
    for k in numbers:
        shown, done = statistics.median(first[k]) * 1e3, statistics.median(settled[k]) * 1e3
        print(f"  to {k} looks: first repaint {shown:.1f} ms (target ≤ 16 ms; ratio "
              f"{shown / ref:.2f}); all redrawn {done:.1f} ms")
    close_window(app, window)


if __name__ == "__main__":
    chosen = sys.argv[1:] or ["startup", "edits", "looks"]
    if "startup" in chosen:
        startup()
    if "edits" in chosen:
        edits()
        edits("reach")
        edits(rows=5_000)
        edits(rows=20_000)
    if "looks" in chosen:
        looks()
        looks(500)
        looks(500, fresh=True)
        looks(500, fresh=True, stepped=True)
        looks(500, fresh=True, typed=True)
