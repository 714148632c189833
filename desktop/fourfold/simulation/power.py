"""Monte Carlo power of the test a plan row relies on: ``simulate_power``."""

from __future__ import annotations

import math
import operator
from dataclasses import asdict, dataclass

import numpy as np

from fourfold.engine.catalog import METHODS, quoted
from fourfold.simulation.decide import fixed_rejections, sequential_rejections
from fourfold.simulation.intervals import wilson_interval
from fourfold.simulation.models import BinomialArm, CountArm, NormalArm
from fourfold.simulation.resample import DIRECT_MAX, EmpiricalArm, bin_history
from fourfold.simulation.streams import (
    block_sizes,
    default_workers,
    run_chunked,
    scenario_generators,
)
from fourfold.simulation.teststats import proportion_z, rate_z, welch_z

KINDS = ("mean", "proportion", "rate")
ALTERNATIVES = ("two-sided", "greater", "less")
HISTORY_EFFECTS = ("shift", "lift")
MAX_REPS = 1_000_000

PROPORTION_TESTS = {
    "pooled": "two-proportion z (pooled)",
    "unpooled": "two-proportion z (unpooled)",
    "arcsine": "Cohen's h (arcsine)",
    "pooled-cc": "two-proportion z (pooled, continuity-corrected)",
}
"""The proportion test run for each method at margin 0; with a margin, "pooled" reads
"Farrington–Manning" (the restricted estimates under H0)."""


def _method(kind, method):
    """The row's method, the kind's default for None; ValueError naming the allowed ones."""
    allowed = METHODS[kind]
    if method is None:
        return allowed[0]
    if method not in allowed:
        raise ValueError(f"method must be one of {quoted(allowed)} for a {kind} metric, "
                         f"got {method!r}")
    return method


def describe_test(kind, method, margin, history=False):
    """The words for the test a replicate runs: kind, method, margin and bootstrapping.

    Examples
    --------
    >>> describe_test("proportion", "pooled-cc", -0.01)
    'two-proportion z (Farrington–Manning, continuity-corrected)'
    >>> describe_test("mean", "z", 0.0)
    'Welch t'
    """
    if history or kind == "mean":
        return "Welch t"
    if kind == "rate":
        return "two-rate z (pooled)" if margin == 0.0 else "two-rate z (unpooled)"
    name = PROPORTION_TESTS[method]
    if margin != 0.0:
        name = name.replace("(pooled", "(Farrington–Manning")
    return name


@dataclass(frozen=True)
class SimulationResult:
    """Outcome of :func:`simulate_power`.

    Attributes
    ----------
    power, low, high : float
        Share of replicates under the planned effect whose test rejected H0, with its 95 %
        Wilson interval.
    false_positive, false_positive_low, false_positive_high : float
        The same under H0 (true difference = margin), with its interval; it should contain α.
    reps, seed : int
        Replicates per scenario and the seed; the same pair reproduces the result.
    n_control, n_treatment : int
        Units simulated per arm (at the last look): the planned units rounded up.
    effect : float
        Absolute true difference simulated under H1.
    alpha : float
        Significance level of the test (overall level for interim looks).
    model : str
        How units were drawn: "normal", "binomial", "poisson", "negative binomial",
        "normal counts", "bootstrap" or "bootstrap (binned)".
    test : str
        The test run on each replicate.
    looks : int
        Number of analyses (1: fixed size).
    expected_fraction : float
        Mean share of the planned units used under H1 (below 1 with early stopping).
    """

    power: float
    low: float
    high: float
    false_positive: float
    false_positive_low: float
    false_positive_high: float
    reps: int
    seed: int
    n_control: int
    n_treatment: int
    effect: float
    alpha: float
    model: str
    test: str
    looks: int = 1
    expected_fraction: float = 1.0

    def to_dict(self):
        """Plain dict of the fields (JSON-ready floats, ints and strings)."""
        return asdict(self)


def _finite(name, value):
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(number):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    return number


def _whole(name, value, low, high):
    try:
        number = operator.index(value)
    except TypeError:
        number = None
    if isinstance(value, bool) or number is None or number < low or (
            high is not None and number > high):
        span = f"from {low:,} to {high:,}" if high is not None else f"of at least {low:,}"
        raise ValueError(f"{name} must be a whole number {span}, got {value!r}")
    return number


def _units(n, ratio, kind):
    n = _finite("n", n)
    if n <= 0:
        raise ValueError(f"n must be positive (control-arm units), got {n!r}")
    n_c = math.ceil(n - 1e-9)
    n_t = math.ceil(n * ratio - 1e-9)
    least = 2 if kind == "mean" else 1
    if min(n_c, n_t) < least:
        raise ValueError(
            f"n and ratio give {n_c} control and {n_t} treatment units; "
            f"each arm needs at least {least}"
        )
    return n_c, n_t


def _look_sizes(n_units, fractions):
    sizes = np.maximum(np.round(np.asarray(fractions, dtype=float) * n_units), 1).astype(np.int64)
    sizes[-1] = n_units
    sizes = np.maximum.accumulate(sizes)
    keep = np.concatenate([np.diff(sizes) > 0, [True]])
    if not np.all(keep):
        raise ValueError(
            f"looks: {n_units} units are too few for {len(sizes)} looks at distinct sizes"
        )
    return sizes


def _looks_design(looks):
    if looks is None:
        return None
    try:
        fractions = np.asarray(looks.fractions, dtype=float)
        upper = np.asarray(looks.upper, dtype=float)
    except AttributeError:
        raise ValueError(
            "looks must be a design from fourfold.engine.sequential.design (with fractions "
            "and upper boundaries)"
        ) from None
    lower = getattr(looks, "lower", None)
    lower = None if lower is None else np.asarray(lower, dtype=float)
    if fractions.ndim != 1 or fractions.size < 1 or upper.shape != fractions.shape:
        raise ValueError("looks: fractions and upper boundaries must be 1-D arrays of one size")
    if not (np.all(np.diff(fractions) > 0) and fractions[0] > 0 and abs(fractions[-1] - 1) < 1e-9):
        raise ValueError("looks: information fractions must increase to 1")
    return fractions, upper, lower


def _history_values(history, kind):
    if kind == "proportion":
        raise ValueError(
            "history applies to mean and rate metrics; a proportion is fully described by its "
            "baseline"
        )
    values = np.asarray(history, dtype=float).ravel()
    if values.size < 2:
        raise ValueError("history must hold at least 2 values")
    if not np.all(np.isfinite(values)):
        raise ValueError("history must hold finite numbers only (no nan or inf)")
    if np.ptp(values) == 0:
        raise ValueError("history must not be constant (its variance is zero)")
    return values


def _arms(kind, baseline, sd, history, history_effect, n_largest):
    """Control arm and a function giving the treatment arm for a true difference."""
    if history is not None:
        values = _history_values(history, kind)
        bins = bin_history(values)
        centre = float(values.mean())
        control = EmpiricalArm(values, bins)
        if history_effect == "lift":
            if centre == 0:
                raise ValueError("history_effect 'lift' needs a history whose mean is not 0")

            def treatment(diff):
                return EmpiricalArm(values, bins, scale=1.0 + diff / centre)
        else:

            def treatment(diff):
                return EmpiricalArm(values, bins, shift=diff)

        model = "bootstrap" if n_largest <= DIRECT_MAX else "bootstrap (binned)"
        return control, treatment, model
    if kind == "mean":
        if sd is None:
            raise ValueError("sd is required for a mean metric (per-unit standard deviation)")
        sd = _finite("sd", sd)
        if sd <= 0:
            raise ValueError(f"sd must be positive, got {sd!r}")
        return NormalArm(baseline, sd), lambda diff: NormalArm(baseline + diff, sd), "normal"
    if kind == "proportion":
        if not 0.0 < baseline < 1.0:
            raise ValueError(f"baseline must be a proportion between 0 and 1, got {baseline!r}")

        def treatment(diff):
            p = baseline + diff
            if not 0.0 <= p <= 1.0:
                raise ValueError(
                    f"baseline + effect (or margin) gives a treatment proportion of {p:.6g}, "
                    "outside [0, 1]"
                )
            return BinomialArm(p)

        return BinomialArm(baseline), treatment, "binomial"
    if baseline <= 0:
        raise ValueError(f"baseline must be a positive mean count per unit, got {baseline!r}")
    phi = 1.0
    if sd is not None:
        sd = _finite("sd", sd)
        if sd <= 0:
            raise ValueError(f"sd must be positive, got {sd!r}")
        phi = sd * sd / baseline

    def treatment(diff):
        lam = baseline + diff
        if lam < 0:
            raise ValueError(
                f"baseline + effect (or margin) gives a negative rate ({lam:.6g} per unit)"
            )
        return CountArm(lam, phi)

    model = "poisson" if phi == 1.0 else ("negative binomial" if phi > 1 else "normal counts")
    return CountArm(baseline, phi), treatment, model


def simulate_power(
    kind,
    baseline,
    effect,
    n,
    *,
    sd=None,
    alpha=0.05,
    alternative="two-sided",
    ratio=1.0,
    relative=False,
    margin=0.0,
    method=None,
    reps=2000,
    seed=0,
    history=None,
    history_effect="shift",
    looks=None,
    chunk=1000,
    workers=None,
    progress=None,
    cancelled=None,
):
    """Simulate the experiment ``reps`` times and run its final test on each replicate.

    Two scenarios are simulated with independent streams: the planned true difference
    (power) and the difference under H0, equal to ``margin`` (false-positive rate).

    Models and tests, by ``kind``:

    - ``"mean"``: normal values (mean ``baseline``, sd ``sd``), drawn as sufficient
      statistics; Welch's t-test (for either method, "z" or "t").
    - ``"proportion"``: binomial counts; the row's own test, by ``method`` (see
      :func:`fourfold.simulation.teststats.proportion_z`): ``"pooled"`` z (pooled
      proportion, or the Farrington–Manning restricted estimates with a nonzero margin),
      ``"unpooled"`` Wald z, ``"arcsine"`` Cohen's h, ``"pooled-cc"`` the pooled z with the
      continuity correction.
    - ``"rate"``: Poisson counts per unit (mean ``baseline``); with ``sd`` the dispersion
      ``phi = sd**2 / baseline`` is kept in both arms (negative binomial counts above 1).
      The z-test for two rates with the pooled rate (unpooled with a margin), variance
      ``phi`` times the rate.
    - ``history`` given (mean and rate): units are bootstrapped from the historical values
      instead (see :mod:`fourfold.simulation.resample` for the binning above 5,000 units per
      arm); the treatment's values are shifted by the difference (``history_effect="shift"``)
      or multiplied by ``1 + difference / mean(history)`` (``"lift"``); Welch's t-test.

    Parameters
    ----------
    kind : {"mean", "proportion", "rate"}
    baseline : float
        Control mean, proportion or mean count per unit. With ``history`` it only converts a
        relative effect or margin into an absolute one.
    effect : float
        True difference treatment - control (a fraction of ``baseline`` if ``relative``).
    n : float
        Control-arm units (rounded up); the treatment arm gets ``ratio * n`` (rounded up).
        With ``looks``, the units at the last look.
    sd : float, optional
        Per-unit standard deviation (mean: required; rate: optional over-dispersion).
    alpha : float
        Significance level in (0, 1) (with ``looks``: used only to describe the result; the
        design's boundaries decide).
    alternative : {"two-sided", "greater", "less"}
        H1 relative to ``margin``: difference != margin, > margin or < margin.
    ratio : float
        Treatment:control allocation, positive.
    relative : bool
        ``effect`` and ``margin`` are fractions of ``baseline``.
    margin : float
        Difference under H0 (e.g. negative with ``"greater"`` for non-inferiority).
    method : str, optional
        The row's method, one of ``fourfold.engine.METHODS[kind]``; None: the kind's default.
    reps : int
        Replicates per scenario, 10 to 1,000,000.
    seed : int
        Non-negative seed; the result depends only on the inputs, ``reps`` and ``seed``.
    history : array_like, optional
        Historical per-unit values to bootstrap from (mean and rate metrics).
    history_effect : {"shift", "lift"}
        How the difference is applied to bootstrapped treatment values.
    looks : design, optional
        A ``fourfold.engine.sequential.design(...)`` result: the test is run at each look's
        information fraction of the units and stops at its boundaries (``upper`` for
        efficacy, on the score oriented by ``alternative``, ``|z|`` when two-sided;
        ``lower`` for futility, on the score in the direction of the planned effect).
    chunk : int
        Replicates between progress reports; does not change the result.
    workers : int, optional
        Threads (default: the cores, at most 4); does not change the result.
    progress : callable, optional
        ``progress(done, total)`` in replicates, both scenarios counted.
    cancelled : callable, optional
        ``cancelled() -> bool``, polled between chunks.

    Returns
    -------
    SimulationResult

    Raises
    ------
    ValueError
        For impossible input, naming the argument and its allowed range.
    fourfold.simulation.SimulationCancelled
        When ``cancelled()`` returned True.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993) *An Introduction to the Bootstrap*, Chapman & Hall.
    Welch, B. L. (1947) *Biometrika* 34:28-35.
    Fleiss, J. L., Levin, B. & Paik, M. C. (2003) *Statistical Methods for Rates and
    Proportions*, 3rd ed., Wiley.
    Farrington, C. P. & Manning, G. (1990) *Statistics in Medicine* 9:1447-1454.
    Jennison, C. & Turnbull, B. W. (2000) *Group Sequential Methods with Applications to
    Clinical Trials*, Chapman & Hall/CRC.

    Examples
    --------
    >>> result = simulate_power("mean", 10.0, 0.5, 63, sd=1.0, reps=400, seed=1)
    >>> 0.7 < result.power < 0.9, result.n_control, result.test
    (True, 63, 'Welch t')
    >>> simulate_power("proportion", 0.3, 0.1, 400, method="arcsine", reps=100).test
    "Cohen's h (arcsine)"
    """
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {', '.join(KINDS)}; got {kind!r}")
    if alternative not in ALTERNATIVES:
        raise ValueError(
            f"alternative must be one of {', '.join(ALTERNATIVES)}; got {alternative!r}"
        )
    if history_effect not in HISTORY_EFFECTS:
        raise ValueError(
            f"history_effect must be one of {', '.join(HISTORY_EFFECTS)}; got {history_effect!r}"
        )
    method = _method(kind, method)
    baseline = _finite("baseline", baseline)
    effect = _finite("effect", effect)
    margin = _finite("margin", margin)
    alpha = _finite("alpha", alpha)
    if not 0.0 < alpha < 1.0:
        raise ValueError(f"alpha must be between 0 and 1 (exclusive), got {alpha!r}")
    ratio = _finite("ratio", ratio)
    if ratio <= 0:
        raise ValueError(f"ratio must be positive (treatment:control), got {ratio!r}")
    reps = _whole("reps", reps, 10, MAX_REPS)
    seed = _whole("seed", seed, 0, None)
    chunk = _whole("chunk", chunk, 1, None)
    workers = default_workers() if workers is None else _whole("workers", workers, 1, 64)
    if relative:
        effect_abs, margin_abs = effect * baseline, margin * baseline
    else:
        effect_abs, margin_abs = effect, margin

    n_c, n_t = _units(n, ratio, kind)
    design = _looks_design(looks)
    fractions = np.ones(1) if design is None else design[0]
    sizes_c = _look_sizes(n_c, fractions)
    sizes_t = _look_sizes(n_t, fractions)
    control, treatment_for, model = _arms(
        kind, baseline, sd, history, history_effect, max(n_c, n_t)
    )
    test = describe_test(kind, method, margin_abs, history is not None)
    scenarios = (treatment_for(effect_abs), treatment_for(margin_abs))
    phi = getattr(control, "phi", 1.0)
    direction = -1.0 if effect_abs < margin_abs else 1.0

    def score(mean_c, m2_c, mean_t, m2_t):
        if history is not None or kind == "mean":
            return welch_z(sizes_c, mean_c, m2_c, sizes_t, mean_t, m2_t, margin_abs)
        if kind == "proportion":
            return proportion_z(sizes_c, mean_c, sizes_t, mean_t, margin_abs, method)
        return rate_z(sizes_c, mean_c, sizes_t, mean_t, margin_abs, phi)

    def block_job(rng, size, arm_t):
        def job():
            mean_c, m2_c = control.draw(rng, size, sizes_c)
            mean_t, m2_t = arm_t.draw(rng, size, sizes_t)
            z = score(mean_c, m2_c, mean_t, m2_t)
            if design is None:
                rejected, used = fixed_rejections(z, alpha, alternative)
            else:
                rejected, used = sequential_rejections(z, *design, alternative, direction)
            return int(rejected.sum()), float(used.sum())

        return job

    generators = scenario_generators(seed, 2, reps)
    sizes = block_sizes(reps)
    jobs = [
        (size, block_job(rng, size, arm_t))
        for arm_t, gens in zip(scenarios, generators, strict=True)
        for rng, size in zip(gens, sizes, strict=True)
    ]
    outcomes = run_chunked(
        jobs, chunk=chunk, workers=workers, progress=progress, cancelled=cancelled
    )
    half = len(sizes)
    hits_h1 = sum(h for h, _ in outcomes[:half])
    used_h1 = sum(u for _, u in outcomes[:half])
    hits_h0 = sum(h for h, _ in outcomes[half:])
    low, high = wilson_interval(hits_h1, reps)
    fp_low, fp_high = wilson_interval(hits_h0, reps)
    return SimulationResult(
        power=hits_h1 / reps,
        low=low,
        high=high,
        false_positive=hits_h0 / reps,
        false_positive_low=fp_low,
        false_positive_high=fp_high,
        reps=reps,
        seed=seed,
        n_control=n_c,
        n_treatment=n_t,
        effect=effect_abs,
        alpha=alpha,
        model=model,
        test=test,
        looks=int(fractions.size),
        expected_fraction=used_h1 / reps,
    )
