"""Plan-level checks: rows simulated as the plan evaluates them, stored as one undo step.

Reference values: Lehr, R. (1992) "Sixteen s-squared over d-squared", Statistics in Medicine
11:1099-1102 (n per arm = 2 sigma^2 (z_{1-a/2} + z_{1-b})^2 / delta^2); scipy 1.17.1 for
the normal quantiles; the invented Quillmoss demo plan.
"""

import json

import numpy as np
import pytest
from scipy import special

from fourfold.errors import FourfoldError
from fourfold.plan import Metric, Plan, Settings, dumps, load, loads, sample_path
from fourfold.plan.commands import CommandStack, SetField, SetFields
from fourfold.plan.evaluation import compute
from fourfold.simulation import (
    SimulationCancelled,
    check_metric,
    check_plan,
    is_stale,
    message,
    verdict,
)


def _mean_plan(**metric):
    fields = dict(name="Basket value", role="primary", kind="mean", baseline=40.0, sd=12.0,
                  effect=1.0, relative=False)
    fields.update(metric)
    return Plan(Settings(daily_units=5000.0), [Metric(**fields)])


def test_mean_row_is_simulated_at_the_planned_units_and_agrees():
    plan = _mean_plan()
    check = check_metric(plan, 0, reps=2000, seed=1)
    # Lehr (1992): 2 * 12^2 * (1.95996 + 0.84162)^2 / 1^2 control units, rounded up.
    lehr = 2 * 12**2 * (special.ndtri(0.975) + special.ndtri(0.8)) ** 2
    assert check["n_control"] == int(np.ceil(lehr))
    assert check["analytic_power"] == pytest.approx(0.8)
    assert check["verdict"] == "agrees"
    assert "agrees with the closed form's 80.0 %" in check["message"]
    assert check["reps"] == 2000 and check["seed"] == 1
    json.dumps(check, allow_nan=False)


def test_design_factor_enters_as_effective_units():
    # CUPED with rho = 0.6 multiplies the variance by 1 - rho^2 = 0.64 (Deng, Xu, Kohavi &
    # Walker 2013, WSDM): the row needs 0.64 of the units, which are worth as much as the
    # plain row's units in the simulation, and reach the same power.
    plain = check_metric(_mean_plan(), 0, reps=1000, seed=2)
    plan = _mean_plan(rho=0.6)
    cuped = check_metric(plan, 0, reps=1000, seed=2)
    units = compute(plan).rows[0].units_control
    assert units == pytest.approx(plain["n_control"] * 0.64, rel=1e-3)
    assert cuped["inputs"]["n_control"] == pytest.approx(units / 0.64)
    assert cuped["n_control"] == pytest.approx(plain["n_control"], abs=1)
    assert cuped["low"] <= 0.8 <= cuped["high"]


def test_detectable_effect_row_reaches_the_target_power():
    plan = _mean_plan(solve="detectable_effect", n=3000.0, effect=None)
    check = check_metric(plan, 0, reps=2000, seed=3)
    # Lehr (1992) solved for delta: (z_{.975} + z_{.8}) * sigma * sqrt(2 / n).
    delta = (special.ndtri(0.975) + special.ndtri(0.8)) * 12.0 * np.sqrt(2 / 3000)
    assert check["effect"] == pytest.approx(delta, rel=2e-3)
    assert check["low"] <= 0.8 <= check["high"]


def test_demo_plan_rows_all_check_and_store_as_one_undo_step():
    plan = load(sample_path())
    outcome = check_plan(plan, reps=400, seed=0)
    assert [row for row, _ in outcome.checks] == list(range(len(plan.metrics)))
    assert outcome.skipped == ()
    assert all(check["verdict"] in ("agrees", "borderline") for _, check in outcome.checks)
    stack = CommandStack(plan)
    stack.do(SetFields(outcome.edits(), text="Check whole plan by simulation"))
    assert all(metric.simulation for metric in stack.plan.metrics)
    assert stack.undo_text == "Check whole plan by simulation"
    text = dumps(stack.plan)
    assert loads(text).metrics[0].simulation == stack.plan.metrics[0].simulation
    stack.undo()
    assert all(metric.simulation is None for metric in stack.plan.metrics)


def test_whole_plan_check_equals_row_checks():
    plan = load(sample_path())
    outcome = check_plan(plan, reps=300, seed=5)
    for row, check in outcome.checks[:2]:
        assert check == check_metric(plan, row, reps=300, seed=5)


def test_cancelled_plan_check_returns_nothing_and_leaves_the_plan_alone():
    plan = load(sample_path())
    before = dumps(plan)
    seen = []
    with pytest.raises(SimulationCancelled):
        check_plan(plan, reps=500, cancelled=lambda: len(seen) >= 3,
                   progress=lambda done, total: seen.append((done, total)))
    assert dumps(plan) == before
    assert all(total == 2 * 500 * len(plan.metrics) for _, total in seen)


def test_rows_that_cannot_be_computed_are_skipped_with_the_reason():
    plan = _mean_plan()
    plan.metrics.append(Metric(name="No effect", kind="proportion", baseline=0.2, effect=None))
    outcome = check_plan(plan, reps=100)
    assert [row for row, _ in outcome.checks] == [0]
    (row, reason), = outcome.skipped
    assert row == 1 and "No effect" in reason
    with pytest.raises(FourfoldError, match="No effect"):
        check_metric(plan, 1, reps=100)
    with pytest.raises(FourfoldError, match="row 3"):
        check_metric(plan, 2, reps=100)


def test_heavy_tailed_history_is_flagged_in_words():
    # Invented lognormal (sigma = 2) revenue history at 60 units per arm: the closed form
    # misjudges Welch's test (see test_power.py), and the message says what to do.
    history = np.random.default_rng(20261201).lognormal(0.0, 2.0, size=100_000)
    sd = float(history.std())
    delta = (special.ndtri(0.975) + special.ndtri(0.8)) * sd * np.sqrt(2 / 60)
    plan = _mean_plan(baseline=float(history.mean()), sd=sd, effect=float(delta),
                      solve="power", n=60.0)
    check = check_metric(plan, 0, reps=2000, seed=2, history=history, history_effect="lift")
    assert check["model"] == "bootstrap"
    assert check["verdict"] == "below"
    assert "Raise n, or cap (winsorise) the metric" in check["message"]
    assert "Under H0" in check["message"]


def test_stale_when_an_input_changes_not_when_a_note_does():
    plan = _mean_plan()
    stack = CommandStack(plan)
    stack.do(SetField(0, "simulation", check_metric(plan, 0, reps=100)))
    assert not is_stale(stack.plan, 0)
    stack.do(SetField(0, "notes", "from last quarter"))
    assert not is_stale(stack.plan, 0)
    stack.do(SetField(0, "sd", 13.0))
    assert is_stale(stack.plan, 0)


@pytest.mark.parametrize(
    ("power", "expected"),
    [(0.80, "agrees"), (0.775, "borderline"), (0.70, "below"), (0.90, "above")],
)
def test_verdict_levels(power, expected):
    # 95 % and 99.9 % Wilson intervals around the simulated power at 2,000 replicates:
    # half-widths about 0.018 and 0.029 near 0.8 (Wilson 1927; common practice, no source).
    from fourfold.simulation import wilson_interval

    low, high = wilson_interval(round(power * 2000), 2000)
    check = dict(analytic_power=0.8, power=power, low=low, high=high, reps=2000, seed=0,
                 false_positive=0.05, false_positive_low=0.04, false_positive_high=0.06,
                 alpha=0.05)
    assert verdict(check) == expected
    assert message(check)


def test_false_positive_rate_outside_its_interval_is_explained_by_its_side():
    # Wording rule (common practice, no source): a test rejecting more often than α under H0
    # breaks its level; one rejecting less often is conservative.
    from fourfold.simulation.check import message

    base = {"power": 0.8, "low": 0.78, "high": 0.82, "reps": 2000, "seed": 0,
            "analytic_power": 0.8, "alpha": 0.05}
    high = message({**base, "false_positive": 0.09, "false_positive_low": 0.078,
                    "false_positive_high": 0.103})
    low = message({**base, "false_positive": 0.02, "false_positive_low": 0.015,
                   "false_positive_high": 0.027})
    fine = message({**base, "false_positive": 0.05, "false_positive_low": 0.041,
                    "false_positive_high": 0.06})
    assert "may not hold" in high and "conservative" not in high
    assert "conservative" in low and "may not hold" not in low
    assert "Under H0" not in fine
