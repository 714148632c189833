"""The plan's recompute on the window's edit path.

Run on demand: ``python3 tests/bench/bench_compute.py``.

A 500-row plan (the sample plan's six rows repeated, named ``Metric i``) evaluated by
:func:`fourfold.plan.evaluation.compute` with the document's :class:`RowCache`, median of 200:

1. one cell edit (the sd of row 1, a t-method mean, as the window benchmark edits it), then
   ``compute`` with the cache (target ≤ 2 ms);
2. ``compute`` with the cache and nothing changed (a recompute after a name edit);
3. the trade-off curves of the edited row (:func:`fourfold.plan.tradeoffs.tradeoffs`, the
   plots' engine calls), for scale.

Reference, measured in the same run: ``compute`` of the same plan without a cache (every row
solved), printed with the ratio of each measurement to it.
"""

from __future__ import annotations

import dataclasses

from timing import median_ms, repeated_sample

from fourfold.plan.evaluation import RowCache, compute
from fourfold.plan.tradeoffs import tradeoffs

ROWS = 500
REPEAT = 200
ROW = 1


def main() -> None:
    plan = repeated_sample(ROWS)
    cache = RowCache()
    compute(plan, cache=cache)
    step = iter(range(10**9))

    def edit():
        sd = 14.0 + 0.01 * (next(step) % 50)
        plan.metrics[ROW] = dataclasses.replace(plan.metrics[ROW], sd=sd)
        compute(plan, cache=cache)

    reference = median_ms(lambda: compute(plan), repeat=40)
    timings = [
        ("one cell edit, then compute with the cache", median_ms(edit, REPEAT), "≤ 2"),
        ("compute with the cache, nothing changed",
         median_ms(lambda: compute(plan, cache=cache), REPEAT), ""),
    ]
    result = compute(plan, cache=cache)
    timings.append(("trade-off curves of the edited row",
                    median_ms(lambda: tradeoffs(plan, ROW, result), REPEAT), ""))
    print(f"{ROWS}-row plan, median of {REPEAT} (reference: compute without a cache, "
          f"{reference:.2f} ms)")
    print(f"{'':<46}{'ms':>8}{'target':>8}{'ratio':>8}")
    for name, ms, target in timings:
        print(f"{name:<46}{ms:>8.3f}{target:>8}{ms / reference:>8.3f}")


if __name__ == "__main__":
    main()
