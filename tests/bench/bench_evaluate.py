"""The plan as a table: :func:`fourfold.plan.evaluation.evaluate` against ``compute``.

Run on demand: ``python3 tests/bench/bench_evaluate.py``.

A 5,000-row plan (the sample plan's rows repeated, named ``Metric i``) evaluated by
:func:`fourfold.plan.evaluation.evaluate` (a :class:`pandas.DataFrame` with every input and
result of every row, the plan's results and settings in ``attrs``), median of 15 runs; target
≤ 1.3 × the reference. Reference, measured in the same run, alternating with it: ``compute`` of
the same plan without a cache (every row solved), which ``evaluate`` calls once; the rest is
building the frame. pandas is imported before timing (the window and the exports import it
once, lazily).
"""

from __future__ import annotations

import statistics
import time

from timing import repeated_sample

from fourfold.plan.evaluation import compute, evaluate

ROWS = 5_000
RUNS = 15
TARGET = 1.3


def main() -> None:
    plan = repeated_sample(ROWS)
    evaluate(plan)
    times: dict[str, list[float]] = {"compute": [], "evaluate": []}
    for _ in range(RUNS):
        for name, call in (("compute", compute), ("evaluate", evaluate)):
            start = time.perf_counter()
            call(plan)
            times[name].append(time.perf_counter() - start)
    reference, table = (statistics.median(times[name]) * 1e3 for name in ("compute", "evaluate"))
    ratio = table / reference
    print(f"{ROWS}-row plan, median of {RUNS}")
    print(f"compute without a cache (reference) {reference:8.1f} ms")
    print(f"evaluate (the DataFrame)            {table:8.1f} ms  ratio {ratio:.3f} "
          f"(target ≤ {TARGET}: {'met' if ratio <= TARGET else 'MISSED'})")


if __name__ == "__main__":
    main()
