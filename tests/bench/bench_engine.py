"""Engine speed against a per-row loop of the reference libraries, in the same run.

Run on demand: ``python3 tests/bench/bench_engine.py``.  For each kind/method it solves
10,000 random A/B-test rows (sample size) with one vectorised engine call, and a per-row
loop of statsmodels over a 200-row subsample (``solve_power`` of ``NormalIndPower`` /
``TTestIndPower``; for the pooled proportion, scipy's ``brentq`` on statsmodels'
``power_proportions_2indep``; for the continuity-corrected one, the Fleiss–Tytun–Ury
formula row by row — it leaves out the far tail of two-sided tests, which the engine keeps,
so the two differ by up to ~6·10⁻⁵ relative at α = 0.1).  It prints the per-row speed
ratio and the largest relative disagreement, the time of 10,000 exact-t rows, and the time
of ``import fourfold.engine`` in a fresh interpreter next to that of its own imports
(numpy, scipy.special).

Targets: ≥ 1,000× for "z" methods, ≥ 200× for the exact "t"; 10,000 exact-t rows in
≤ 50 ms; ``import fourfold.engine`` < 0.5 s; 10,000 exact-t rows of small n (n ≈ 25–6,300)
in ≤ 4 × the time of the same rows by the normal approximation, timed alternately, median of
21 (``--small`` prints only this).

First it prints the per-call cost of the small calls the window makes on every edit (a
scalar row, the 80–500-element curves of the plots), median of 200 calls, next to a bare
``scipy.special.ndtri`` call of the same size measured in the same run (the floor of any
vectorised call). Targets: scalar z sample size ≤ 0.3 ms; 162-element proportion sample size
≤ 0.6 ms; 162-element proportion detectable effect ≤ 1.2 ms.  ``--calls`` prints only these.

Rows (invented, A/B scale): relative MDE log-uniform in [0.5 %, 10 %] for means (CV
log-uniform in [0.5, 10]) and [1 %, 20 %] for proportions (baseline log-uniform in
[0.5 %, 50 %]) and rates (baseline log-uniform in [0.005, 3]), [1 %, 10 %] for ratios (sd by
the delta method from random components) and quantiles (p50 to p99 of a log-normal); ratio
and quantile rows are checked against ``NormalIndPower`` with their sd; α from {0.01, 0.05, 0.1},
power from {0.8, 0.9}, ratio from {0.5, 1, 2}, all three alternatives.
"""

import statistics
import subprocess
import sys
import time
import warnings

import numpy as np
import scipy
import statsmodels
from scipy import optimize, special, stats
from statsmodels.stats.power import NormalIndPower, TTestIndPower
from statsmodels.stats.proportion import power_proportions_2indep, proportion_effectsize
from timing import median_ms

from fourfold import engine

ROWS = 10_000
SUBSAMPLE = 200
SMALL_N_TARGET = 4.0
SM_ALT = {"two-sided": "two-sided", "greater": "larger", "less": "smaller"}


def _rows(kind, rng, size=ROWS):
    alt = rng.choice(engine.ALTERNATIVES, size)
    sign = np.where(alt == "less", -1.0, np.where(rng.random(size) < 0.5, -1.0, 1.0))
    sign = np.where(alt == "greater", 1.0, sign)
    rows = dict(alpha=rng.choice([0.01, 0.05, 0.1], size), power=rng.choice([0.8, 0.9], size),
                ratio=rng.choice([0.5, 1.0, 2.0], size), alternative=alt)
    if kind == "mean":
        rows["baseline"] = np.ones(size)
        rows["sd"] = 10 ** rng.uniform(np.log10(0.5), 1.0, size)
        rows["effect"] = sign * 10 ** rng.uniform(np.log10(0.005), -1.0, size)
    elif kind == "ratio":
        rows["baseline"] = 10 ** rng.uniform(0.0, 1.0, size)
        denominator = 10 ** rng.uniform(-2.0, 0.5, size)
        rows["sd"] = engine.ratio.unit_sd(rows["baseline"], denominator,
                                          rows["baseline"] * denominator * rng.uniform(1, 5, size),
                                          denominator * rng.uniform(1, 5, size),
                                          rng.uniform(0.0, 0.95, size))
        rows["effect"] = sign * rows["baseline"] * 10 ** rng.uniform(-2.0, -1.0, size)
    elif kind == "quantile":
        level = rng.choice([0.5, 0.9, 0.95, 0.99], size)
        rows["baseline"] = 10 ** rng.uniform(-1.0, 1.0, size)
        density = engine.quantile.lognormal_density(level, rows["baseline"], 0.5 + 0.4 * (
            level == 0.5), rows["baseline"] * np.where(level == 0.5, 2.0, 0.5))
        rows["sd"] = engine.quantile.unit_sd(level, density)
        rows["effect"] = sign * rows["baseline"] * 10 ** rng.uniform(-2.0, -1.0, size)
    elif kind == "proportion":
        rows["baseline"] = 10 ** rng.uniform(np.log10(0.005), np.log10(0.5), size)
        rows["effect"] = sign * rows["baseline"] * 10 ** rng.uniform(-2.0, np.log10(0.2), size)
        rows["sd"] = None
    else:
        rows["baseline"] = 10 ** rng.uniform(np.log10(0.005), np.log10(3.0), size)
        rows["effect"] = sign * rows["baseline"] * 10 ** rng.uniform(-2.0, np.log10(0.2), size)
        rows["sd"] = None
    return rows


def _engine(kind, method, rows):
    out = np.full(rows["baseline"].size, np.nan)
    for alternative in engine.ALTERNATIVES:
        m = rows["alternative"] == alternative
        sd = None if rows["sd"] is None else rows["sd"][m]
        out[m] = engine.sample_size(kind, rows["baseline"][m], rows["effect"][m], sd=sd,
                                    alpha=rows["alpha"][m], power=rows["power"][m],
                                    ratio=rows["ratio"][m], alternative=alternative,
                                    method=method)
    return out


def _pooled_power(pc, pt, n, ratio, alpha, alternative):
    swap = {"two-sided": "two-sided", "greater": "smaller", "less": "larger"}
    return power_proportions_2indep(pc - pt, pt, n, ratio=ratio, alpha=alpha,
                                    alternative=swap[alternative], return_results=False)


def _reference_row(kind, method, row):
    alt, a, p, r = row["alternative"], row["alpha"], row["power"], row["ratio"]
    b, e = row["baseline"], row["effect"]
    if kind in ("mean", "ratio", "quantile"):  # ratio and quantile: a z test with their sd
        solver = TTestIndPower() if method == "t" else NormalIndPower()
        return solver.solve_power(e / row["sd"], nobs1=None, alpha=a, power=p, ratio=r,
                                  alternative=SM_ALT[alt])
    if kind == "proportion" and method == "arcsine":
        return NormalIndPower().solve_power(proportion_effectsize(b + e, b), nobs1=None,
                                            alpha=a, power=p, ratio=r,
                                            alternative=SM_ALT[alt])
    if kind == "proportion" and method == "pooled":
        def gap(log_n):
            return _pooled_power(b, b + e, np.exp(log_n), r, a, alt) - p
        return float(np.exp(optimize.brentq(gap, np.log(1e-3), np.log(1e12), xtol=1e-13)))
    if kind == "proportion" and method == "pooled-cc":
        tail = a / 2 if alt == "two-sided" else a
        pt = b + e
        p_bar = (b + r * pt) / (1 + r)
        n0 = (stats.norm.isf(tail) * np.sqrt(p_bar * (1 - p_bar) * (1 + 1 / r))
              + stats.norm.ppf(p) * np.sqrt(b * (1 - b) + pt * (1 - pt) / r)) ** 2 / e**2
        return n0 / 4 * (1 + np.sqrt(1 + 2 * (r + 1) / (r * n0 * abs(e)))) ** 2
    # unpooled proportion and Poisson rate: a normal test with one variance; map it onto
    # NormalIndPower with ratio 1 (d = Δ·√2 / s).
    if kind == "proportion":
        s = np.sqrt(b * (1 - b) + (b + e) * (1 - b - e) / r)
    else:
        s = np.sqrt(b + (b + e) / r)
    return NormalIndPower().solve_power(e * np.sqrt(2.0) / s, nobs1=None, alpha=a, power=p,
                                        ratio=1.0, alternative=SM_ALT[alt])


def _time(fn, repeat=5):
    best = np.inf
    for _ in range(repeat):
        start = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - start)
    return best, result


def _import_time(statement):
    code = f"import time; t = time.perf_counter(); {statement}; print(time.perf_counter() - t)"
    times = [float(subprocess.run([sys.executable, "-c", code], capture_output=True,
                                  text=True, check=True).stdout) for _ in range(3)]
    return min(times)


def per_call():
    """Per-call cost of the window's small engine calls against a bare ndtri of that size."""
    effects = np.linspace(0.01, 0.1, 162)
    units = np.geomspace(1e4, 1e7, 162)
    plots = np.linspace(0.005, 0.2, 500)
    calls = [
        ("sample size, mean z, scalar", 1, 0.3, lambda: engine.sample_size(
            "mean", 2.35, 0.05, sd=14.8, alpha=0.025, power=0.8, relative=True, method="z")),
        ("sample size, mean t, scalar", 1, None, lambda: engine.sample_size(
            "mean", 2.35, 0.05, sd=14.8, alpha=0.025, power=0.8, relative=True, method="t")),
        ("sample size, proportion, 162", 162, 0.6, lambda: engine.sample_size(
            "proportion", 0.031, effects, alpha=0.025, relative=True)),
        ("sample size, mean t, 162", 162, None, lambda: engine.sample_size(
            "mean", 2.35, effects, sd=14.8, alpha=0.025, relative=True, method="t")),
        ("sample size, proportion, 500", 500, None, lambda: engine.sample_size(
            "proportion", 0.031, plots, alpha=0.025, relative=True)),
        ("detectable effect, proportion, 162", 162, 1.2, lambda: engine.detectable_effect(
            "proportion", 0.031, units, alpha=0.025, relative=True)),
        ("detectable effect, mean t, 162", 162, None, lambda: engine.detectable_effect(
            "mean", 2.35, units, sd=14.8, alpha=0.025, relative=True, method="t")),
        ("power, proportion, 162", 162, None, lambda: engine.power(
            "proportion", 0.031, effects, 1e5, alpha=0.025, relative=True)),
        ("ratio sd (delta method), scalar", 1, None, lambda: engine.ratio.unit_sd(
            2.6, 0.034, 0.61, 0.19, 0.8)),
        ("quantile density (log-normal), scalar", 1, None,
         lambda: engine.quantile.lognormal_density(0.95, 3.1, 0.5, 1.7)),
        ("Dunnett α, 2 arms, both sidednesses", 2, None, lambda: engine.adjusted_alpha(
            np.array([0.05, 0.05]), 2, "dunnett", alternative=np.array(["two-sided", "less"]))),
    ]
    floors = {size: median_ms(lambda size=size: special.ndtri(np.full(size, 0.3)))
              for size in {size for _, size, _, _ in calls}}
    print(f"{'call (median of 200)':<38}{'ms':>8}{'target':>8}{'× ndtri':>9}")
    for name, size, target, fn in calls:
        ms = median_ms(fn)
        goal = "" if target is None else f"≤ {target:g}"
        print(f"{name:<38}{ms:>8.3f}{goal:>8}{ms / floors[size]:>8.0f}×")
    print("ndtri of the same size: " + ", ".join(f"{size}: {floors[size] * 1e3:.1f} µs"
                                                for size in sorted(floors)))


def small_n(runs: int = 21) -> None:
    """10,000 small-n rows, exact t against the normal approximation of the same rows.

    The two are timed alternately, ``runs`` times each, and the medians compared (a shared
    machine's speed drifts between runs)."""
    effect = np.random.default_rng(8).uniform(0.05, 0.8, ROWS)

    def solve(method):
        return engine.sample_size("mean", np.ones(ROWS), effect, sd=np.ones(ROWS), method=method)

    solve("t"), solve("z")
    z_times, t_times = [], []
    for _ in range(runs):
        for method, times in (("z", z_times), ("t", t_times)):
            start = time.perf_counter()
            solve(method)
            times.append(time.perf_counter() - start)
    t_ms, z_ms = statistics.median(t_times) * 1e3, statistics.median(z_times) * 1e3
    print(f"10,000 exact-t rows with small n (d in [0.05, 0.8], n ≈ 25–6,300): {t_ms:.1f} ms; "
          f"the same rows by the normal approximation {z_ms:.1f} ms; ratio {t_ms / z_ms:.2f} "
          f"(target ≤ {SMALL_N_TARGET:g}; median of {runs})")


def main():
    print(f"numpy {np.__version__}, scipy {scipy.__version__}, "
          f"statsmodels {statsmodels.__version__}")
    if "--small" in sys.argv[1:]:
        small_n()
        return
    per_call()
    if "--calls" in sys.argv[1:]:
        return
    rng = np.random.default_rng(20261201)
    print(f"{'kind/method':<22}{'engine ms':>10}{'µs/row':>9}{'ref µs/row':>12}"
          f"{'ratio':>9}{'max rel diff':>14}{'ref nan':>8}")
    for kind in engine.KINDS:
        for method in engine.METHODS[kind]:
            rows = _rows(kind, rng)
            seconds, ours = _time(lambda kind=kind, method=method, rows=rows: _engine(
                kind, method, rows))
            pick = rng.choice(ROWS, SUBSAMPLE, replace=False)
            start = time.perf_counter()
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                ref = []
                for i in pick:
                    row = {k: (None if v is None else v[i]) for k, v in rows.items()}
                    try:
                        ref.append(float(_reference_row(kind, method, row)))
                    except (ValueError, RuntimeError):
                        ref.append(np.nan)
            ref_seconds = time.perf_counter() - start
            ref = np.array(ref)
            finite = np.isfinite(ref)
            diff = np.max(np.abs(ours[pick][finite] - ref[finite]) / ref[finite])
            per_row = seconds / ROWS * 1e6
            ref_row = ref_seconds / SUBSAMPLE * 1e6
            print(f"{kind + '/' + method:<22}{seconds * 1e3:>10.1f}{per_row:>9.2f}"
                  f"{ref_row:>12.0f}{ref_row / per_row:>8.0f}×{diff:>14.2e}"
                  f"{np.count_nonzero(~finite):>8d}")
    rows = _rows("mean", np.random.default_rng(7))
    seconds, _ = _time(lambda: engine.sample_size("mean", rows["baseline"], rows["effect"],
                                                  sd=rows["sd"], alpha=rows["alpha"],
                                                  power=rows["power"], ratio=rows["ratio"],
                                                  method="t"))
    print(f"10,000 exact-t rows (two-sided, A/B scale): {seconds * 1e3:.1f} ms (target ≤ 50)")
    small_n()
    own = _import_time("import fourfold.engine")
    base = _import_time("import numpy, scipy.special")
    print(f"import fourfold.engine: {own:.3f} s (target < 0.5); numpy + scipy.special "
          f"alone: {base:.3f} s; ratio {own / base:.2f}")


if __name__ == "__main__":
    main()
