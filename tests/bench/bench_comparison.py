"""Scenarios on the window's edit path: the comparison after an edit, and a switch.

Run on demand: ``python3 tests/bench/bench_comparison.py``.

Plan layer
----------

A 50-row plan (the sample plan's six rows repeated, named ``Metric i``) with 10 scenarios,
each changing a setting and a few rows (one leaves a row out), evaluated by
:func:`fourfold.plan.comparison.outcomes` with the document's per-scenario row caches, median
of 100:

1. one cell edit of the base (the sd of row 1, which every scenario inherits), then the whole
   comparison with the caches (target ≤ 16 ms, one frame, with the table's text to spare);
2. one cell edit in the active scenario, then the comparison with the caches;
3. the comparison with the caches and nothing changed.

Reference, measured in the same run: the comparison without caches (every row of every
scenario solved), printed with the ratio of each measurement to it.

Window
------
4. The same plan in the window with the scenarios tab on show: one cell edit of the base
   (through the table model, as the window benchmark edits) → recomputed, comparison and
   sensitivity bars refilled, repainted; median of 40 (target ≤ 16 ms).
5. The sample plan in the window: switching the scenario on show (Scenario → Next scenario,
   through its action) → table, settings, summary and plots (with the other scenarios'
   curves) repainted; median of 40 switches (target ≤ 16 ms).

Reference for both, measured in the same run between the steps:
:func:`fourfold.plan.evaluation.compute` of the plan on show without a cache.
"""

from __future__ import annotations

import dataclasses
import os
import statistics
import tempfile
import time

from timing import median_ms

from fourfold.plan import Plan, Scenario, load, sample_path
from fourfold.plan.commands import CommandStack, SetField
from fourfold.plan.comparison import Caches, outcomes, table
from fourfold.plan.evaluation import compute
from fourfold.plan.scenario_commands import SwitchScenario

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the fourfold command sets it
WINDOW_STEPS = 40

ROWS = 50
SCENARIOS = 10
REPEAT = 100
ROW = 1


def plan_with_scenarios() -> Plan:
    """The benchmark's plan: 50 rows, 10 scenarios of a few changes each."""
    sample = load(sample_path())
    metrics = [dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}",
                                   id=f"m{i}")
               for i in range(ROWS)]
    settings = [{"share": 0.5 + 0.05 * k} for k in range(SCENARIOS)]
    settings[3] = {"arms": 1}
    scenarios = [Scenario(f"Scenario {k}", settings[k],
                          {f"m{6 * k % ROWS}": {"effect": 0.06 + 0.001 * k},
                           f"m{(6 * k + 3) % ROWS}": {"sd": 0.7}},
                          [f"m{(6 * k + 5) % ROWS}"] if k == 5 else [])
                 for k in range(SCENARIOS)]
    return Plan(sample.settings, metrics, scenarios)


def main() -> None:
    stack = CommandStack(plan_with_scenarios())
    caches = Caches()
    outcomes(stack.plan, caches)
    step = iter(range(10**9))

    def edit():
        sd = 14.0 + 0.01 * (next(step) % 50)
        stack.do(SetField(ROW, "sd", sd))
        table(outcomes(stack.plan, caches), stack.plan)

    reference = median_ms(lambda: outcomes(stack.plan), repeat=20)
    timings = [("base cell edit, then the comparison (caches)", median_ms(edit, REPEAT),
                "≤ 16")]
    stack.do(SwitchScenario("Scenario 2"))
    timings.append(("scenario cell edit, then the comparison", median_ms(edit, REPEAT), "≤ 16"))
    timings.append(("the comparison, nothing changed",
                    median_ms(lambda: outcomes(stack.plan, caches), REPEAT), ""))
    print(f"{ROWS}-row plan, {SCENARIOS} scenarios and the base, median of {REPEAT} "
          f"(reference: the comparison without caches, {reference:.2f} ms)")
    print(f"{'':<48}{'ms':>8}{'target':>8}{'ratio':>8}")
    for name, ms, target in timings:
        print(f"{name:<48}{ms:>8.3f}{target:>8}{ms / reference:>8.3f}")


def _window(plan):
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


def _close(app, window) -> None:
    window.document.stack.mark_clean()
    window.close()
    window.deleteLater()
    app.processEvents()


def _paired(app, window, step) -> tuple[list[float], list[float]]:
    """Alternate the reference and a window step, so that both see the same machine."""
    reference, timings = [], []
    for k in range(WINDOW_STEPS):
        start = time.perf_counter()
        compute(window.document.plan)
        reference.append(time.perf_counter() - start)
        start = time.perf_counter()
        step(k)
        app.processEvents()  # the coalesced recompute, the views and the repaint
        app.processEvents()  # anything posted meanwhile
        timings.append(time.perf_counter() - start)
    return reference, timings


def _report(name: str, reference: list[float], timings: list[float]) -> None:
    ms, ref = statistics.median(timings) * 1e3, statistics.median(reference) * 1e3
    low, high = (statistics.quantiles(timings, n=4)[k] * 1e3 for k in (0, 2))
    print(f"{name}: compute alone {ref:.2f} ms; window {ms:.1f} ms (quartiles "
          f"{low:.1f}–{high:.1f}; target ≤ 16 ms); ratio {ms / ref:.2f}")


def window() -> None:
    from fourfold.ui.columns import column_index

    app, shown = _window(plan_with_scenarios())
    shown.scenarios_tab_action.trigger()
    model = shown.model
    column = column_index("sd")
    app.processEvents()
    reference, timings = _paired(app, shown, lambda k: model.setData(
        model.index(ROW, column), f"{14.0 + 0.01 * k:.2f}"))
    _report(f"base edit, {SCENARIOS} scenarios × {ROWS} rows on show", reference, timings)
    _close(app, shown)

    app, shown = _window(load(sample_path()))
    app.processEvents()
    reference, timings = _paired(app, shown, lambda k: shown.next_scenario_action.trigger())
    _report("switching the scenario on show, sample plan", reference, timings)
    _close(app, shown)


if __name__ == "__main__":
    main()
    window()
