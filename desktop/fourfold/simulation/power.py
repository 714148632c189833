"""Monte Carlo power of the test a plan row relies on: ``simulate_power``."""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

from fourfold.engine.catalog import METHODS, quoted
from fourfold.simulation.arguments import finite, look_sizes, looks_design, units, whole
from fourfold.simulation.arms import arms
from fourfold.simulation.decide import fixed_rejections, sequential_rejections
from fourfold.simulation.intervals import wilson_interval
from fourfold.simulation.kind_arms import estimate_z
from fourfold.simulation.streams import (
    block_sizes,
    default_workers,
    run_chunked,
    scenario_generators,
)
from fourfold.simulation.teststats import proportion_z, rate_z, welch_z

KINDS = ("mean", "proportion", "rate", "ratio", "quantile")
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
    if kind == "ratio":
        return "delta-method z (ratio of means)"
    if kind == "quantile":
        return "sample-quantile z (Hall–Sheather sparsity)"
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
        "normal counts", "bootstrap", "bootstrap (binned)", "bivariate normal" (ratios),
        "log-normal (order statistics)" or "bootstrap (order statistics)" (quantiles).
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
    kind_inputs=None,
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
    - ``"ratio"``: each unit's numerator and denominator bivariate normal with the means,
      sds and correlation in ``kind_inputs``; the treatment adds the difference per unit of
      the denominator. The delta-method z test on each replicate's own moments.
    - ``"quantile"``: the sample quantile at ``kind_inputs["level"]`` of units from the
      log-normal through the baseline and its ``density`` (or a second percentile,
      ``second_level`` and ``second_value``), or from ``history``'s empirical distribution;
      the treatment shifts every value. A z test with the sparsity estimated from the
      replicate's order statistics (see :mod:`fourfold.simulation.kind_arms`). Fixed designs
      only.
    - ``history`` given (mean and rate): units are bootstrapped from the historical values
      instead (see :mod:`fourfold.simulation.resample` for the binning above 5,000 units per
      arm); the treatment's values are shifted by the difference (``history_effect="shift"``)
      or multiplied by ``1 + difference / mean(history)`` (``"lift"``); Welch's t-test.

    Parameters
    ----------
    kind : {"mean", "proportion", "rate", "ratio", "quantile"}
    baseline : float
        Control mean, proportion, mean count per unit, ratio of means or quantile. With
        ``history`` it only converts a relative effect or margin into an absolute one.
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
    kind_inputs : dict, optional
        Ratio rows: ``denominator``, ``numerator_sd``, ``denominator_sd``, ``correlation``;
        quantile rows: ``level`` and ``density`` or ``second_level`` and ``second_value``.

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
    checked = _check(kind, baseline, effect, alpha=alpha, alternative=alternative, ratio=ratio,
                     relative=relative, margin=margin, method=method, reps=reps, seed=seed,
                     history_effect=history_effect, chunk=chunk, workers=workers)
    n_c, n_t = units(n, checked.ratio, kind)
    design = looks_design(looks)
    fractions = np.ones(1) if design is None else design[0]
    control, treatment_for, model = arms(
        kind, baseline, sd, history, history_effect, max(n_c, n_t), kind_inputs
    )
    test = describe_test(kind, checked.method, checked.margin, history is not None)
    scenarios = (treatment_for(checked.effect), treatment_for(checked.margin))
    trial = _Trial(
        sizes_c=look_sizes(n_c, fractions),
        sizes_t=look_sizes(n_t, fractions),
        control=control,
        statistic=_statistic(kind, checked.method, checked.margin, history is not None,
                             getattr(control, "phi", 1.0)),
        design=design,
        alpha=checked.alpha,
        alternative=alternative,
        direction=-1.0 if checked.effect < checked.margin else 1.0,
    )
    hits_h1, used_h1, hits_h0 = _run(trial, scenarios, checked, progress, cancelled)
    low, high = wilson_interval(hits_h1, checked.reps)
    fp_low, fp_high = wilson_interval(hits_h0, checked.reps)
    return SimulationResult(
        power=hits_h1 / checked.reps,
        low=low,
        high=high,
        false_positive=hits_h0 / checked.reps,
        false_positive_low=fp_low,
        false_positive_high=fp_high,
        reps=checked.reps,
        seed=checked.seed,
        n_control=n_c,
        n_treatment=n_t,
        effect=checked.effect,
        alpha=checked.alpha,
        model=model,
        test=test,
        looks=int(fractions.size),
        expected_fraction=used_h1 / checked.reps,
    )


@dataclass(frozen=True)
class _Checked:
    """The arguments of :func:`simulate_power`, checked; ``effect`` and ``margin`` absolute."""

    method: str
    alpha: float
    ratio: float
    reps: int
    seed: int
    chunk: int
    workers: int
    effect: float
    margin: float


def _check(kind, baseline, effect, *, alpha, alternative, ratio, relative, margin, method, reps,
           seed, history_effect, chunk, workers) -> _Checked:
    """Check the scalar arguments (ValueError naming the first one at fault)."""
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
    baseline = finite("baseline", baseline)
    effect = finite("effect", effect)
    margin = finite("margin", margin)
    alpha = finite("alpha", alpha)
    if not 0.0 < alpha < 1.0:
        raise ValueError(f"alpha must be between 0 and 1 (exclusive), got {alpha!r}")
    ratio = finite("ratio", ratio)
    if ratio <= 0:
        raise ValueError(f"ratio must be positive (treatment:control), got {ratio!r}")
    reps = whole("reps", reps, 10, MAX_REPS)
    seed = whole("seed", seed, 0, None)
    chunk = whole("chunk", chunk, 1, None)
    workers = default_workers() if workers is None else whole("workers", workers, 1, 64)
    if relative:
        effect, margin = effect * baseline, margin * baseline
    return _Checked(method, alpha, ratio, reps, seed, chunk, workers, effect, margin)


def _statistic(kind, method, margin, history, phi):
    """The replicate's test statistic: ``z(sizes_c, mean_c, m2_c, sizes_t, mean_t, m2_t)``
    at every look, from the arms' running means and sums of squared deviations."""
    if kind in ("ratio", "quantile"):  # the arms give estimates and per-unit variances
        def z(sizes_c, est_c, var_c, sizes_t, est_t, var_t):
            return estimate_z(sizes_c, est_c, var_c, sizes_t, est_t, var_t, margin)
    elif history or kind == "mean":
        def z(sizes_c, mean_c, m2_c, sizes_t, mean_t, m2_t):
            return welch_z(sizes_c, mean_c, m2_c, sizes_t, mean_t, m2_t, margin)
    elif kind == "proportion":
        def z(sizes_c, mean_c, m2_c, sizes_t, mean_t, m2_t):
            return proportion_z(sizes_c, mean_c, sizes_t, mean_t, margin, method)
    else:
        def z(sizes_c, mean_c, m2_c, sizes_t, mean_t, m2_t):
            return rate_z(sizes_c, mean_c, sizes_t, mean_t, margin, phi)
    return z


@dataclass(frozen=True)
class _Trial:
    """The simulated experiment: units per arm at each look, the control arm, the test and
    its stopping rule (``design``: fractions, upper and lower boundaries; None: one look)."""

    sizes_c: np.ndarray
    sizes_t: np.ndarray
    control: object
    statistic: object
    design: tuple | None
    alpha: float
    alternative: str
    direction: float

    def job(self, rng, size, arm_t):
        """A block of ``size`` replicates against treatment arm ``arm_t``, drawn from ``rng``:
        returns (rejections, units used as a share of the planned units, summed)."""
        def run():
            mean_c, m2_c = self.control.draw(rng, size, self.sizes_c)
            mean_t, m2_t = arm_t.draw(rng, size, self.sizes_t)
            z = self.statistic(self.sizes_c, mean_c, m2_c, self.sizes_t, mean_t, m2_t)
            if self.design is None:
                rejected, used = fixed_rejections(z, self.alpha, self.alternative)
            else:
                rejected, used = sequential_rejections(z, *self.design, self.alternative,
                                                       self.direction)
            return int(rejected.sum()), float(used.sum())

        return run


def _run(trial, scenarios, checked, progress, cancelled):
    """Simulate both scenarios (H1, H0) in blocks, each block on its own random stream.

    Returns the rejections under H1, the units used under H1 (summed shares) and the
    rejections under H0.
    """
    generators = scenario_generators(checked.seed, 2, checked.reps)
    sizes = block_sizes(checked.reps)
    jobs = [
        (size, trial.job(rng, size, arm_t))
        for arm_t, gens in zip(scenarios, generators, strict=True)
        for rng, size in zip(gens, sizes, strict=True)
    ]
    outcomes = run_chunked(
        jobs, chunk=checked.chunk, workers=checked.workers, progress=progress,
        cancelled=cancelled
    )
    half = len(sizes)
    hits_h1 = sum(h for h, _ in outcomes[:half])
    used_h1 = sum(u for _, u in outcomes[:half])
    hits_h0 = sum(h for h, _ in outcomes[half:])
    return hits_h1, used_h1, hits_h0
