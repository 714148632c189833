"""Every row's power at the plan's duration, and rows without units of their own solved there.

References (test-only): statsmodels 0.15.0 (``TTestIndPower.power``,
``power_proportions_2indep``) and scipy 1.17.1 (``scipy.stats.norm``) for the one-sided z test
of a Poisson rate against a margin, power Φ(|m − δ|·√n / √(λ_c + λ_t/r) − z₁₋α) (common
practice, no source). The sample plan: 35 days × 42,000 eligible visitors × 60 % in the test,
split over control and two treatment arms, gives 294,000 control visitors; with its correction
set to Bonferroni (the sample uses Dunnett's), the two arms test every row at α = 0.025 (one
primary row).
"""

import math

import pytest
import scipy
import statsmodels
from scipy.stats import norm
from statsmodels.stats.power import TTestIndPower
from statsmodels.stats.proportion import power_proportions_2indep

from fourfold.plan import compute, evaluate, load, sample_path

SCIPY = scipy.__version__
STATSMODELS = statsmodels.__version__
UNITS = 35 * 42_000 * 0.6 / 3  # control visitors in the plan's 35 days


def _sample():
    plan = load(sample_path())
    plan.settings.correction = "bonferroni"
    return plan


def test_the_units_the_duration_brings():
    assert UNITS == 294_000.0
    assert compute(_sample()).duration_days == 35.0


def test_a_secondary_mean_shows_its_real_chance_at_the_plans_duration():
    """Revenue per visitor needs 56 days; in the plan's 35 its power is well below 0.8."""
    result = compute(_sample())
    # CUPED ρ = 0.35 leaves 1 − ρ² of the variance: the t test sees UNITS / 0.8775 units.
    expected = TTestIndPower().power(0.04 * 2.35 / 14.8, UNITS / (1 - 0.35**2), 0.025,
                                     ratio=1.0, alternative="two-sided")
    assert result.duration_powers[1] == pytest.approx(expected, abs=1e-6)
    assert result.duration_powers[1] < 0.8 < result.rows[1].power + 1e-12


def test_the_binding_primary_gets_at_least_its_power():
    """Rounded up to whole weeks, the plan runs longer than the primary needs."""
    result = compute(_sample())
    expected = power_proportions_2indep(-0.031 * 0.05, 0.031 * 1.05, UNITS, ratio=1.0,
                                        alpha=0.025, alternative="two-sided",
                                        return_results=False)
    assert result.duration_powers[0] == pytest.approx(expected, rel=1e-9)
    assert result.duration_powers[0] > 0.8


def test_a_guardrail_reads_its_chance_to_rule_out_its_margin():
    """Support contacts: rate 0.018, no true change, must not rise by 10 % (one-sided)."""
    result = compute(_sample())
    rate, margin = 0.018, 0.1 * 0.018
    expected = norm.cdf(margin * math.sqrt(UNITS) / math.sqrt(2 * rate) - norm.ppf(1 - 0.025))
    assert result.duration_powers[4] == pytest.approx(expected, rel=1e-9)


def test_a_power_row_without_n_is_solved_at_the_plans_duration():
    plan = _sample()
    plan.metrics[2].solve = "power"  # add-to-cart rate, no n of its own
    result = compute(plan)
    row = result.rows[2]
    assert (row.reason, row.units_control, row.days) == ("", UNITS, 35.0)
    expected = power_proportions_2indep(-0.114 * 0.03, 0.114 * 1.03, UNITS, ratio=1.0,
                                        alpha=0.025, alternative="two-sided",
                                        return_results=False)
    assert row.power == pytest.approx(expected, rel=1e-9)
    assert result.duration_powers[2] == row.power
    assert result.duration_days == 35.0 and result.binding_name == "Checkout conversion"


def test_a_detectable_effect_row_without_n_uses_the_plans_duration():
    plan = _sample()
    plan.metrics[3].solve = "detectable_effect"
    row = compute(plan).rows[3]
    assert row.reason == "" and row.units_control == UNITS
    assert compute(plan).duration_powers[3] == pytest.approx(0.8, abs=1e-9)


def test_without_a_duration_a_row_without_n_says_what_it_needs():
    plan = _sample()
    for metric in plan.metrics:
        metric.solve = "power"
    result = compute(plan)
    assert result.rows[1].reason == ("needs n (control units), a fixed runtime or a row that "
                                     "sets the plan's duration to solve for power")
    assert result.status == "incomplete"
    assert all(math.isnan(power) for power in result.duration_powers)


def test_an_incomplete_plan_gives_no_power_at_a_duration_it_does_not_have():
    plan = _sample()
    plan.metrics[2].solve = "power"
    plan.metrics[5].sd = None  # the page-load guardrail cannot be computed
    result = compute(plan)
    assert result.status == "incomplete"
    assert result.rows[2].reason == ("the plan is incomplete, so it has no duration to solve "
                                     "for power at")
    assert all(math.isnan(power) for power in result.duration_powers)


def test_with_a_fixed_runtime_powers_are_at_the_runtime():
    plan = _sample()
    plan.settings.runtime_days = 28.0
    result = compute(plan)
    # every row solves for what it can detect in 28 days, so its power there is its own
    assert result.duration_powers == pytest.approx([0.8] * 7, abs=1e-9)
    assert [row.solved for row in result.rows] == ["detectable_effect"] * 4 + [
        "detectable_margin"] * 3


def test_without_traffic_the_binding_rows_units_are_the_plans():
    plan = _sample()
    plan.settings.daily_units = None
    result = compute(plan)
    units = result.rows[0].units_control
    expected = TTestIndPower().power(0.04 * 2.35 / 14.8, units / (1 - 0.35**2), 0.025,
                                     ratio=1.0, alternative="two-sided")
    assert result.duration_powers[1] == pytest.approx(expected, abs=1e-6)


def test_evaluate_has_the_power_at_the_duration():
    frame = evaluate(_sample())
    assert list(frame["power_at_duration"]) == list(compute(_sample()).duration_powers)
