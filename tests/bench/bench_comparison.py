"""The comparison of scenarios on the window's edit path.

Run on demand: ``python3 tests/bench/bench_comparison.py``.

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
"""

from __future__ import annotations

import dataclasses

from timing import median_ms

from fourfold.plan import Plan, Scenario, load, sample_path
from fourfold.plan.commands import CommandStack, SetField
from fourfold.plan.comparison import Caches, outcomes, table
from fourfold.plan.scenario_commands import SwitchScenario

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


if __name__ == "__main__":
    main()
