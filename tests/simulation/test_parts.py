"""The building blocks against reference libraries and published tables.

Reference libraries: scipy 1.17.1 (``scipy.stats``), statsmodels 0.15.0, numpy 2.4.
"""

from types import SimpleNamespace

import numpy as np
import pytest
from scipy import special, stats
from statsmodels.stats import rates
from statsmodels.stats.proportion import proportion_confint, proportions_ztest

from fourfold.simulation import simulate_power, wilson_interval
from fourfold.simulation.models import BinomialArm, CountArm, NormalArm, accumulate
from fourfold.simulation.resample import MAX_BINS, TAIL, EmpiricalArm, bin_history
from fourfold.simulation.teststats import proportion_z, rate_z, welch_z


@pytest.mark.parametrize(("k", "n"), [(0, 50), (7, 50), (321, 400), (400, 400)])
def test_wilson_matches_statsmodels(k, n):
    # Reference: statsmodels 0.15.0 proportion_confint(method="wilson").
    low, high = wilson_interval(k, n)
    ref_low, ref_high = proportion_confint(k, n, alpha=0.05, method="wilson")
    assert low == pytest.approx(ref_low, abs=1e-12)
    assert high == pytest.approx(ref_high, abs=1e-12)


def test_welch_score_matches_scipy_ttest():
    # Reference: scipy 1.17.1 stats.ttest_ind(equal_var=False), one-sided p-values.
    rng = np.random.default_rng(3)
    for n_c, n_t in [(5, 9), (40, 40), (300, 120)]:
        a = rng.normal(0.0, 1.0, n_c)
        b = rng.normal(0.4, 2.0, n_t)
        z = welch_z(n_c, np.array([a.mean()]), np.array([((a - a.mean()) ** 2).sum()]),
                    n_t, np.array([b.mean()]), np.array([((b - b.mean()) ** 2).sum()]))
        p = stats.ttest_ind(b, a, equal_var=False, alternative="greater").pvalue
        assert special.ndtr(-z[0]) == pytest.approx(p, rel=1e-9)


def test_proportion_score_matches_statsmodels_ztest():
    # Reference: statsmodels 0.15.0 proportions_ztest (pooled variance when value = 0).
    z = proportion_z(1200, np.array([130 / 1200]), 900, np.array([121 / 900]))
    ref, _ = proportions_ztest([121, 130], [900, 1200])
    assert z[0] == pytest.approx(ref, rel=1e-12)


def test_rate_scores_match_statsmodels_poisson_tests():
    # Reference: statsmodels 0.15.0 test_poisson_2indep(compare="diff"): "score" for the
    # pooled test at difference 0, "wald" for the unpooled test at a margin.
    pooled = rate_z(1000, np.array([0.10]), 800, np.array([0.13]))
    ref = rates.test_poisson_2indep(104, 800, 100, 1000, method="score", compare="diff")
    assert pooled[0] == pytest.approx(ref.statistic, rel=1e-9)
    unpooled = rate_z(1000, np.array([0.10]), 800, np.array([0.13]), margin=0.01)
    ref = rates.test_poisson_2indep(104, 800, 100, 1000, method="wald", compare="diff", value=0.01)
    assert unpooled[0] == pytest.approx(ref.statistic, rel=1e-9)


def test_accumulate_equals_numpy_on_the_concatenated_units():
    # Reference: numpy 2.4 mean/var of all units up to each look (Chan, Golub & LeVeque 1983).
    rng = np.random.default_rng(0)
    parts = [rng.normal(5.0, 3.0, m) for m in (3, 10, 1, 40)]
    counts = np.array([p.size for p in parts])
    means = np.array([[p.mean() for p in parts]])
    m2s = np.array([[((p - p.mean()) ** 2).sum() for p in parts]])
    mean, m2 = accumulate(counts, means, m2s)
    for k in range(len(parts)):
        units = np.concatenate(parts[: k + 1])
        assert mean[0, k] == pytest.approx(units.mean(), rel=1e-12)
        assert m2[0, k] == pytest.approx(units.var() * units.size, rel=1e-10)


def test_normal_arm_statistics_have_the_sampling_distributions():
    # Sample mean ~ N(mu, sd^2/n) and (n-1) s^2 / sd^2 ~ chi^2_{n-1} (Student 1908; checked
    # with scipy 1.17.1 stats.kstest).
    rng = np.random.default_rng(8)
    mean, m2 = NormalArm(2.0, 3.0).draw(rng, 4000, np.array([12, 30]))
    assert stats.kstest((mean[:, 1] - 2.0) / (3.0 / np.sqrt(30)), "norm").pvalue > 0.01
    assert stats.kstest(m2[:, 1] / 9.0, "chi2", args=(29,)).pvalue > 0.01


def test_count_arms_have_the_planned_mean_and_variance():
    # Poisson and negative binomial totals: mean m*lam, variance m*phi*lam (common practice,
    # no source); 20,000 draws, tolerance a few standard errors.
    rng = np.random.default_rng(2)
    for phi in (1.0, 3.0, 0.5):
        mean, _ = CountArm(0.4, phi).draw(rng, 20_000, np.array([500]))
        totals = mean[:, 0] * 500
        assert totals.mean() == pytest.approx(200.0, rel=0.01)
        assert totals.var() == pytest.approx(500 * phi * 0.4, rel=0.05)
    mean, _ = BinomialArm(0.2).draw(rng, 20_000, np.array([100, 300]))
    assert mean[:, 1].var() == pytest.approx(0.2 * 0.8 / 300, rel=0.05)


def test_bins_keep_the_history_mean_and_variance_exactly():
    # Reference: numpy 2.4 mean/var of the raw history.
    x = np.random.default_rng(4).lognormal(0.0, 2.0, size=50_000)
    bins = bin_history(x)
    assert bins.prob.size == MAX_BINS
    assert bins.prob.sum() == pytest.approx(1.0)
    mean = bins.prob @ bins.mean
    var = bins.prob @ (bins.var + (bins.mean - mean) ** 2)
    assert mean == pytest.approx(x.mean(), rel=1e-12)
    assert var == pytest.approx(x.var(), rel=1e-9)
    assert np.all(bins.var[-TAIL:] == 0) and bins.mean[-1] == x.max()


def test_binned_draws_have_the_bootstrap_mean_and_variance():
    # The mean of n resampled values has mean mean(x) and variance var(x)/n (Efron &
    # Tibshirani 1993, ch. 2); 2,000 draws, tolerance a few standard errors.
    x = np.random.default_rng(6).lognormal(0.0, 1.0, size=20_000)
    arm = EmpiricalArm(x, bin_history(x))
    mean, m2 = arm.draw(np.random.default_rng(1), 2000, np.array([200_000]))
    se = x.std() / np.sqrt(200_000)
    assert mean[:, 0].mean() == pytest.approx(x.mean(), abs=4 * se / np.sqrt(2000))
    assert mean[:, 0].std() == pytest.approx(se, rel=0.07)
    assert (m2[:, 0] / 199_999).mean() == pytest.approx(x.var(ddof=1), rel=0.01)


def _constant_design(looks, c):
    fractions = np.arange(1, looks + 1) / looks
    return SimpleNamespace(fractions=fractions, upper=np.full(looks, c), lower=None)


def test_peeking_at_five_looks_inflates_the_false_positive_rate():
    # Five equally spaced looks, each at nominal two-sided 0.05: overall false-positive rate
    # 0.142 (Armitage, McPherson & Rowe 1969, J. R. Statist. Soc. A 132:235-244; from memory).
    r = simulate_power("mean", 0.0, 0.0, 5000, sd=1.0, looks=_constant_design(5, 1.959964),
                       reps=4000, seed=1)
    assert r.looks == 5
    assert r.false_positive_low <= 0.142 <= r.false_positive_high


@pytest.mark.parametrize(
    ("name", "upper"),
    [
        # Pocock constant 2.413 for K = 5, two-sided 0.05 (Jennison & Turnbull 2000, Table 2.1).
        ("pocock", np.full(5, 2.413)),
        # O'Brien-Fleming 2.040 sqrt(K/k) for K = 5 (Jennison & Turnbull 2000, Table 2.3).
        ("obrien-fleming", 2.040 * np.sqrt(5 / np.arange(1, 6))),
    ],
)
def test_published_group_sequential_boundaries_keep_alpha(name, upper):
    design = SimpleNamespace(fractions=np.arange(1, 6) / 5, upper=upper, lower=None)
    r = simulate_power("proportion", 0.1, 0.0, 20_000, looks=design, reps=4000, seed=2)
    assert r.false_positive_low <= 0.05 <= r.false_positive_high, name


def test_early_stopping_uses_fewer_units_and_futility_costs_power():
    design = _constant_design(4, 2.361)  # Pocock K = 4 (Jennison & Turnbull 2000, Table 2.1)
    fixed = simulate_power("mean", 0.0, 0.1, 3000, sd=1.0, reps=2000, seed=3)
    seq = simulate_power("mean", 0.0, 0.1, 3000, sd=1.0, reps=2000, seed=3, looks=design)
    assert seq.expected_fraction < 0.9 and fixed.expected_fraction == 1.0
    futile = SimpleNamespace(fractions=design.fractions, upper=design.upper,
                             lower=np.array([0.5, 1.0, 1.5, np.nan]))
    with_futility = simulate_power("mean", 0.0, 0.1, 3000, sd=1.0, reps=2000, seed=3,
                                   looks=futile)
    assert with_futility.power < seq.power
    assert with_futility.false_positive <= seq.false_positive


@pytest.mark.parametrize("futility", [None, "ld-obrien-fleming"])
def test_simulated_sequential_design_reaches_its_power(futility):
    # fourfold.engine.sequential computes power and expected size by recursive integration
    # (Jennison & Turnbull 2000, ch. 19); the simulated z path must agree. Fixed-design n per
    # arm 2 (z_{1-a/2} + z_{1-b})^2 / d^2 (Lehr 1992), times the design's inflation.
    from fourfold.engine.sequential import design

    d = design(4, alpha=0.05, power=0.8, futility=futility)
    n_fixed = 2 * (special.ndtri(0.975) + special.ndtri(0.8)) ** 2 / 0.1**2
    r = simulate_power("mean", 0.0, 0.1, n_fixed * d.inflation, sd=1.0, looks=d, reps=4000,
                       seed=1)
    assert r.low <= d.power <= r.high
    assert r.expected_fraction == pytest.approx(d.expected_h1 / d.inflation, abs=0.02)
    if futility is None:
        assert r.false_positive_low <= d.alpha <= r.false_positive_high
    else:
        assert r.false_positive_high < d.alpha  # a futility stop that is obeyed lowers α
