"""The traffic model: constant traffic as before, ramp-up and burn-in by hand, reach curves.

The hand computations follow the model's definition (fourfold.plan.traffic): band j of the
ramp-up, its rise wⱼ in share opened on day oⱼ, holds wⱼ·R(d − oⱼ + 1) units after day d, and
the burn-in's units are taken away. Units per arm: n = 2σ²(z₀.₉₇₅ + z₀.₈)²/δ² (Lehr 1992,
Statistics in Medicine 11:1099, the "rule of 16"; z values from scipy.special.ndtri).
"""

import dataclasses
import math

import numpy as np
import pytest
from scipy.special import ndtri

from fourfold import engine
from fourfold.plan import (
    Metric,
    Plan,
    Settings,
    compute,
    effective,
    load,
    sample_path,
    traffic,
)
from fourfold.plan.rows import runtime_units
from fourfold.plan.sensitivity import sensitivity
from fourfold.plan.sequential import look_days, row_design, week_timing

Z = float(ndtri(0.975) + ndtri(0.8))


def units_per_arm(sd: float, effect: float) -> float:
    return math.ceil(2 * sd**2 * Z**2 / effect**2)


def spend(sd: float = 5.0, **fields) -> Metric:
    return Metric(name="Spend", role="primary", kind="mean", baseline=10.0, sd=sd,
                  effect=0.5, relative=False, **fields)


def test_plain_constant_traffic_is_the_arithmetic_of_before():
    settings = Settings(daily_units=42_000, share=0.6, arms=2, runtime_days=21.0)
    totals = np.array([1.0, 882_000.0, 1_234_567.0, 3e7])
    assert traffic.is_plain(settings)
    np.testing.assert_array_equal(traffic.days_for(settings, totals),
                                  engine.duration_days(totals, 42_000, 0.6, True))
    # days × daily units × share / (1 + arms × ratio), the same operations in the same order
    assert runtime_units(settings) == 21.0 * 42_000 * 0.6 / (1.0 + 2 * 1.0)
    assert traffic.control_days(settings, 100_000.0) == 100_000.0 / (1.0 * 42_000 * 0.6 / 3.0)


def test_the_model_reproduces_constant_traffic_through_its_general_path():
    # A ramp-up at the plan's share from day 1 changes nothing but takes the general path
    # (the day table); a reach curve of 42,000 new units every day (none returning) too.
    plan = load(sample_path())
    plain = compute(plan)
    ramped = dataclasses.replace(plan.settings, ramp=((3, 0.6),))
    line = tuple((day, 42_000.0 * day) for day in range(1, 29))
    curve = dataclasses.replace(plan.settings, traffic="reach", reach=line)
    for settings in (ramped, curve):
        assert not traffic.is_plain(settings)
        other = compute(Plan(settings, plan.metrics))
        assert other.duration_days == plain.duration_days
        assert [row.days for row in other.rows] == [row.days for row in plain.rows]
        assert [row.units_total for row in other.rows] == [row.units_total for row in plain.rows]


def test_ramp_up_and_burn_in_by_hand():
    # 1,000 units a day; days 1–2 at 5 %, 3–4 at 25 %, then 60 %; day 1 is burn-in.
    # In the test after each day: 50, 100, 350, 600, 1,200, 1,800; analysed: less day 1's 50.
    settings = Settings(daily_units=1_000, share=0.6, ramp=((2, 0.05), (4, 0.25)), burn_in=1,
                        whole_weeks=False, arms=1)
    analysed = [0.0, 50.0, 300.0, 550.0, 1_150.0, 1_750.0]
    np.testing.assert_allclose(traffic.units_after(settings, np.arange(1, 7)), analysed)
    assert traffic.days_for(settings, 550.0) == 4.0
    assert traffic.days_for(settings, 551.0) == 5.0
    assert traffic.days_for(dataclasses.replace(settings, whole_weeks=True), 551.0) == 7.0
    # control units: analysed ÷ (1 + 1 arm × ratio 1); the runtime figure reads linearly
    assert traffic.control_units(settings, 5) == pytest.approx(575.0)
    assert traffic.control_units(settings, 4.5) == pytest.approx((550.0 + 1_150.0) / 2 / 2)
    # after the ramp, 600 a day: 1,750 + 600 × 10 by day 16
    assert traffic.days_for(settings, 7_750.0) == 16.0
    assert traffic.share_on(settings, [1, 3, 5]).tolist() == [0.05, 0.25, 0.6]


def test_a_ramp_up_over_a_reach_curve_by_hand():
    # Distinct units: 100, 160, 200, 230 after days 1–4. Half the traffic on day 1, all from
    # day 2: band 1 (50 %, from day 1) holds ½R(d), band 2 (50 %, from day 2) ½R(d − 1):
    # 50, 130, 180, 215 units; with day 1 as burn-in, 0, 80, 130, 165 analysed.
    settings = Settings(traffic="reach", reach=((1, 100.0), (2, 160.0), (3, 200.0), (4, 230.0)),
                        share=1.0, ramp=((1, 0.5),), burn_in=1, whole_weeks=False)
    np.testing.assert_allclose(traffic.units_after(settings, [1, 2, 3, 4]), [0, 80, 130, 165])
    assert traffic.days_for(settings, 130.0) == 3.0
    assert traffic.days_for(settings, 131.0) == 4.0
    assert math.isnan(traffic.days_for(settings, 166.0))  # four days cannot be extrapolated
    assert "extrapolating it needs at least 14" in traffic.unknown_text(settings, 166.0)


def test_a_row_beyond_a_short_curve_says_why_and_the_plan_is_incomplete():
    settings = Settings(traffic="reach", reach=tuple((d, 400.0 * d) for d in range(1, 8)),
                        whole_weeks=False)
    result = compute(Plan(settings, [spend()]))
    assert result.status == "incomplete" and result.duration_days is None
    assert "the reach curve covers 7 days" in result.rows[0].reason
    # within the curve: 2 × 1,570 units, 400 a day → 8 days
    within = compute(Plan(dataclasses.replace(settings, reach=tuple(
        (d, 4_000.0 * d) for d in range(1, 8))), [spend()]))
    assert within.duration_days == 1.0 and within.rows[0].units_total == 2 * 1570


def test_a_curve_that_levels_off_below_the_units_needed_cannot_be_run():
    # 3,000 units seen by day 1 and no new ones: the test needs 3,140.
    level = tuple((d, 3_000.0 - 2_000.0 * math.exp(-2.0 * d)) for d in range(1, 29))
    result = compute(Plan(Settings(traffic="reach", reach=level), [spend()]))
    assert result.status == "incomplete"
    assert "needs 3,140 units, more than the" in result.rows[0].reason


def test_a_duration_beyond_the_curve_is_flagged_with_its_error():
    days = np.arange(1, 29)
    curve = tuple(zip(days.tolist(), (1_000 * (1 - (1 + days / 3.0) ** -0.6)
                                      + 50.0 * days).tolist(), strict=True))
    plan = Plan(Settings(traffic="reach", reach=curve, whole_weeks=False), [spend()])
    result = compute(plan)
    assert result.duration_days > 28
    flag = next(note for note in result.notes if "beyond the reach curve" in note)
    error = traffic.model(plan.settings).fit.error(result.duration_days)
    assert f"±{error * 100:.2g} %" in flag and "within that error the test needs" in flag
    assert traffic.extrapolated(plan.settings, result.duration_days)
    assert not traffic.extrapolated(plan.settings, 28.0)


def test_a_runtime_inside_the_burn_in_gives_a_reason():
    settings = Settings(daily_units=1_000, runtime_days=3.0, burn_in=3)
    result = compute(Plan(settings, [spend(solve="detectable_effect")]))
    assert "burn-in (3 days) takes the whole fixed runtime" in result.rows[0].reason


def test_looks_at_week_ends_take_the_share_of_analysed_units():
    # 1,000 a day at 10 % for the first week, then 100 %: by day 7 700 units, by day 14 7,700.
    settings = Settings(daily_units=1_000, share=1.0, ramp=((7, 0.1),), looks=2)
    assert week_timing(settings, 14.0) == pytest.approx((700 / 7_700, 1.0))
    made = row_design(settings, 0.05, 0.8, "two-sided", days=14.0)
    assert made.fractions[0] == pytest.approx(700 / 7_700)
    assert look_days(made, 14.0, settings) == (7.0, 14.0)
    # looks equally spaced in units fall where half the units are in: 3,850 by day 11
    equal = row_design(Settings(looks=2, whole_weeks=False), 0.05, 0.8, "two-sided")
    assert look_days(equal, 14.0, settings) == (11.0, 14.0)
    assert look_days(equal, 14.0) == (7.0, 14.0)  # constant traffic: half the days


def test_sensitivity_scales_a_reach_curve_and_caps_the_ramp_at_the_share():
    plan = load(sample_path())
    reach = tuple((d, 45_000.0 * d ** 0.8) for d in range(1, 29))
    settings = dataclasses.replace(plan.settings, traffic="reach", reach=reach,
                                   ramp=((2, 0.6),))
    plan = Plan(settings, plan.metrics)
    found = sensitivity(plan)
    swing = next(s for s in found.swings if s.field == "reach")
    total = compute(plan).rows[0].units_total
    lowered = tuple((d, round(u * 0.8, 12)) for d, u in reach)
    assert swing.label == "Reach by day 28"
    assert swing.low_value == pytest.approx(0.8 * reach[-1][1])
    assert swing.low_days == traffic.days_for(dataclasses.replace(settings, reach=lowered),
                                              total)
    share = next(s for s in found.swings if s.field == "share")
    assert share.low_days >= found.days >= share.high_days
    # the ramp's 60 % is above a share lowered to 48 %: capped, with a note
    capped = compute(Plan(dataclasses.replace(settings, share=0.48), plan.metrics))
    assert any("capped" in note for note in capped.notes)


def _per_visit(plan: Plan) -> Plan:
    """``plan`` with its rows on their own (per-visit) figures, not following windows."""
    return Plan(plan.settings, [dataclasses.replace(m, windowed=False) for m in plan.metrics])


def test_a_scenario_can_change_the_traffic_model():
    plan = load(sample_path())
    name = "Returning visitors, ramp-up to all traffic"
    shown = effective(plan, name)
    assert shown.settings.traffic == "reach" and len(shown.settings.reach) == 28
    assert compute(_per_visit(shown)).duration_days > compute(plan).duration_days
    assert plan.settings.traffic == "constant"


def test_the_runtime_figure_reads_the_model_and_says_when_it_extrapolates():
    from fourfold.plan.tradeoffs import tradeoffs

    shown = _per_visit(effective(load(sample_path()),
                                 "Returning visitors, ramp-up to all traffic"))
    result = compute(shown)
    runtime = tradeoffs(shown, 0, result).runtime
    assert runtime.guide_label == f"test runs {result.duration_days:g} d, extrapolated"
    # the design point sits where the analysed units reach the binding row's control units
    control = result.rows[0].units_control
    day = runtime.point[0]
    assert float(traffic.control_units(shown.settings, day)) == pytest.approx(control)


def test_a_fixed_runtime_takes_its_units_from_the_curve():
    # Read linearly: R(10) = 700 + 3/7 × 300; half of it in the test, half of that in control.
    reach = ((1, 100.0), (7, 700.0), (14, 1_000.0))
    settings = Settings(traffic="reach", reach=reach, share=0.5, runtime_days=10.0)
    control = (700.0 + 3.0 / 7.0 * 300.0) * 0.5 / 2.0
    assert runtime_units(settings) == pytest.approx(control)
    result = compute(Plan(settings, [spend(solve="detectable_effect")]))
    assert result.rows[0].units_control == math.ceil(control)
    assert result.rows[0].effect_abs == pytest.approx(
        float(engine.detectable_effect("mean", 10.0, control, sd=5.0)))
    assert result.total_units == pytest.approx(2 * control)
