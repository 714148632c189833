"""A plan with interim looks, checked by simulation.

Reference: Jennison, C. & Turnbull, B. W. (2000) Group Sequential Methods with Applications
to Clinical Trials, ch. 2 (maximum size = fixed size x inflation factor).
"""

from fourfold.plan import Metric, Plan, Settings
from fourfold.plan.evaluation import compute
from fourfold.simulation import check_metric


def _mean_plan():
    return Plan(Settings(daily_units=5000.0), [Metric(
        name="Basket value", role="primary", kind="mean", baseline=40.0, sd=12.0, effect=1.0,
        relative=False)])


def test_sequential_plan_simulates_the_maximum_size_with_boundaries():
    # With interim looks the row's units are the maximum size (fixed x inflation, Jennison &
    # Turnbull 2000, ch. 2); simulating the boundaries there must reach the row's power.
    plan = _mean_plan()
    plan.settings.looks = 3
    row = compute(plan).rows[0]
    check = check_metric(plan, 0, reps=2000, seed=4)
    fixed = check_metric(_mean_plan(), 0, reps=100, seed=4)
    assert check["looks"] == 3
    assert check["n_control"] == row.units_control > fixed["n_control"]
    assert check["expected_fraction"] < 1.0
    assert check["low"] <= row.power <= check["high"]
