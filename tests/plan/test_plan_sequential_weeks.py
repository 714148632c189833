"""Interim looks at week ends when the plan runs in whole weeks.

The boundaries at unequal looks are those of an α-spending design at the looks' information
fractions (Lan, K. K. G. & DeMets, D. L. 1983, Biometrika 70:659–663, the reason spending
functions allow looks at any times); the reference is the engine's own ``design`` called with
those fractions, itself checked against published tables in tests/engine. The weeks and days are
counted by hand below.
"""

import math

import pytest

from fourfold import engine
from fourfold.engine import sequential as engine_sequential
from fourfold.plan import Metric, Plan, Settings, compute, load, sample_path
from fourfold.plan.sequential import design_of_row, row_looks, week_timing


def _sample(**settings):
    plan = load(sample_path())
    for name, value in dict(looks=3, correction="bonferroni", **settings).items():
        setattr(plan.settings, name, value)
    return plan


def test_the_binding_rows_looks_fall_on_week_ends():
    """35 days = 5 weeks, 3 looks: weeks ⌈5/3⌉ = 2 and ⌈10/3⌉ = 4, then the end (before: days
    10, 19 and 28 of a 4-week run)."""
    plan = _sample()
    result = compute(plan)
    row = result.rows[0]
    assert row.days == 35.0 and row.look_days == (14.0, 28.0, 35.0)
    assert [look.day for look in row_looks(plan, result, 0)] == [14.0, 28.0, 35.0]


def test_the_boundaries_and_units_are_those_of_the_week_end_design():
    plan = _sample()
    result = compute(plan)
    made = design_of_row(plan, result, 0)
    reference = engine_sequential.design(3, alpha=0.025, power=0.8, timing=(0.4, 0.8, 1.0))
    assert made.upper.tolist() == pytest.approx(reference.upper.tolist(), rel=1e-12)
    fixed = float(engine.sample_size("proportion", 0.031, 0.05, alpha=0.025, relative=True))
    units = math.ceil(fixed * reference.inflation - 1e-9)
    assert result.rows[0].units_control == units
    # 35 days of traffic hold the maximum: 35 × 42,000 × 0.6 / 3 control visitors
    assert units <= 35 * 42_000 * 0.6 / 3


def test_without_whole_weeks_looks_stay_equally_spaced():
    """30 days, 3 looks: days 10, 20 and 30."""
    plan = _sample(whole_weeks=False)
    assert compute(plan).rows[0].look_days == (10.0, 20.0, 30.0)


def test_a_fixed_runtime_of_four_weeks_looks_at_weeks_two_three_and_four():
    plan = _sample(runtime_days=28.0)
    row = compute(plan).rows[0]
    assert row.look_days == (14.0, 21.0, 28.0)
    made = engine_sequential.design(3, alpha=0.025, power=0.8, timing=(0.5, 0.75, 1.0))
    n = 28 * 42_000 * 0.6 / 3
    effect = float(engine.detectable_effect("proportion", 0.031, n / made.inflation,
                                            alpha=0.025, relative=True))
    assert row.effect_rel == pytest.approx(effect, rel=1e-9)


def test_fewer_weeks_than_looks_keep_equal_spacing_and_say_so():
    plan = Plan(Settings(daily_units=1e6, looks=3, whole_weeks=True), [
        Metric(name="Spend", role="primary", kind="mean", baseline=10.0, sd=5.0, effect=0.5,
               relative=False)])
    result = compute(plan)
    assert result.rows[0].days == 7.0 and result.rows[0].look_days == (3.0, 5.0, 7.0)
    assert "Fewer whole weeks than looks (Spend): those looks are equally spaced, not at week " \
           "ends." in result.notes


def test_week_timing_by_hand():
    settings = Settings(looks=4, whole_weeks=True)
    assert week_timing(settings, 42.0) == pytest.approx((2 / 6, 3 / 6, 5 / 6, 1.0))
    assert week_timing(Settings(looks=4, whole_weeks=False), 42.0) is None
    assert week_timing(settings, 30.0) == pytest.approx((7 / 30, 14 / 30, 21 / 30, 1.0))
