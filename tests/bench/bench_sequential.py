"""Speed of group sequential designs: the plan's recompute when interim looks are met first,
and :func:`fourfold.engine.sequential.design` against a straightforward reference.

Run on demand: ``python3 tests/bench/bench_sequential.py``.

1. :func:`fourfold.plan.evaluation.compute` of the sample plan at 2, 3, 4 and 5 looks, each met
   for the first time (every cache of designs emptied before each run, as after the user
   changes the number of looks), median of 21 runs. Reference, measured in the same runs:
   ``compute`` of the same plan at 1 look (no designs). Printed: milliseconds and the ratio of
   each to the reference. It runs first: the textbook reference's large arrays change how the
   allocator serves the grid's arrays afterwards (fewer fresh pages, faster).
2. A 10-look design against the textbook approach, written out here: a uniform grid over each
   look's continuation region, the trapezoid rule, and bisection for every boundary and for
   the drift. Both are timed in the same run; printed: milliseconds, the ratio, the largest
   boundary difference between the two, and whether a 10-look design meets the 50 ms target.
"""

from __future__ import annotations

import dataclasses
import statistics
import time

import numpy as np
from scipy.special import ndtr, ndtri
from timing import forget_designs

from fourfold.engine.sequential import design, peeking_alpha
from fourfold.plan import load, sample_path
from fourfold.plan.evaluation import compute

TARGET_MS = 50.0
NODES = 1201
PLAN_LOOKS = (2, 3, 4, 5)
PLAN_RUNS = 21


def _bisect(f, lo, hi, iterations=60):
    f_lo = f(lo)
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        f_mid = f(mid)
        if (f_mid > 0) == (f_lo > 0):
            lo, f_lo = mid, f_mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def _trapezoid(c):
    nodes = np.linspace(-c, c, NODES)
    weights = np.full(NODES, nodes[1] - nodes[0])
    weights[[0, -1]] /= 2.0
    return nodes, weights


def _reference_pass(t, upper, drift, solve_alpha=None):
    """Trapezoid recursion on (−c_k, c_k); with ``solve_alpha`` it also finds the boundaries."""
    upper = np.array(upper, dtype=float)
    crossed = np.zeros(t.size)
    nodes = weights = density = None
    t_prev = 0.0
    for k, t_k in enumerate(t):
        step = t_k - t_prev
        if density is None:
            def exceed(c, t_k=t_k):
                return ndtr(drift * np.sqrt(t_k) - c)
        else:
            mean = nodes * np.sqrt(t_prev) + drift * step
            mass = weights * density

            def exceed(c, mean=mean, mass=mass, t_k=t_k, step=step):
                return mass @ ndtr((mean - c * np.sqrt(t_k)) / np.sqrt(step))
        if solve_alpha is not None:
            upper[k] = _bisect(lambda c, k=k: exceed(c) - solve_alpha[k], 0.0, 12.0)
        crossed[k] = exceed(upper[k])
        new_nodes, new_weights = _trapezoid(min(upper[k], 12.0))
        if density is None:
            density = np.exp(-0.5 * (new_nodes - drift * np.sqrt(t_k)) ** 2) / np.sqrt(2 * np.pi)
        else:
            u = (new_nodes[:, None] * np.sqrt(t_k) - mean[None, :]) / np.sqrt(step)
            kernel = np.exp(-0.5 * u * u) * np.sqrt(t_k / step) / np.sqrt(2 * np.pi)
            density = kernel @ mass
        nodes, weights = new_nodes, new_weights
        t_prev = t_k
    return upper, crossed


def reference_design(looks, alpha=0.05, power=0.8):
    """Lan–DeMets O'Brien–Fleming-type two-sided design, the plain way."""
    t = np.arange(1, looks + 1) / looks
    side = alpha / 2.0
    cumulative = 2.0 * ndtr(-ndtri(1.0 - side / 2.0) / np.sqrt(t))
    cumulative[-1] = side
    upper, _ = _reference_pass(t, np.zeros(looks), 0.0, np.diff(cumulative, prepend=0.0))
    fixed = ndtri(1.0 - side) + ndtri(power)
    drift = _bisect(
        lambda d: _reference_pass(t, upper, d)[1].sum() - power, fixed, 2.0 * fixed, 40
    )
    return upper, (drift / fixed) ** 2


def _best_ms(call, repeats):
    best = np.inf
    for _ in range(repeats):
        start = time.perf_counter()
        call()
        best = min(best, time.perf_counter() - start)
    return best * 1e3


def main() -> None:
    plan_looks()
    start = time.perf_counter()
    upper_ref, inflation_ref = reference_design(10)
    reference_ms = (time.perf_counter() - start) * 1e3
    ours_ms = _best_ms(lambda: design(10), 10)
    ours = design(10)
    print(f"reference 10-look design (uniform grid, bisection): {reference_ms:8.1f} ms")
    print(f"design(10)                                        : {ours_ms:8.1f} ms")
    print(f"speed-up                                          : {reference_ms / ours_ms:8.1f} x")
    print(f"largest boundary difference                       : "
          f"{np.max(np.abs(upper_ref - ours.upper)):.1e}")
    print(f"inflation difference                              : "
          f"{abs(inflation_ref - ours.inflation):.1e}")
    cases = {
        "design(10, futility='ld-obrien-fleming')": lambda: design(
            10, futility="ld-obrien-fleming"
        ),
        "design(10, spending='pocock')": lambda: design(10, spending="pocock"),
        "design(20, spending='hsd', futility='hsd')": lambda: design(
            20, spending="hsd", futility="hsd"
        ),
        "peeking_alpha(100)": lambda: peeking_alpha(100),
    }
    for name, call in cases.items():
        ms = _best_ms(call, 5)
        print(f"{name:50s}: {ms:8.1f} ms  ({ms / ours_ms:.1f} x design(10))")
    verdict = "meets" if ours_ms <= TARGET_MS else "MISSES"
    print(f"10-look design {verdict} the {TARGET_MS:.0f} ms target")


def plan_looks() -> None:
    """``compute`` of the sample plan with its designs met first, against 1 look."""
    sample = load(sample_path())
    plans = {looks: dataclasses.replace(sample, settings=dataclasses.replace(
        sample.settings, looks=looks)) for looks in (1, *PLAN_LOOKS)}
    compute(plans[1])
    times: dict[int, list[float]] = {looks: [] for looks in plans}
    for _ in range(PLAN_RUNS):
        for looks, plan in plans.items():
            forget_designs()
            start = time.perf_counter()
            compute(plan)
            times[looks].append(time.perf_counter() - start)
    ms = {looks: statistics.median(runs) * 1e3 for looks, runs in times.items()}
    print(f"compute of the sample plan ({len(sample.metrics)} rows), designs met first, median "
          f"of {PLAN_RUNS} (reference: at 1 look, {ms[1]:.2f} ms)")
    for looks in PLAN_LOOKS:
        print(f"  {looks} looks: {ms[looks]:6.2f} ms  ratio {ms[looks] / ms[1]:5.2f}")


if __name__ == "__main__":
    main()
