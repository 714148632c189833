"""Speed of the trade-off plots against one evaluation of the plan, in the same run.

Run on demand: ``python3 tests/bench/bench_plots.py``. On the bundled demo plan (invented
Quillmoss scenario) it times, per metric row, the curve data of the four figures
(``fourfold.plan.tradeoffs.tradeoffs``) and one redraw of the window's plot panel (curve data
plus pyqtgraph ``setData`` and a repaint offscreen), and prints each as a ratio to the time of
``compute(plan)`` (every row of the plan once) measured in the same run. With interim looks
it times the first call (group sequential designs to build) and a repeated one.

Targets: curve data of a row ≤ 3 × ``compute(plan)``; a panel redraw ≤ 50 ms, so that
dragging the effect marker follows the mouse.
"""

import dataclasses
import os
import statistics
import time

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from PySide6.QtWidgets import QApplication  # noqa: E402

from fourfold.plan import load, sample_path  # noqa: E402
from fourfold.plan.evaluation import compute  # noqa: E402
from fourfold.plan.tradeoffs import tradeoffs  # noqa: E402

REPEATS = 7


def best(func, repeats=REPEATS):
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return min(times), statistics.median(times)


def main() -> None:
    app = QApplication.instance() or QApplication([])
    from fourfold.ui.plots import PlotPanel

    plan = load(sample_path())
    result = compute(plan)
    reference, _ = best(lambda: compute(plan))
    print(f"compute(plan), {len(plan.metrics)} rows: {reference * 1e3:.1f} ms (reference)")

    panel = PlotPanel()
    panel.resize(1300, 500)
    panel.show()
    app.processEvents()

    def redraw(index):
        panel.show_row(plan, result, index)
        app.processEvents()
        panel.grid.viewport().repaint()

    print(f"{'row':<32}{'curves ms':>10}{'× compute':>11}{'redraw ms':>11}")
    for index, metric in enumerate(plan.metrics):
        curves, _ = best(lambda index=index: tradeoffs(plan, index, result))
        drawn, _ = best(lambda index=index: redraw(index))
        print(f"{metric.name:<32}{curves * 1e3:>10.1f}{curves / reference:>11.2f}"
              f"{drawn * 1e3:>11.1f}")

    staged = dataclasses.replace(plan, settings=dataclasses.replace(plan.settings, looks=4))
    staged_result = compute(staged)
    start = time.perf_counter()
    tradeoffs(staged, 0, staged_result)
    first = time.perf_counter() - start
    again, _ = best(lambda: tradeoffs(staged, 0, staged_result))
    print(f"4 looks, row 1: first {first * 1e3:.0f} ms, again {again * 1e3:.1f} ms "
          f"({again / reference:.2f} × compute)")

    panel.close()
    panel.deleteLater()
    app.processEvents()


if __name__ == "__main__":
    main()
