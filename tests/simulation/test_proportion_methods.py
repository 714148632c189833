"""The simulation runs each proportion row's own test: scores, power, level and staleness.

Reference libraries: statsmodels 0.15.0 (``statsmodels.stats.proportion``), scipy 1.17.1
(``scipy.stats.chi2_contingency``, ``scipy.optimize.minimize_scalar``), numpy 2.4.

statsmodels 0.15.0 ``test_proportions_2indep(method="score", compare="diff")`` is used only at
a margin of 0: at any other margin its restricted estimates do not maximise the restricted
likelihood (statsmodels issue #10269, open: ``count0`` stands where ``nobs0`` belongs in the
cubic's linear term). There the reference is the restricted maximum found numerically by
scipy 1.17.1, as Farrington & Manning (1990, Statistics in Medicine 9:1447-1454) define it.
"""

import copy
import math

import numpy as np
import pytest
from scipy import optimize, stats
from statsmodels.stats import proportion as sm_proportion

from fourfold import engine
from fourfold.plan import Metric, Plan, Settings, dumps, loads
from fourfold.plan.evaluation import compute
from fourfold.simulation import check_metric, message, row_is_stale, simulate_power, wilson_interval
from fourfold.simulation.teststats import proportion_z

# One invented 2x2 table: treatment 121 of 900, control 130 of 1200.
X_T, N_T, X_C, N_C = 121, 900, 130, 1200
METHODS = ("pooled", "unpooled", "arcsine", "pooled-cc")


def _z(method, margin):
    return float(proportion_z(N_C, np.array([X_C / N_C]), N_T, np.array([X_T / N_T]),
                              margin, method)[0])


def _restricted_by_optimiser(margin):
    """Control and treatment proportions maximising the binomial likelihood under H0."""

    def minus_loglik(p_c):
        p_t = p_c + margin
        return -(X_T * np.log(p_t) + (N_T - X_T) * np.log1p(-p_t)
                 + X_C * np.log(p_c) + (N_C - X_C) * np.log1p(-p_c))

    low, high = max(0.0, -margin), min(1.0, 1.0 - margin)
    found = optimize.minimize_scalar(minus_loglik, bounds=(low + 1e-12, high - 1e-12),
                                     method="bounded", options={"xatol": 1e-13})
    return found.x, found.x + margin


def _fm_score(margin, correction=0.0):
    p_c0, p_t0 = _restricted_by_optimiser(margin)
    se = math.sqrt(p_c0 * (1 - p_c0) / N_C + p_t0 * (1 - p_t0) / N_T)
    diff = X_T / N_T - X_C / N_C - margin
    return math.copysign(max(abs(diff) - correction, 0.0), diff) / se


def test_pooled_score_at_margin_zero_matches_statsmodels_score_test():
    # Reference: statsmodels 0.15.0 test_proportions_2indep(method="score", compare="diff",
    # correction=False) at value 0 (the pooled z).
    ref = sm_proportion.test_proportions_2indep(X_T, N_T, X_C, N_C, value=0.0, method="score",
                                  compare="diff", correction=False).statistic
    assert _z("pooled", 0.0) == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("margin", [-0.02, 0.03])
def test_pooled_score_at_a_margin_uses_the_restricted_maximum(margin):
    # Reference: Farrington & Manning (1990) score, restricted MLE by scipy 1.17.1
    # minimize_scalar on the binomial log-likelihood.
    assert _z("pooled", margin) == pytest.approx(_fm_score(margin), rel=1e-7)


@pytest.mark.parametrize("margin", [0.0, -0.02])
def test_unpooled_score_matches_statsmodels_wald(margin):
    # Reference: statsmodels 0.15.0 test_proportions_2indep(method="wald", compare="diff").
    ref = sm_proportion.test_proportions_2indep(X_T, N_T, X_C, N_C, value=margin, method="wald",
                                  compare="diff").statistic
    assert _z("unpooled", margin) == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("margin", [0.0, -0.02])
def test_arcsine_score_is_cohens_h_over_its_standard_error(margin):
    # Reference: statsmodels 0.15.0 proportion_effectsize (Cohen's h, Cohen 1988 ch. 6). The
    # standard error is sqrt(k/n_c + 1/n_t) by numpy arithmetic, k = p_c(1 - p_c)/(q(1 - q))
    # with q = p_c + margin: the delta method's variance of 2 asin sqrt(q) (common practice,
    # no source); k = 1 at margin 0.
    p_c, q = X_C / N_C, X_C / N_C + margin
    h = sm_proportion.proportion_effectsize(X_T / N_T, q)
    k = p_c * (1 - p_c) / (q * (1 - q))
    assert (margin == 0.0) == (k == 1.0)
    assert _z("arcsine", margin) == pytest.approx(h / math.sqrt(k / N_C + 1 / N_T), rel=1e-12)


@pytest.mark.parametrize(("x_t", "n_t", "x_c", "n_c"),
                         [(121, 900, 130, 1200), (40, 200, 62, 250), (30, 300, 31, 301)])
def test_continuity_corrected_score_squared_is_yates_chi_squared(x_t, n_t, x_c, n_c):
    # Reference: scipy 1.17.1 chi2_contingency(correction=True), Yates' corrected chi-squared
    # of the 2x2 table, equal to the squared pooled z with |difference| shrunk by
    # (1/n_c + 1/n_t)/2 (Fleiss, Levin & Paik 2003, section 2.3); the third table's
    # difference is smaller than the correction, so both are 0.
    z = proportion_z(n_c, np.array([x_c / n_c]), n_t, np.array([x_t / n_t]),
                     method="pooled-cc")[0]
    table = [[x_t, n_t - x_t], [x_c, n_c - x_c]]
    chi2 = stats.chi2_contingency(table, correction=True).statistic
    assert z * z == pytest.approx(chi2, rel=1e-10, abs=1e-12)
    assert np.sign(z) == np.sign(x_t / n_t - x_c / n_c) or chi2 == 0


def test_continuity_corrected_score_at_a_margin():
    # Reference: the Farrington-Manning score above (scipy 1.17.1 restricted MLE) with the
    # correction (1/n_c + 1/n_t)/2 of Fleiss, Tytun & Ury (1980, Biometrics 36:343-346).
    correction = 0.5 * (1 / N_C + 1 / N_T)
    assert _z("pooled-cc", -0.02) == pytest.approx(_fm_score(-0.02, correction), rel=1e-7)


@pytest.mark.parametrize("method", METHODS)
@pytest.mark.parametrize("margin", [0.0, -0.05, 0.05])
def test_degenerate_replicates_score_finite_and_zero_without_spread(method, margin):
    # Common practice, no source: a replicate with all units 0 (or all 1) in both arms has
    # no spread; it must neither crash nor give nan, and at margin 0 it must not reject.
    p_c = np.array([[0.0], [0.0], [1.0], [1.0], [0.02], [0.98]])
    p_t = np.array([[0.0], [1.0], [1.0], [0.0], [0.0], [1.0]])
    z = proportion_z(np.array([50]), p_c, np.array([60]), p_t, margin, method)
    assert np.all(np.isfinite(z))
    if margin == 0.0:
        assert z[0, 0] == 0.0 and z[2, 0] == 0.0


def test_unknown_method_for_a_score_is_refused():
    with pytest.raises(ValueError, match="method must be one of 'pooled'"):
        proportion_z(100, np.array([0.1]), 100, np.array([0.2]), method="wald")


@pytest.mark.parametrize("method", METHODS)
def test_tiny_arms_with_extreme_proportions_simulate(method):
    # Invented extreme row: 2 % baseline, 15 units per arm (many arms with no conversions).
    r = simulate_power("proportion", 0.02, 0.1, 15, method=method, margin=-0.01,
                       alternative="greater", reps=200, seed=1)
    assert 0.0 <= r.power <= 1.0 and 0.0 <= r.false_positive <= 1.0


# At small n the four methods need different units (pooled-cc the most, Fleiss, Tytun & Ury
# 1980); each simulated power must match the engine's closed form for that same test.
POWER_CASES = [(method, 0.0, "two-sided") for method in METHODS] + [
    (method, -0.03, "greater") for method in METHODS]


@pytest.mark.parametrize(("method", "margin", "alternative"), POWER_CASES)
def test_simulated_power_matches_the_closed_form_of_the_same_test(method, margin, alternative):
    # The engine's closed form is checked against Fleiss, Levin & Paik (2003) and statsmodels
    # in tests/engine; here the Monte Carlo run (4,000 replicates, fixed seed) must land within
    # 3 standard errors of it (common practice, no source).
    args = dict(margin=margin, alternative=alternative, method=method)
    n = float(engine.sample_size("proportion", 0.114, 0.06, power=0.8, **args))
    r = simulate_power("proportion", 0.114, 0.06, n, reps=4000, seed=7, **args)
    analytic = float(engine.power("proportion", 0.114, 0.06, r.n_control, **args))
    assert abs(r.power - analytic) <= 3 * math.sqrt(analytic * (1 - analytic) / 4000)


def test_pooled_z_overshoots_the_continuity_corrected_closed_form():
    # The reason for running the row's own test: at the Fleiss-Tytun-Ury (1980) units the
    # uncorrected pooled z has more power than 0.8, by more than 3 standard errors at 4,000
    # replicates, so checking a pooled-cc row with it would flag a false "above".
    n = float(engine.sample_size("proportion", 0.114, 0.06, power=0.8, method="pooled-cc"))
    plain = simulate_power("proportion", 0.114, 0.06, n, method="pooled", reps=4000, seed=7)
    assert plain.power - 0.8 > 3 * math.sqrt(0.8 * 0.2 / 4000)


@pytest.mark.parametrize(("method", "margin", "alternative"),
                         [(m, 0.0, "two-sided") for m in METHODS]
                         + [(m, -0.03, "greater") for m in ("pooled", "unpooled", "pooled-cc")])
def test_false_positive_rate_is_near_alpha(method, margin, alternative):
    # Under H0 a level-0.05 test rejects about 5 % of the time (the definition of the level;
    # common practice, no source). Loose band: the normal approximation and the continuity
    # correction's conservatism at 1,500 units per arm; 3,000 replicates.
    r = simulate_power("proportion", 0.114, margin, 1500, method=method, margin=margin,
                       alternative=alternative, reps=3000, seed=3)
    assert 0.03 <= r.false_positive <= 0.07


def test_arcsine_at_a_margin_keeps_its_level():
    # With 1/n_c as the variance of 2 asin sqrt(p_c + margin) the one-sided 5 % test rejected
    # about 6.3 % of the time under H0 at 11.4 % and -3 points; the delta method's variance
    # p_c(1 - p_c)/(q(1 - q) n_c), q = p_c + margin (common practice, no source), keeps it at α.
    # 4,000 replicates: the Wilson interval must hold 0.05.
    r = simulate_power("proportion", 0.114, 0.06, 167, method="arcsine", margin=-0.03,
                       alternative="greater", reps=4000, seed=3)
    assert r.false_positive_low <= 0.05 <= r.false_positive_high


@pytest.mark.parametrize(
    ("kind", "method", "margin", "test"),
    [
        ("proportion", None, 0.0, "two-proportion z (pooled)"),
        ("proportion", "pooled", -0.01, "two-proportion z (Farrington–Manning)"),
        ("proportion", "unpooled", 0.0, "two-proportion z (unpooled)"),
        ("proportion", "arcsine", 0.0, "Cohen's h (arcsine)"),
        ("proportion", "pooled-cc", 0.0, "two-proportion z (pooled, continuity-corrected)"),
        ("proportion", "pooled-cc", -0.01,
         "two-proportion z (Farrington–Manning, continuity-corrected)"),
        ("mean", "t", 0.0, "Welch t"),
        ("mean", "z", 0.0, "Welch t"),
        ("rate", "z", 0.0, "two-rate z (pooled)"),
    ],
)
def test_result_names_the_test_it_ran(kind, method, margin, test):
    r = simulate_power(kind, 0.3, 0.05, 500, sd=1.0 if kind == "mean" else None,
                       method=method, margin=margin, alternative="greater", reps=20)
    assert r.test == test


@pytest.mark.parametrize(("kind", "method"),
                         [("proportion", "t"), ("mean", "pooled"), ("rate", "t")])
def test_a_method_of_another_kind_is_refused_naming_the_allowed_ones(kind, method):
    allowed = "', '".join(engine.METHODS[kind])
    with pytest.raises(ValueError, match=f"method must be one of '{allowed}'"):
        simulate_power(kind, 0.3, 0.05, 500, sd=1.0, method=method, reps=20)


def _cc_plan(**fields):
    metric = dict(name="Add to cart", role="secondary", kind="proportion", method="pooled-cc",
                  baseline=0.114, effect=0.06, relative=False)
    metric.update(fields)
    return Plan(Settings(daily_units=5000.0), [Metric(**metric)])


def test_continuity_corrected_row_checks_against_its_own_test_and_records_it():
    # The closed form is Fleiss, Tytun & Ury (1980) at power 0.8; simulating that test (2,000
    # replicates) agrees with it, and the stored check survives a save and load.
    plan = _cc_plan()
    check = check_metric(plan, 0, reps=2000, seed=1)
    assert check["test"] == "two-proportion z (pooled, continuity-corrected)"
    assert check["inputs"]["method"] == "pooled-cc"
    assert check["verdict"] == "agrees"
    plan.metrics[0].simulation = check
    again = loads(dumps(plan))
    assert again.metrics[0].simulation == check
    assert not row_is_stale(again.metrics[0], again.settings, _row(again))


def _row(plan):
    return compute(plan).rows[0]


def _stale_after(plan, method):
    changed = copy.deepcopy(plan)
    changed.metrics[0].method = method
    return row_is_stale(changed.metrics[0], changed.settings, _row(changed))


def test_changing_the_method_makes_the_check_stale():
    plan = _cc_plan(method=None, solve="power", n=500.0)
    plan.metrics[0].simulation = check_metric(plan, 0, reps=50)
    assert plan.metrics[0].simulation["inputs"]["method"] == "pooled"
    assert not _stale_after(plan, "pooled")
    assert _stale_after(plan, "arcsine")


@pytest.mark.parametrize(
    ("fields", "method", "stale"),
    [
        (dict(margin=0.0), None, False),
        (dict(margin=0.0), "pooled", False),
        (dict(margin=0.0), "pooled-cc", True),
        (dict(margin=-0.02, alternative="greater"), "unpooled", False),
        (dict(margin=-0.02, alternative="greater"), None, True),
        (dict(kind="mean", sd=1.0, baseline=2.0, effect=0.2), "z", False),
        (dict(kind="mean", sd=1.0, baseline=2.0, effect=0.2), "t", True),
    ],
)
def test_older_check_without_the_method_is_read_as_the_test_it_ran(fields, method, stale):
    # Decision (no source): a check stored before the method was recorded ran the pooled z
    # at margin 0 and the Wald z at any other margin (Welch's t for means); it stays fresh
    # for a row whose method is that test and is stale for any other.
    plan = _cc_plan(method=None, solve="power", n=500.0, **fields)
    check = check_metric(plan, 0, reps=50)
    del check["inputs"]["method"]
    plan.metrics[0].simulation = check
    plan = loads(dumps(plan))
    assert _stale_after(plan, method) is stale


@pytest.mark.parametrize(("power", "model", "said", "not_said"), [
    (0.70, "binomial", "few conversions per arm", "winsorise"),
    (0.70, "normal", "winsorise", "few conversions"),
    (0.90, "binomial", "conservative for this test", "skewed"),
    (0.90, "normal", "skewed metric", "conservative for this test"),
])
def test_disagreement_advice_fits_the_model(power, model, said, not_said):
    # Wording rule (common practice, no source): capping is advice for a skewed or
    # heavy-tailed metric; a proportion cannot be capped, only given more units.
    low, high = wilson_interval(round(power * 2000), 2000)
    text = message(dict(analytic_power=0.8, power=power, low=low, high=high, reps=2000,
                        seed=0, model=model, false_positive=0.05, false_positive_low=0.04,
                        false_positive_high=0.06, alpha=0.05))
    assert said in text and not_said not in text
