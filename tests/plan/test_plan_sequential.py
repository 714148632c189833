"""Interim looks in plan evaluation: one look changes nothing; more multiply by the inflation.

Sources:
- Jennison & Turnbull (2000) *Group Sequential Methods*, Table 2.2: Pocock R_P(5, 0.05, 0.2)
  = 1.229; Table 2.4: O'Brien–Fleming R_B(4, 0.05, 0.1) = 1.022 — from memory.
- Armitage, McPherson & Rowe (1969): five unadjusted looks at 0.05 give 0.142 — from memory.
- Lehr (1992): n per arm = 2σ²(z₁₋α/₂ + z₁₋β)²/δ²; z values from scipy 1.17 ``norm``.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy.stats import norm

from fourfold.engine.sequential import design
from fourfold.plan.evaluation import compute
from fourfold.plan.model import Metric, Plan, Settings
from fourfold.plan.sequential import design_of_row, power_of, row_looks


def _mean_row(**fields) -> Metric:
    values = dict(name="Spend", role="primary", kind="mean", baseline=10.0, sd=5.0,
                  effect=0.25, relative=False)
    values.update(fields)
    return Metric(**values)


def _lehr(sd: float, effect: float, alpha: float = 0.05, power: float = 0.8) -> float:
    """Control units of the fixed z design (Lehr 1992), from scipy's normal quantiles."""
    z = norm.isf(alpha / 2) + norm.ppf(power)
    return 2 * sd**2 * z**2 / effect**2


def _with(plan: Plan, **settings) -> Plan:
    return Plan(dataclasses.replace(plan.settings, **settings), plan.metrics)


def test_one_look_is_the_fixed_plan():
    plan = Plan(Settings(daily_units=2_000, whole_weeks=False), [_mean_row()])
    row = compute(plan).rows[0]
    assert row.units_control == math.ceil(_lehr(5.0, 0.25))
    assert row.units_max == row.units_total
    assert row.units_expected_h1 == row.units_total
    assert row.days_expected_h1 == row.days
    assert row.look_days is None
    assert row_looks(plan, compute(plan), 0) == ()


def test_pocock_five_looks_multiply_units_by_the_tabled_inflation():
    fixed = Plan(Settings(daily_units=2_000, whole_weeks=False), [_mean_row()])
    plan = _with(fixed, looks=5, spending="pocock")
    base, row = compute(fixed).rows[0], compute(plan).rows[0]
    assert row.units_control == math.ceil(_lehr(5.0, 0.25) * design(5, spending="pocock")
                                          .inflation)
    assert row.units_control / base.units_control == pytest.approx(1.229, abs=2e-3)  # J&T 2.2
    assert row.units_max == row.units_total
    assert row.units_expected_h1 < row.units_max
    assert row.days > base.days


def test_binding_row_and_duration_use_the_maximum():
    fixed = Plan(Settings(daily_units=3_000, whole_weeks=True, power=0.9),
                 [_mean_row(), _mean_row(name="Other", role="guardrail", effect=0.5)])
    plan = _with(fixed, looks=4, spending="obrien-fleming")
    base, result = compute(fixed), compute(plan)
    assert result.binding_index == 0
    assert result.total_units == result.rows[0].units_max
    ratio = result.rows[0].units_control / base.rows[0].units_control
    assert ratio == pytest.approx(1.022, abs=2e-3)  # J&T Table 2.4, from memory
    assert result.duration_days >= base.duration_days
    assert result.duration_days % 7 == 0


def test_look_days_are_equally_spaced_and_expected_days_follow_the_stops():
    plan = Plan(Settings(daily_units=1_000, whole_weeks=False, looks=4), [_mean_row()])
    result = compute(plan)
    row = result.rows[0]
    assert len(row.look_days) == 4
    assert row.look_days[-1] == row.days
    expected = [math.ceil(row.days * k / 4 - 1e-9) for k in (1, 2, 3)]
    assert list(row.look_days[:-1]) == expected
    made = design_of_row(plan, result, 0)
    # whole days like every other day count, rounded up (the expectation itself is fractional)
    assert row.days_expected_h1 == math.ceil(float(np.dot(made.stop_h1, row.look_days)))
    assert row.units_expected_h1 == pytest.approx(
        row.units_total * made.expected_h1 / made.inflation, abs=1.0)


def test_runtime_rows_detect_what_the_fixed_design_of_n_over_inflation_detects():
    settings = Settings(daily_units=4_000, runtime_days=14, share=1.0, whole_weeks=False)
    fixed = Plan(settings, [_mean_row()])
    plan = _with(fixed, looks=3)
    base, row = compute(fixed).rows[0], compute(plan).rows[0]
    inflation = design(3).inflation
    assert row.units_control == base.units_control  # the runtime's traffic is the maximum
    # δ ∝ 1/√n for the z design (Lehr 1992): n / inflation units detect √inflation × δ.
    assert row.effect_abs == pytest.approx(base.effect_abs * math.sqrt(inflation), rel=1e-6)


def test_rows_solving_for_power_use_the_boundaries():
    n = 5_000.0
    fixed = Plan(Settings(), [_mean_row(solve="power", n=n)])
    plan = _with(fixed, looks=5, futility=True)
    base, result = compute(fixed), compute(plan)
    row = result.rows[0]
    assert row.power < base.rows[0].power
    assert row.power == pytest.approx(power_of(design_of_row(plan, result, 0),
                                               base.rows[0].power), abs=1e-9)


def test_solving_for_alpha_with_looks_is_explained():
    plan = Plan(Settings(looks=3), [_mean_row(solve="significance_level", n=4_000.0)])
    row = compute(plan).rows[0]
    assert "interim looks" in row.reason
    assert math.isnan(row.alpha)


def test_notes_give_the_inflation_and_the_price_of_peeking():
    plan = Plan(Settings(looks=5), [_mean_row()])
    notes = " ".join(compute(plan).notes)
    assert f"{design(5).inflation:.3f} ×" in notes
    assert ("Checking 5 times at p < 0.05 unadjusted gives a false-positive rate of 14 %"
            in notes)
    assert "Checking" not in " ".join(compute(_with(plan, looks=1)).notes)


def test_looks_table_matches_the_design():
    plan = Plan(Settings(daily_units=2_500, whole_weeks=False, looks=3, futility=True),
                [_mean_row(alternative="greater")])
    result = compute(plan)
    looks = row_looks(plan, result, 0)
    made = design(3, alternative="greater", futility="ld-obrien-fleming")
    assert [look.z_efficacy for look in looks] == pytest.approx(list(made.upper))
    assert [look.z_futility for look in looks] == pytest.approx(list(made.lower))
    assert looks[-1].units == result.rows[0].units_total
    assert looks[-1].day == result.rows[0].days


def _crowded(plan: Plan, result) -> list[str]:
    """The rows whose look days repeat, read off each row (the note's claim, by hand)."""
    return [metric.name for metric, row in zip(plan.metrics, result.rows, strict=True)
            if row.look_days and len(set(row.look_days)) < len(row.look_days)]


def test_a_row_with_more_looks_than_days_is_named_in_a_note():
    # 8 equally spaced looks: a run of fewer than 8 days puts two looks on one day (days
    # counted by hand; no outside source)
    plan = Plan(Settings(daily_units=500, whole_weeks=False, looks=8),
                [_mean_row(), _mean_row(name="Short", effect=0.6)])
    result = compute(plan)
    assert 3 <= result.rows[1].days < 8 <= result.rows[0].days
    assert _crowded(plan, result) == ["Short"]
    assert ("Two looks or more on one day (Short): each is taken when its share of the units "
            "is in, part-way through that day.") in result.notes
    assert not any(note.startswith("Two looks or more") for note in
                   compute(_with(plan, looks=3)).notes)


@pytest.mark.parametrize("scenario", [None, "Returning visitors, ramp-up to all traffic"])
def test_the_note_names_exactly_the_rows_whose_look_days_repeat(scenario):
    # on the sample at 12 looks, with constant traffic and with a reach curve and ramp-up
    # (where a ramp's step puts two looks on one day even in a run longer than 12 days)
    from fourfold.plan import effective, load, sample_path

    sample = load(sample_path())
    sample.settings = dataclasses.replace(sample.settings, looks=12)
    plan = sample if scenario is None else effective(sample, scenario)
    result = compute(plan)
    named = _crowded(plan, result)
    notes = [note for note in result.notes if note.startswith("Two looks or more")]
    if named:
        listed = ", ".join(named) if len(named) <= 3 else f"{len(named)} rows"
        assert notes == [f"Two looks or more on one day ({listed}): each is taken when its "
                         "share of the units is in, part-way through that day."]
    else:
        assert notes == []
