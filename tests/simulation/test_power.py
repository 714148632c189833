"""simulate_power against reference libraries and published facts.

Reference libraries: statsmodels 0.15.0 (``statsmodels.stats.power``,
``statsmodels.stats.proportion``, ``statsmodels.stats.rates``) and scipy 1.17.1.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import special
from statsmodels.stats.power import TTestIndPower
from statsmodels.stats.proportion import power_proportions_2indep

from fourfold.simulation import SimulationCancelled, simulate_power


def test_normal_interval_contains_analytic_power_for_93_of_100_seeds():
    # Reference: statsmodels 0.15.0 TTestIndPower (Student t, equal variances and n, which
    # Welch's test matches to < 0.001 here); d = 0.5, n = 64 per arm gives power ~ 0.80
    # (Cohen 1988, Table 2.4.1).
    analytic = TTestIndPower().power(effect_size=0.5, nobs1=64, alpha=0.05, ratio=1.0)
    covered = 0
    for seed in range(100):
        r = simulate_power("mean", 10.0, 1.0, 64, sd=2.0, reps=400, seed=seed, workers=1)
        covered += r.low <= analytic <= r.high
    assert covered >= 93


def test_unequal_allocation_one_sided_matches_statsmodels():
    # Reference: statsmodels 0.15.0 TTestIndPower with ratio = 2, alternative "larger".
    analytic = TTestIndPower().power(
        effect_size=0.3, nobs1=80, alpha=0.05, ratio=2.0, alternative="larger"
    )
    r = simulate_power(
        "mean", 0.0, 0.3, 80, sd=1.0, ratio=2.0, alternative="greater", reps=4000, seed=3
    )
    assert r.n_treatment == 160
    assert r.low <= analytic <= r.high


def test_proportion_power_matches_statsmodels_pooled_z():
    # Reference: statsmodels 0.15.0 power_proportions_2indep (pooled-variance z-test power).
    analytic = power_proportions_2indep(0.03, 0.10, 1500, ratio=1, alpha=0.05).power
    covered = sum(
        simulate_power("proportion", 0.10, 0.03, 1500, reps=1000, seed=s).low
        <= analytic
        <= simulate_power("proportion", 0.10, 0.03, 1500, reps=1000, seed=s).high
        for s in range(10)
    )
    assert covered >= 8


def test_large_sample_normal_power_matches_lehr_formula():
    # n per arm = 2 sigma^2 (z_{1-a/2} + z_{1-b})^2 / delta^2 gives power 0.8 (Lehr 1992,
    # Statistics in Medicine 11:1099-1102); z quantiles from scipy 1.17.1.
    sd, delta = 14.8, 0.1
    n = 2 * sd**2 * (special.ndtri(0.975) + special.ndtri(0.8)) ** 2 / delta**2
    r = simulate_power("mean", 2.35, delta, n, sd=sd, reps=2000, seed=11)
    assert r.low <= 0.8 <= r.high


@pytest.mark.parametrize(
    ("kind", "baseline", "sd", "margin", "alternative"),
    [
        ("mean", 1.84, 0.61, 0.0, "two-sided"),
        ("mean", 1.84, 0.61, 0.05, "less"),
        ("proportion", 0.114, None, 0.0, "two-sided"),
        ("proportion", 0.114, None, -0.01, "greater"),
        ("rate", 0.4, None, 0.0, "two-sided"),
        ("rate", 0.4, 0.9, -0.02, "greater"),
    ],
)
def test_false_positive_rate_interval_contains_alpha(kind, baseline, sd, margin, alternative):
    # Under H0 (true difference = margin) a level-alpha test rejects with probability alpha
    # (the definition of the level; common practice, no source). n large enough for the
    # z-tests' normal approximation. Each 95 % interval misses alpha 1 time in 20, so 4 of 5
    # seeds must cover it.
    covered = 0
    for seed in range(5):
        r = simulate_power(
            kind, baseline, 0.0, 4000, sd=sd, margin=margin, alternative=alternative,
            reps=2000, seed=seed,
        )
        covered += r.false_positive_low <= 0.05 <= r.false_positive_high
    assert covered >= 4


def test_lognormal_bootstrap_disagrees_with_closed_form_at_small_n():
    # Invented heavy-tailed metric: lognormal with sigma = 2. At 60 units per arm the normal
    # closed form (statsmodels 0.15.0 TTestIndPower, d = delta / sd) misjudges Welch's test.
    rng = np.random.default_rng(20261201)
    history = rng.lognormal(0.0, 2.0, size=100_000)
    sd = history.std()
    n = 60
    d = (special.ndtri(0.975) + special.ndtri(0.8)) * np.sqrt(2 / n)
    closed_form = TTestIndPower().power(effect_size=d, nobs1=n, alpha=0.05)
    for how in ("shift", "lift"):
        r = simulate_power(
            "mean", history.mean(), d * sd, n, history=history, history_effect=how,
            reps=2000, seed=2,
        )
        assert r.model == "bootstrap"
        assert not r.low <= closed_form <= r.high
        assert abs(r.power - closed_form) > (r.high - r.low) / 2


def test_binned_bootstrap_agrees_with_direct_resampling(monkeypatch):
    # The binned multinomial draw must agree with plain resampling (Efron & Tibshirani 1993)
    # within the simulation error; the same seeds are not shared, so compare intervals.
    rng = np.random.default_rng(7)
    history = rng.lognormal(0.0, 1.0, size=30_000)
    args = dict(history=history, reps=500, seed=4, workers=1)
    effect = 2.5 * history.std() * np.sqrt(2 / 6000)
    binned = simulate_power("mean", history.mean(), effect, 6000, **args)
    monkeypatch.setattr("fourfold.simulation.resample.DIRECT_MAX", 10**6)
    monkeypatch.setattr("fourfold.simulation.arms.DIRECT_MAX", 10**6)
    direct = simulate_power("mean", history.mean(), effect, 6000, **args)
    assert binned.model == "bootstrap (binned)" and direct.model == "bootstrap"
    assert binned.low <= direct.high and direct.low <= binned.high


def test_same_seed_same_result_whatever_the_chunk_and_threads():
    base = dict(reps=1100, seed=42)
    ref = simulate_power("proportion", 0.031, 0.0016, 200_000, **base, chunk=10_000, workers=1)
    for chunk, workers in [(1, 1), (250, 2), (600, 3)]:
        other = simulate_power(
            "proportion", 0.031, 0.0016, 200_000, **base, chunk=chunk, workers=workers
        )
        assert other == ref
    assert simulate_power("proportion", 0.031, 0.0016, 200_000, reps=1100, seed=43) != ref


def test_bootstrap_reproducible_across_chunks():
    # Invented over-dispersed counts (negative binomial): one bin per distinct count.
    history = np.random.default_rng(1).negative_binomial(0.5, 0.2, size=20_000)
    runs = [
        simulate_power("rate", 2.4, 0.05, 50_000, history=history, reps=600, seed=9,
                       chunk=chunk, workers=workers, relative=True)
        for chunk, workers in [(250, 1), (600, 2)]
    ]
    assert runs[0] == runs[1]
    assert runs[0].model == "bootstrap (binned)"


def test_progress_reaches_total_and_cancel_raises():
    seen = []
    simulate_power("mean", 0.0, 0.1, 500, sd=1.0, reps=1000, chunk=250,
                   progress=lambda done, total: seen.append((done, total)))
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)
    assert seen[-1] == (2000, 2000) and len(seen) == 8

    calls = []

    def cancelled():
        calls.append(1)
        return len(calls) > 2

    with pytest.raises(SimulationCancelled):
        simulate_power("mean", 0.0, 0.1, 500, sd=1.0, reps=1000, chunk=250, cancelled=cancelled)
    assert len(calls) == 3


def test_relative_effect_and_margin_are_fractions_of_baseline():
    absolute = simulate_power("mean", 2.0, 0.2, 300, sd=1.0, margin=-0.1, alternative="greater",
                              reps=500, seed=1)
    relative = simulate_power("mean", 2.0, 0.1, 300, sd=1.0, margin=-0.05, relative=True,
                              alternative="greater", reps=500, seed=1)
    assert relative.effect == pytest.approx(0.2)
    assert relative.power == absolute.power


@pytest.mark.parametrize(
    ("kwargs", "word"),
    [
        (dict(kind="median"), "kind"),
        (dict(alternative="both"), "alternative"),
        (dict(alpha=1.5), "alpha"),
        (dict(reps=5), "reps"),
        (dict(seed=-1), "seed"),
        (dict(n=0), "n"),
        (dict(n=1.0), "each arm"),
        (dict(ratio=0), "ratio"),
        (dict(sd=None), "sd"),
        (dict(sd=-1.0), "sd"),
        (dict(effect=float("nan")), "effect"),
        (dict(history=[1.0, 1.0]), "constant"),
        (dict(history=[1.0, float("inf")]), "finite"),
        (dict(history_effect="scale"), "history_effect"),
        (dict(kind="proportion", baseline=0.5, effect=0.6), "outside [0, 1]"),
        (dict(kind="proportion", baseline=0.5, history=[0, 1, 1]), "history"),
        (dict(kind="rate", baseline=-1.0), "baseline"),
        (dict(looks=object()), "looks"),
    ],
)
def test_impossible_input_raises_value_error_naming_it(kwargs, word):
    args = dict(kind="mean", baseline=1.0, effect=0.1, n=100, sd=1.0)
    args.update(kwargs)
    with pytest.raises(ValueError, match=word.replace("[", r"\[")):
        simulate_power(args.pop("kind"), args.pop("baseline"), args.pop("effect"),
                       args.pop("n"), **args)


@settings(max_examples=15, deadline=None)
@given(chunk=st.integers(1, 3000), workers=st.integers(1, 3), seed=st.integers(0, 2**32))
def test_chunk_and_threads_never_change_the_result(chunk, workers, seed):
    # Common practice, no source: one random stream per fixed block of replicates.
    args = dict(reps=700, seed=seed, sd=0.9, alternative="greater", margin=-0.02)
    one = simulate_power("rate", 0.4, 0.0, 3000, chunk=700, workers=1, **args)
    other = simulate_power("rate", 0.4, 0.0, 3000, chunk=chunk, workers=workers, **args)
    assert one == other
