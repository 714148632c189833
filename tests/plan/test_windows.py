"""Rows measured over the test's own window: the figures follow the duration (a fixed point).

Worked by hand: a mean row, δ = 0.5, α = 0.05 two-sided, power 0.8, n per arm =
2σ²(z₀.₉₇₅ + z₀.₈)²/δ² (Lehr 1992, Statistics in Medicine 11:1099; z from
scipy.special.ndtri), two arms, 400 units a day, whole weeks:
σ = 5 → 1,570 per arm, 3,140 in all → 7.85 days → 14;
σ = 7 → 3,077 per arm, 6,154 → 15.4 days → 21;
σ = 8 → 4,019 per arm, 8,038 → 20.1 days → 21;
σ = 8.5 → 4,537 per arm, 9,074 → 22.7 days → 28.
"""

import dataclasses
import math

import pytest
from scipy.special import ndtri

from fourfold.plan import Metric, Plan, Settings, compute, dumps, loads
from fourfold.plan.sensitivity import sensitivity
from fourfold.plan.tradeoffs import tradeoffs
from fourfold.plan.windows import evaluated, figures

Z2 = float(ndtri(0.975) + ndtri(0.8)) ** 2
SETTINGS = Settings(daily_units=400, whole_weeks=True)


def per_arm(sd: float) -> int:
    return math.ceil(2 * sd**2 * Z2 / 0.5**2)


def row(*windows: tuple[int, float], role: str = "primary", **fields) -> Metric:
    return Metric(name="Spend", role=role, kind="mean", baseline=10.0, sd=1.0, effect=0.5,
                  relative=False, windowed=True,
                  windows=tuple({"days": d, "baseline": 10.0, "sd": sd} for d, sd in windows),
                  **fields)


def test_the_hand_computation():
    assert [per_arm(sd) for sd in (5.0, 7.0, 8.0)] == [1570, 3077, 4019]


def test_the_duration_settles_where_its_own_window_gives_it():
    # Window 7 d (σ 5) → 14 days; 14 d (σ 7) → 21 days; 21 d (σ 8) → 21 days: settled.
    plan = Plan(SETTINGS, [row((7, 5.0), (14, 7.0), (21, 8.0))])
    result = compute(plan)
    assert result.duration_days == 21.0 and result.window_days == 21.0
    assert result.rows[0].units_control == per_arm(8.0)
    assert any("first 21 days (the plan's duration" in note for note in result.notes)
    assert evaluated(plan, result).metrics[0].sd == 8.0
    assert plan.metrics[0].sd == 1.0  # the row's own field is left as it was


def test_a_duration_that_does_not_settle_makes_the_plan_incomplete():
    # σ 5 over 7 days → 14; σ 7 over 14 → 21; σ 5 over 21 → 14 again: a cycle.
    plan = Plan(SETTINGS, [row((7, 5.0), (14, 7.0), (21, 5.0)),
                           Metric(name="Other", role="secondary", solve="power")])
    result = compute(plan)
    assert result.status == "incomplete" and result.duration_days is None
    reason = result.rows[0].reason
    assert reason.startswith("the duration does not settle")
    assert "with the figures of 7 days the plan needs 14 days" in reason
    assert "those of 21 days 14 days" in reason
    assert "incomplete" in result.rows[1].reason  # waits for a duration that is not there
    assert all(math.isnan(power) for power in result.duration_powers)


def test_figures_that_shorten_the_duration_settle_between_the_days_tried():
    # σ 8.5 over 7 and 14 days → 28 days; σ 8 over 21 → 21; σ 5 over 28 → 14. Plain rounds go
    # 7 → 28 → 14 → 28 (a cycle); the duration lies between 14 days (whose figures need more)
    # and 28 (whose figures need fewer): at 21 days its own window gives 21.
    plan = Plan(SETTINGS, [row((7, 8.5), (14, 8.5), (21, 8.0), (28, 5.0))])
    assert [per_arm(sd) for sd in (8.5, 8.0, 5.0)] == [4537, 4019, 1570]
    result = compute(plan)
    assert result.duration_days == 21.0 and result.window_days == 21.0
    assert result.rows[0].units_control == per_arm(8.0)


def test_a_secondary_row_takes_the_window_of_the_duration_others_set():
    plan = Plan(SETTINGS, [Metric(name="Spend", role="primary", kind="mean", baseline=10.0,
                                  sd=7.0, effect=0.5, relative=False),
                           row((7, 3.0), (14, 4.0), (21, 6.0), role="secondary")])
    result = compute(plan)
    assert result.duration_days == 21.0 and result.window_days == 21.0
    assert result.rows[1].units_control == per_arm(6.0)


def test_between_windows_the_figures_are_read_linearly_and_outside_they_say_so():
    metric = row((7, 5.0), (14, 7.0))
    assert figures(metric, 10.5) == ({"baseline": 10.0, "sd": 6.0}, "")
    fields, note = figures(metric, 28.0)
    assert fields["sd"] == 7.0 and "longer than the longest window (14 days)" in note
    # no whole weeks: 6,154 units → 16 days, between the windows 14 and 28 (σ 7 … 9)
    plan = Plan(dataclasses.replace(SETTINGS, whole_weeks=False),
                [row((7, 5.0), (14, 7.0), (28, 9.0))])
    result = compute(plan)
    sd = evaluated(plan, result).metrics[0].sd
    assert sd == pytest.approx(7.0 + 2.0 * (result.window_days - 14.0) / 14.0)
    assert result.duration_days == result.window_days  # its own window
    assert result.rows[0].units_control == math.ceil(2 * sd**2 * Z2 / 0.25)


def test_a_fixed_runtime_takes_the_runtime_window():
    plan = Plan(dataclasses.replace(SETTINGS, runtime_days=14.0),
                [row((7, 5.0), (14, 7.0), solve="detectable_effect")])
    result = compute(plan)
    assert result.window_days == 14.0
    assert any("(the fixed runtime;" in note for note in result.notes)


def test_moving_an_input_keeps_the_settled_figures():
    plan = Plan(SETTINGS, [row((7, 5.0), (14, 7.0), (21, 8.0))])
    result = compute(plan)
    found = sensitivity(plan, result=result)
    assert found.days == 21.0
    baseline = next(s for s in found.swings if s.field == "sd")
    assert baseline.value == 8.0  # the window's sd, not the row's own 1.0
    assert tradeoffs(plan, 0, result).effect.point[1] == per_arm(8.0)


def test_windows_are_stored_and_read_back():
    plan = Plan(SETTINGS, [row((7, 5.0), (14, 7.0))])
    again = loads(dumps(plan))
    assert again.metrics[0].windows == plan.metrics[0].windows and again.metrics[0].windowed


def test_a_cached_settle_is_reused_only_while_settings_and_rows_are_unchanged():
    from fourfold.plan.evaluation import RowCache

    plan, cache = Plan(SETTINGS, [row((7, 5.0), (14, 7.0), (21, 8.0))]), RowCache()
    first = compute(plan, cache=cache)
    assert compute(plan, cache=cache) is first and first.duration_days == 21.0
    plan.settings.daily_units = 200  # 8,038 units → 40.2 days: past the last window
    moved = compute(plan, cache=cache)
    assert moved is not first and moved.duration_days == compute(plan).duration_days
    plan.settings.daily_units = 400
    plan.metrics[0].effect = 1.0  # σ 5 over 7 d: 393 per arm, 2 days → one week
    again = compute(plan, cache=cache)
    assert again.duration_days == compute(plan).duration_days == 7.0
    assert again.rows[0].units_control == math.ceil(2 * 25 * Z2)
