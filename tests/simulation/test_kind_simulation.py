"""The simulation check of ratio and quantile rows.

Outside references: the arms' shortcuts (Wishart sufficient statistics for a ratio, gamma
spacings for order statistics) are compared with plain per-unit simulations in numpy 2.x
by scipy 1.17's two-sample Kolmogorov–Smirnov test; the checks of plan rows compare the
simulated power of the row's own test with the closed form, as for the other kinds.
"""

import numpy as np
import pytest
from scipy import stats

from fourfold.engine import sequential
from fourfold.plan import Metric, Plan, Settings, compute
from fourfold.simulation import check_metric, is_stale, simulate_power
from fourfold.simulation.kind_arms import (
    QuantileArm,
    RatioArm,
    empirical_quantile,
    lognormal_quantile,
)


def test_ratio_arm_matches_a_per_unit_simulation():
    rng = np.random.default_rng(11)
    n, reps = 300, 3000
    arm = RatioArm(6.0, 3.0, 2.0, 0.5, 0.4, shift=0.1)
    fast_ratio, fast_var = arm.draw(rng, reps, np.array([n]))
    cov = [[4.0, 0.4], [0.4, 0.25]]
    units = rng.multivariate_normal([6.0, 3.0], cov, size=(reps, n))
    x, y = units[..., 0] + 0.1 * units[..., 1], units[..., 1]
    ratio = x.mean(axis=1) / y.mean(axis=1)
    linear = (x - ratio[:, None] * y) / y.mean(axis=1)[:, None]
    var = linear.var(axis=1, ddof=1)
    assert stats.ks_2samp(fast_ratio[:, 0], ratio).pvalue > 0.01
    assert stats.ks_2samp(fast_var[:, 0], var).pvalue > 0.01


@pytest.mark.parametrize("level", [0.5, 0.95])
def test_quantile_arm_matches_a_per_unit_simulation(level):
    rng = np.random.default_rng(12)
    n, reps = 1_000, 3_000
    arm = QuantileArm(level, lognormal_quantile(0.5, 0.6))
    fast, _ = arm.draw(rng, reps, np.array([n]))
    samples = rng.lognormal(0.5, 0.6, size=(reps, n))
    direct = np.quantile(samples, level, axis=1, method="inverted_cdf")
    assert stats.ks_2samp(fast[:, 0], direct).pvalue > 0.01


def test_empirical_quantile_is_the_bootstrap_samples_quantile():
    history = np.random.default_rng(2).exponential(2.0, 500)
    rng = np.random.default_rng(13)
    fast, _ = QuantileArm(0.9, empirical_quantile(history)).draw(rng, 3000, np.array([200]))
    resampled = rng.choice(history, size=(3000, 200))
    direct = np.quantile(resampled, 0.9, axis=1, method="inverted_cdf")
    assert stats.ks_2samp(fast[:, 0], direct).pvalue > 0.01


def _plan(row, **settings):
    return Plan(Settings(**settings), [row])


RATIO = Metric(name="Items per order", role="primary", kind="ratio", baseline=2.6,
               denominator=0.034, numerator_sd=0.61, denominator_sd=0.19, correlation=0.8,
               effect=0.05)
P95 = Metric(name="Load p95", role="guardrail", kind="quantile", baseline=3.1,
             quantile_level=0.95, second_level=0.5, second_value=1.7, effect=0.0,
             relative=False, alternative="less", margin=0.05, better="lower")


@pytest.mark.parametrize("row", [RATIO, P95], ids=["ratio", "p95"])
def test_checks_agree_with_the_closed_form_at_planned_sizes(row):
    check = check_metric(_plan(row), 0, reps=2000, seed=4)
    assert check["verdict"] in ("agrees", "borderline"), check["message"]
    assert check["false_positive_low"] <= check["alpha"] <= check["false_positive_high"]
    assert check["inputs"]["kind_inputs"]


def test_quantile_check_from_history_and_its_staleness():
    history = np.random.default_rng(3).lognormal(np.log(1.7), 0.36, 50_000)
    row = Metric(name="Load p50", role="secondary", kind="quantile", baseline=1.7,
                 quantile_level=0.5, density=0.65, effect=0.02, relative=False)
    plan = _plan(row)
    check = check_metric(plan, 0, reps=2000, seed=5, history=history)
    assert check["model"] == "bootstrap (order statistics)"
    assert check["verdict"] in ("agrees", "borderline"), check["message"]
    plan.metrics[0].simulation = check
    assert not is_stale(plan, 0)
    plan.metrics[0].density = 0.7
    assert is_stale(plan, 0)


def test_a_tail_quantile_with_few_units_gets_a_caution():
    # The p99.9 with about 640 units per arm: less than one unit beyond the quantile per arm.
    # The estimated sparsity is then far off and the test far from its level.
    row = Metric(name="Load p99.9", role="secondary", kind="quantile", baseline=6.0,
                 quantile_level=0.999, second_level=0.5, second_value=1.7, effect=0.6,
                 relative=True)
    plan = _plan(row)
    assert any("lie beyond its p99.9" in note for note in compute(plan).notes)
    check = check_metric(plan, 0, reps=2000, seed=6)
    assert check["n_control"] < 1000
    assert check["verdict"] in ("below", "above")
    assert "too far in the tail" in check["message"]
    assert check["false_positive_low"] > check["alpha"] and "above α" in check["message"]


def test_ratio_with_interim_looks_and_quantile_without():
    design = sequential.design(3, alpha=0.05, power=0.8)
    result = simulate_power("ratio", 2.6, 0.05, 200_000, relative=True, reps=200, seed=1,
                            looks=design, kind_inputs=dict(denominator=0.034, numerator_sd=0.61,
                                                           denominator_sd=0.19,
                                                           correlation=0.8))
    assert result.looks == 3 and result.expected_fraction < 1
    with pytest.raises(ValueError, match="interim looks are not simulated for quantile rows"):
        simulate_power("quantile", 3.1, 0.05, 10_000, looks=design, reps=100,
                       kind_inputs=dict(level=0.95, density=0.09))
    with pytest.raises(ValueError, match="a ratio row is simulated from"):
        simulate_power("ratio", 2.6, 0.05, 1000, history=[1.0, 2.0, 3.0], reps=100,
                       kind_inputs=dict(denominator=0.034, numerator_sd=0.61,
                                        denominator_sd=0.19, correlation=0.8))
    with pytest.raises(ValueError, match="denominator is required"):
        simulate_power("ratio", 2.6, 0.05, 1000, reps=100)
