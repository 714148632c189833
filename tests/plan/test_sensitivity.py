"""What moves the duration: each bar equals re-solving the plan with that one input changed;
bars sorted by swing; no bars where there is no duration to move."""

import dataclasses
import math

import pytest
from scipy import stats

from fourfold.plan import compute, effective, load, sample_path
from fourfold.plan.model import Metric, Plan, Settings
from fourfold.plan.sensitivity import sensitivity


def _resolved(plan, field, value):
    """The plan's duration re-solved from scratch with one input changed."""
    if field in ("daily_units", "share"):
        changed = Plan(dataclasses.replace(plan.settings, **{field: value}), plan.metrics)
    else:
        index = compute(plan).binding_index
        metrics = list(plan.metrics)
        metrics[index] = dataclasses.replace(metrics[index], **{field: value})
        changed = Plan(plan.settings, metrics)
    return compute(changed).duration_days


def _close_race() -> Plan:
    """Two deciding rows close enough that a 20 % change hands the duration to the other."""
    return Plan(Settings(daily_units=20_000.0, share=0.5, whole_weeks=False), [
        Metric(name="Conversion", role="primary", baseline=0.05, effect=0.05, rho=0.3),
        Metric(name="Spend", role="guardrail", kind="mean", baseline=10.0, sd=75.0,
               effect=0.1, relative=True),
    ])


@pytest.mark.parametrize("plan", [
    load(sample_path()),
    effective(load(sample_path()), "Without arm B"),
    _close_race(),
], ids=["sample", "sample without arm B", "close race"])
def test_every_bar_equals_re_solving_with_the_changed_input(plan):
    found = sensitivity(plan, 0.2)
    assert found.days == compute(plan).duration_days
    assert len(found.swings) >= 4
    for swing in found.swings:
        assert swing.low_value == pytest.approx(swing.value * 0.8) or swing.field == "share"
        assert swing.low_days == _resolved(plan, swing.field, swing.low_value), swing.label
        assert swing.high_days == _resolved(plan, swing.field, swing.high_value), swing.label


def test_bars_are_sorted_by_swing_largest_first():
    for plan in (load(sample_path()), _close_race()):
        swings = [s.swing for s in sensitivity(plan).swings]
        assert swings == sorted(swings, reverse=True)


def test_the_inputs_offered_are_those_the_binding_row_uses():
    labels = [s.label for s in sensitivity(_close_race()).swings]
    assert sorted(labels) == sorted(["Baseline", "Effect", "CUPED ρ", "Daily units",
                                     "Traffic share"])
    guardrail = Plan(Settings(daily_units=1000.0), [
        Metric(name="Load", role="guardrail", kind="mean", baseline=1.8, sd=0.6, effect=0.0,
               margin=0.05, relative=False, alternative="less")])
    assert sorted(s.label for s in sensitivity(guardrail).swings) == sorted(
        ["Baseline", "sd", "Margin", "Daily units", "Traffic share"])


def test_a_larger_sd_scales_the_units_by_its_square():
    """n per arm = 2σ²(z₁₋α/₂ + z₁₋β)²/δ² (common practice, no source; z from scipy)."""
    plan = Plan(Settings(daily_units=1000.0, whole_weeks=False), [
        Metric(name="Spend", role="primary", kind="mean", method="z", baseline=10.0, sd=5.0,
               effect=0.5, relative=False)])
    z = stats.norm.ppf(0.975) + stats.norm.ppf(0.8)
    for swing in sensitivity(plan, 0.2).swings:
        if swing.label == "sd":
            for sd, days in ((4.0, swing.low_days), (6.0, swing.high_days)):
                per_arm = math.ceil(2 * sd**2 * z**2 / 0.5**2)
                assert days == math.ceil(2 * per_arm / 1000.0)


def test_the_share_is_capped_at_all_traffic():
    plan = load(sample_path())
    plan.settings.share = 0.9
    share = next(s for s in sensitivity(plan).swings if s.field == "share")
    assert share.high_value == 1.0 and "at most 100 %" in share.note


def test_no_bars_without_a_duration_to_move():
    plan = load(sample_path())
    plan.settings.runtime_days = 28.0
    assert "fixed runtime" in sensitivity(plan).message
    plan = load(sample_path())
    plan.metrics[0].effect = None
    found = sensitivity(plan)
    assert found.swings == () and "incomplete" in found.message
    plan = load(sample_path())
    plan.settings.daily_units = None
    assert "daily units" in sensitivity(plan).message


def test_the_amount_is_checked():
    with pytest.raises(ValueError, match="amount must satisfy"):
        sensitivity(load(sample_path()), 1.5)
