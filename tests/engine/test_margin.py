"""The tightest margin a one-sided test rules out, against hand formulas and reference libraries.

References (test-only): the closed forms of a one-sided test against a margin (Chow, Shao &
Wang 2008, *Sample Size Calculations in Clinical Research*, 2nd ed., §3.2 for means, §4.2 for
proportions) evaluated with scipy 1.17.1 (``scipy.stats.norm``); statsmodels 0.15.0
(``TTestIndPower.solve_power``) for the t test, whose power depends on the standardised
distance between effect and margin; Farrington & Manning (1990, *Statistics in Medicine*
9:1447–1454) for the pooled proportion's H0 variance, its restricted maximum-likelihood
proportions found here by scipy's bounded scalar optimiser instead of the engine's closed form.
"""

import math

import numpy as np
import pytest
import scipy
import statsmodels
from scipy import optimize, stats
from statsmodels.stats.power import TTestIndPower

from fourfold import engine

SCIPY = scipy.__version__
STATSMODELS = statsmodels.__version__

Z = stats.norm.ppf


@pytest.mark.parametrize("alternative", ["greater", "less"])
@pytest.mark.parametrize(("ratio", "alpha", "power"), [(1.0, 0.05, 0.8), (2.0, 0.025, 0.9)])
def test_mean_z_is_the_closed_form(alternative, ratio, alpha, power):
    sd, n, effect = 0.61, 14_533.0, 0.004
    distance = (Z(1 - alpha) + Z(power)) * sd * math.sqrt(1 + 1 / ratio) / math.sqrt(n)
    expected = effect - distance if alternative == "greater" else effect + distance
    got = engine.detectable_margin("mean", 1.84, effect, n, sd=sd, alpha=alpha, power=power,
                                   ratio=ratio, alternative=alternative)
    assert float(got) == pytest.approx(expected, rel=1e-9)


def test_mean_t_matches_statsmodels():
    """statsmodels' own power at the standardised distance; its solve_power root is loose (its
    power there is 0.7999966), so the margin is put back into its power function instead."""
    sd, n, ratio, effect = 2.0, 40.0, 1.5, 0.5
    got = float(engine.detectable_margin("mean", 10.0, effect, n, sd=sd, ratio=ratio,
                                         method="t", alternative="greater"))
    power = TTestIndPower().power((effect - got) / sd, n, 0.05, ratio=ratio,
                                  alternative="larger")
    assert power == pytest.approx(0.8, abs=1e-9)


def test_rate_is_the_closed_form_with_the_treatment_variance_fixed():
    """Poisson counts: var = λ_c + λ_t/r per control unit, λ_t = baseline + effect."""
    baseline, effect, n = 0.018, 0.0, 131_000.0
    distance = (Z(0.95) + Z(0.8)) * math.sqrt(baseline + (baseline + effect)) / math.sqrt(n)
    got = engine.detectable_margin("rate", baseline, effect, n, alternative="less")
    assert float(got) == pytest.approx(effect + distance, rel=1e-9)
    relative = engine.detectable_margin("rate", baseline, effect, n, alternative="less",
                                        relative=True)
    assert float(relative) == pytest.approx((effect + distance) / baseline, rel=1e-9)


def test_unpooled_proportion_is_the_closed_form():
    p_c, effect, n = 0.031, 0.001, 60_000.0
    p_t = p_c + effect
    s1 = math.sqrt(p_c * (1 - p_c) + p_t * (1 - p_t))
    distance = (Z(0.95) + Z(0.8)) * s1 / math.sqrt(n)
    got = engine.detectable_margin("proportion", p_c, effect, n, method="unpooled",
                                   alternative="greater")
    assert float(got) == pytest.approx(effect - distance, rel=1e-9)


def _restricted(p_c, p_t, margin, n_c, n_t):
    """Maximum-likelihood proportions under H0: p_t − p_c = margin (by optimiser)."""
    def minus_log_likelihood(c):
        t = c + margin
        return -(n_c * (p_c * math.log(c) + (1 - p_c) * math.log(1 - c))
                 + n_t * (p_t * math.log(t) + (1 - p_t) * math.log(1 - t)))

    low, high = max(0.0, -margin) + 1e-12, min(1.0, 1.0 - margin) - 1e-12
    c = optimize.minimize_scalar(minus_log_likelihood, bounds=(low, high), method="bounded",
                                 options={"xatol": 1e-14}).x
    return c, c + margin


@pytest.mark.parametrize("alternative", ["greater", "less"])
def test_pooled_proportion_reaches_the_power_at_the_margin_found(alternative):
    """Farrington–Manning: power Φ((|δ|√n − z₁₋α·s0)/s1), s0 from the restricted proportions."""
    p_c, effect, n, ratio = 0.114, 0.0, 20_000.0, 1.0
    margin = float(engine.detectable_margin("proportion", p_c, effect, n, ratio=ratio,
                                            alternative=alternative))
    assert (margin < effect) if alternative == "greater" else (margin > effect)
    p_t = p_c + effect
    c0, t0 = _restricted(p_c, p_t, margin, n, ratio * n)
    s0 = math.sqrt(c0 * (1 - c0) + t0 * (1 - t0) / ratio)
    s1 = math.sqrt(p_c * (1 - p_c) + p_t * (1 - p_t) / ratio)
    power = stats.norm.cdf((abs(effect - margin) * math.sqrt(n) - Z(0.95) * s0) / s1)
    assert power == pytest.approx(0.8, abs=1e-6)


@pytest.mark.parametrize(("kind", "method", "sd"), [
    ("proportion", "pooled", None), ("proportion", "arcsine", None),
    ("proportion", "pooled-cc", None), ("rate", "z", 0.2), ("mean", "t", 1.0)])
def test_the_margin_found_gives_the_power_back(kind, method, sd):
    """A consistency check: the engine's own power at the margin found is the power asked."""
    baseline = 0.2 if kind != "mean" else 3.0
    for alternative in ("greater", "less"):
        margin = engine.detectable_margin(kind, baseline, 0.01, 5_000.0, sd=sd, method=method,
                                          alternative=alternative, power=0.9)
        back = engine.power(kind, baseline, 0.01, 5_000.0, sd=sd, method=method,
                            alternative=alternative, margin=margin)
        assert float(back) == pytest.approx(0.9, abs=1e-8)


def test_a_two_sided_test_has_no_such_margin():
    with pytest.raises(ValueError, match="one-sided"):
        engine.detectable_margin("mean", 1.0, 0.0, 100.0, sd=1.0, alternative="two-sided")
    values, reasons = engine.values_and_reasons(
        "detectable_margin", "proportion", np.array([0.1, 1.5]), effect=0.0, n=1000.0,
        alternative="less")
    assert math.isfinite(values[0]) and math.isnan(values[1])
    assert reasons.tolist() == ["", "baseline must be between 0 and 1 (exclusive) for a "
                                    "proportion"]


def test_more_units_rule_out_a_tighter_margin():
    margins = engine.detectable_margin("proportion", 0.031, 0.0,
                                       np.array([1e4, 1e5, 1e6]), alternative="greater")
    assert np.all(np.diff(margins) > 0) and np.all(margins < 0)
