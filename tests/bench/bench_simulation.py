"""Benchmark: 2,000 replicates at 10^6 units per arm, against a naive reference.

Run on demand: ``python3 tests/bench/bench_simulation.py``. The target is at most 5 s per
check on 2 cores. The reference, measured in the same run, is the naive way: for every
replicate draw all units of both arms with numpy and run Welch's test on them; it is timed at
a smaller size and scaled linearly to 2,000 replicates x 10^6 units per arm (its cost is
proportional to replicates x units). The data are invented (a lognormal revenue-like history).
"""

from __future__ import annotations

import time

import numpy as np
from scipy import stats

from fourfold.engine.sequential import design
from fourfold.simulation import simulate_power

N = 1_000_000
REPS = 2000
TARGET_SECONDS = 5.0


def naive_seconds(n=20_000, reps=40):
    """Seconds per (replicate x unit per arm) of a per-replicate numpy draw, both scenarios."""
    rng = np.random.default_rng(0)
    start = time.perf_counter()
    for _ in range(2 * reps):
        a = rng.normal(2.35, 14.8, n)
        b = rng.normal(2.45, 14.8, n)
        stats.ttest_ind(b, a, equal_var=False)
    return (time.perf_counter() - start) / (reps * n)


def timed(label, **kwargs):
    start = time.perf_counter()
    result = simulate_power(n=N, reps=REPS, seed=1, **kwargs)
    seconds = time.perf_counter() - start
    print(f"{label:<34} {seconds:7.3f} s   power {result.power:.3f} "
          f"({result.low:.3f}-{result.high:.3f})   model {result.model}")
    return seconds


def main():
    history = np.random.default_rng(7).lognormal(0.0, 1.5, size=200_000)
    per_unit = naive_seconds()
    reference = per_unit * REPS * N
    print(f"naive reference (scaled)           {reference:7.1f} s   "
          f"(per-replicate draws of every unit, Welch test via scipy.stats)")
    runs = {
        "normal mean, Welch t": dict(kind="mean", baseline=2.35, effect=0.06, sd=14.8),
        "proportion, pooled z": dict(kind="proportion", baseline=0.031, effect=0.0004),
        "rate, negative binomial": dict(kind="rate", baseline=0.018, effect=0.0004, sd=0.2),
        "bootstrap, binned multinomial": dict(kind="mean", baseline=float(history.mean()),
                                              effect=0.01, relative=True, history=history),
    }
    worst = 0.0
    for label, kwargs in runs.items():
        seconds = timed(label, **kwargs)
        worst = max(worst, seconds)
        print(f"{'':<34} ratio to naive reference: {seconds / reference:.2e} "
              f"({reference / seconds:,.0f}x faster)")
    verdict = "meets" if worst <= TARGET_SECONDS else "MISSES"
    print(f"slowest fixed-size check {worst:.3f} s: {verdict} the {TARGET_SECONDS:g} s target")
    # Interim looks draw one multinomial per look and arm: about ``looks`` times the cost.
    timed("bootstrap, 3 interim looks (info)", kind="mean", baseline=float(history.mean()),
          effect=0.01, relative=True, history=history, looks=design(3))


if __name__ == "__main__":
    main()
