"""Dunnett's many-to-one critical values and the √k allocation.

Outside sources, per check:

* the published tables, to their two decimals: Dunnett (1955) *JASA* 50:1096–1121, Table 1a
  (one-sided, joint level 0.95; the tables sit on pp. 1112–1118, the page range a textbook
  reprint of the table gives, not checked on the journal's page) and Dunnett (1964)
  *Biometrics* 20:482–491, Table II (two-sided, 0.95; it replaces the 1955 paper's inexact
  Table 2a). The two-sided values are recalled from memory; the one-sided rows were compared
  with that reprint. Each is also checked against scipy's integration, below.
* scipy 1.17 ``scipy.stats.multivariate_normal`` and ``multivariate_t`` (Genz's algorithms),
  an integration independent of the engine's quadrature;
* mpmath 1.3 ``mpmath.quad`` of the one-factor integral at 30 digits;
* a simulation of the experiment itself: arm means drawn with numpy, the k statistics formed
  as a test would form them.
"""

import numpy as np
import pytest
from scipy import stats

from fourfold import engine
from fourfold.engine import dunnett

K = (1, 2, 3, 4, 5, 6, 7, 8, 9)
ONE_SIDED_1955 = {  # Table 1a, α = 0.05 one-sided (from memory), k = 1..9 treatments
    10: (1.81, 2.15, 2.34, 2.47, 2.56, 2.64, 2.70, 2.76, 2.81),
    20: (1.72, 2.03, 2.19, 2.30, 2.39, 2.46, 2.51, 2.56, 2.60),
    60: (1.67, 1.95, 2.10, 2.21, 2.28, 2.35, 2.39, 2.44, 2.48),
    np.inf: (1.64, 1.92, 2.06, 2.16, 2.23, 2.29, 2.34, 2.38, 2.42),
}
OFF_BY_ONE = {(60, 6), (60, 7)}  # Table 1a prints 2.35 and 2.39 (as reprinted, too)
TWO_SIDED_1964 = {  # Table II, α = 0.05 two-sided (from memory), k = 1..9 treatments
    10: (2.23, 2.57, 2.76, 2.89, 2.99, 3.07, 3.14, 3.19, 3.24),
    20: (2.09, 2.38, 2.54, 2.65, 2.73, 2.80, 2.86, 2.90, 2.95),
    60: (2.00, 2.27, 2.41, 2.51, 2.58, 2.64, 2.69, 2.73, 2.77),
    np.inf: (1.96, 2.21, 2.35, 2.44, 2.51, 2.57, 2.61, 2.65, 2.69),
}


@pytest.mark.parametrize("alternative,table", [("greater", ONE_SIDED_1955),
                                               ("two-sided", TWO_SIDED_1964)])
def test_critical_values_against_dunnetts_tables(alternative, table):
    for df, row in table.items():
        c = dunnett.critical_value(0.05, K, alternative=alternative, df=df)
        # Tabulated to two decimals: within half a unit of the last digit (plus float dust),
        # but for two entries of the 1955 table, one unit off; scipy's multivariate t
        # (maxpts 5·10⁶, run once by hand) puts the exact values where the engine does:
        # 2.3448 and 2.3954.
        slack = np.array([0.01 if (df, k) in OFF_BY_ONE else 0.005 for k in K])
        assert np.all(np.abs(c - np.array(row)) <= slack + 1e-9), (df, c.round(4))


def _equicorrelated(k, rho):
    cov = np.full((k, k), rho)
    np.fill_diagonal(cov, 1.0)
    return cov


@pytest.mark.parametrize("k,ratio", [(2, 0.2), (2, 4.0), (3, 1 / np.sqrt(3)), (5, 1.0)])
@pytest.mark.parametrize("alternative", ["two-sided", "greater"])
def test_family_error_against_scipy_multivariate_normal(k, ratio, alternative):
    c = float(dunnett.critical_value(0.05, k, ratio=ratio, alternative=alternative))
    dist = stats.multivariate_normal(np.zeros(k), _equicorrelated(k, ratio / (1 + ratio)))
    lower = np.full(k, -c if alternative == "two-sided" else -np.inf)
    inside = stats.multivariate_normal.cdf(np.full(k, c), cov=dist.cov, lower_limit=lower,
                                           abseps=1e-6, releps=1e-6,
                                           rng=np.random.default_rng(0))
    assert 1.0 - inside == pytest.approx(0.05, abs=5e-6)


@pytest.mark.parametrize("df", [5, 40])
def test_family_error_against_scipy_multivariate_t(df):
    k, ratio = 3, 1.0
    c = float(dunnett.critical_value(0.05, k, ratio=ratio, df=df))
    dist = stats.multivariate_t(np.zeros(k), _equicorrelated(k, 0.5), df=df)
    inside = dist.cdf(np.full(k, c), lower_limit=np.full(k, -c), maxpts=500_000,
                      random_state=np.random.default_rng(1))
    assert 1.0 - inside == pytest.approx(0.05, abs=1e-4)


def test_one_factor_integral_against_mpmath():
    import mpmath

    mpmath.mp.dps = 30
    k, ratio, c = 4, 0.5, 2.4
    rho = mpmath.mpf(ratio) / (1 + ratio)
    a, b = mpmath.sqrt(rho), mpmath.sqrt(1 - rho)

    def inside(w):
        upper = mpmath.ncdf((c - a * w) / b)
        lower = mpmath.ncdf((-c - a * w) / b)
        return mpmath.npdf(w) * (upper - lower) ** k

    exact = 1 - mpmath.quad(inside, [-mpmath.inf, -3, 0, 3, mpmath.inf])
    assert float(dunnett.family_error(c, k, ratio=ratio)) == pytest.approx(float(exact),
                                                                           rel=1e-10)
    tiny = float(dunnett.critical_value(1e-7, 3, alternative="less"))
    one_sided = 1 - mpmath.quad(
        lambda w: mpmath.npdf(w) * mpmath.ncdf((tiny - mpmath.sqrt(0.5) * w)
                                               / mpmath.sqrt(0.5)) ** 3,
        [-mpmath.inf, 0, mpmath.inf])
    assert float(one_sided) == pytest.approx(1e-7, rel=1e-6)


def test_critical_value_holds_the_family_wise_error_in_a_simulated_experiment():
    # 200,000 experiments with 3 arms of 2 units per control unit, all under H0: each arm's
    # mean and the control's are drawn, the three z statistics share the control. The share
    # of experiments where any |z| passes c is α within 3 binomial standard errors.
    rng = np.random.default_rng(1955)
    reps, k, ratio, n_c = 200_000, 3, 2.0, 400
    c = float(dunnett.critical_value(0.05, k, ratio=ratio))
    control = rng.standard_normal(reps) / np.sqrt(n_c)
    arms = rng.standard_normal((reps, k)) / np.sqrt(ratio * n_c)
    z = (arms - control[:, None]) / np.sqrt(1 / n_c + 1 / (ratio * n_c))
    rejected = (np.abs(z) > c).any(axis=1).mean()
    assert rejected == pytest.approx(0.05, abs=3 * np.sqrt(0.05 * 0.95 / reps))
    # Bonferroni's per-comparison level in the same experiments spends visibly less.
    bonferroni = (np.abs(z) > stats.norm.isf(0.05 / (2 * k))).any(axis=1).mean()
    assert bonferroni < rejected - 0.002


def test_per_comparison_alpha_between_bonferroni_and_alpha():
    k = np.arange(1, 10)
    dunnett_alpha = engine.adjusted_alpha(0.05, k, "dunnett")
    sidak = engine.adjusted_alpha(0.05, k, "sidak")
    assert dunnett_alpha[0] == pytest.approx(0.05, rel=1e-12)
    assert np.all(dunnett_alpha[1:] > sidak[1:]) and np.all(dunnett_alpha <= 0.05 + 1e-15)
    # One-sided and two-sided differ; "less" mirrors "greater".
    one = engine.adjusted_alpha(0.05, 3, "dunnett", alternative="greater")
    assert float(one) == pytest.approx(float(
        engine.adjusted_alpha(0.05, 3, "dunnett", alternative="less")), rel=1e-12)
    assert float(one) == pytest.approx(float(stats.norm.sf(2.062084)), rel=1e-4)


def test_dunnett_needs_fewer_units_than_bonferroni_and_sidak():
    alphas = {m: float(engine.adjusted_alpha(0.05, 3, m)) for m in ("bonferroni", "sidak",
                                                                    "dunnett")}
    n = {m: float(engine.sample_size("proportion", 0.031, 0.05, relative=True, alpha=a))
         for m, a in alphas.items()}
    assert n["dunnett"] < n["sidak"] < n["bonferroni"]


def test_bad_input():
    with pytest.raises(ValueError, match="arms must be a whole number of at least 1"):
        dunnett.critical_value(0.05, 2.5)
    with pytest.raises(ValueError, match="alpha must be between 0 and 1"):
        dunnett.critical_value(1.5, 2)
    with pytest.raises(ValueError, match="alternative must be one of"):
        dunnett.critical_value(0.05, 2, alternative="both")
    with pytest.raises(ValueError, match="comparisons must be a whole number of arms"):
        engine.adjusted_alpha(0.05, 1.5, "dunnett")
    values = dunnett.critical_value([0.05, 0.05, 0.05], [2, 0, 2], ratio=[1.0, 1.0, -1.0])
    assert np.isfinite(values[0]) and np.isnan(values[1:]).all()


@pytest.mark.parametrize("kind,kw", [
    ("mean", dict(baseline=2.35, effect=0.1, sd=14.8)),
    ("proportion", dict(baseline=0.031, effect=0.05, relative=True)),
])
@pytest.mark.parametrize("k", [2, 3, 4, 9])
def test_sqrt_k_allocation_minimises_the_total_units(kind, kw, k):
    # n_c(1 + k·r) over a grid of ratios r around 1/√k: the minimum sits at the √k rule (for
    # a proportion, whose two arms' variances differ a little, within a few grid steps).
    grid = np.exp(np.linspace(np.log(0.05), np.log(2.0), 801))
    kw = dict(kw)
    baseline, effect = kw.pop("baseline"), kw.pop("effect")
    totals = engine.sample_size(kind, baseline, effect, ratio=grid, **kw) * (1 + k * grid)
    best = grid[np.argmin(totals)]
    rule = float(engine.allocation_ratio(k, "sqrt-k"))
    assert best == pytest.approx(rule, rel=0.01 if kind == "mean" else 0.03)
    at_rule = float(engine.sample_size(kind, baseline, effect, ratio=rule, **kw)) * (1 + k * rule)
    equal = float(engine.sample_size(kind, baseline, effect, ratio=1.0, **kw)) * (1 + k)
    assert at_rule <= totals.min() * (1 + 1e-4) and at_rule < equal
    # The saving against equal allocation for a mean in closed form: the total is
    # proportional to (1 + k·r)(1 + 1/r), 4·(1 + k)/2… = (1 + √k)² at r = 1/√k vs 2(1 + k).
    if kind == "mean":
        assert at_rule / equal == pytest.approx((1 + np.sqrt(k)) ** 2 / (2 * (1 + k)),
                                                rel=1e-9)


@pytest.mark.parametrize("alternative", ["two-sided", "greater"])
@pytest.mark.parametrize("arms,ratio", [(2, 1.0), (3, 1.0), (3, 1 / np.sqrt(3))])
def test_a_t_row_at_the_normal_limits_level_is_on_the_safe_side(arms, ratio, alternative):
    # The plan gives a Student's t row the per-comparison level of the normal limit and takes
    # its t quantile (README, "Dunnett's correction"): that critical value must not fall below
    # the multivariate-t one, and must meet it as the degrees of freedom grow. Reference: scipy
    # (stats.t.ppf) for the t quantile; the multivariate-t values are checked against Dunnett
    # (1955, 1964) above.
    level = float(dunnett.per_comparison_alpha(0.05, arms, ratio, alternative))
    tails = 2 if alternative == "two-sided" else 1
    gaps = []
    for df in (10, 20, 60, 200, 2000):
        row = stats.t.ppf(1 - level / tails, df)
        exact = float(dunnett.critical_value(0.05, arms, ratio, alternative, df=df))
        assert row >= exact - 1e-9
        gaps.append(row - exact)
    assert gaps == sorted(gaps, reverse=True) and gaps[-1] < 1e-3
