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

from timing import median_ms

from fourfold.plan import Plan, Scenario, load, sample_path
from fourfold.plan.commands import CommandStack, SetField
from fourfold.plan.comparison import Caches, outcomes, table
from fourfold.plan.scenario_commands import SwitchScenario

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


def window() -> None:
    from windows import close_window, open_window, paired, report

    from fourfold.ui.columns import column_index

    app, shown = open_window(plan_with_scenarios())
    shown.scenarios_tab_action.trigger()
    model = shown.model
    column = column_index("sd")
    app.processEvents()
    reference, timings, first = paired(app, shown, lambda k: model.setData(
        model.index(ROW, column), f"{14.0 + 0.01 * k:.2f}"), WINDOW_STEPS)
    report(f"base edit, {SCENARIOS} scenarios × {ROWS} rows on show", reference, timings, first)
    close_window(app, shown)

    app, shown = open_window(load(sample_path()))
    reference, timings, first = paired(app, shown, lambda k: shown.next_scenario_action.trigger(),
                                WINDOW_STEPS)
    report("switching the scenario on show, sample plan", reference, timings, first)
    close_window(app, shown)


if __name__ == "__main__":
    main()
    window()
