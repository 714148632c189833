"""Trade-off curve data (fourfold.plan.tradeoffs).

References used here:
- the normal-approximation formula n per arm = 2σ²(z₁₋α/₂ + z₁₋β)²/δ² (Lehr, R. 1992,
  "Sixteen s-squared over d-squared", Statistics in Medicine 11:1099–1102; Cohen, J. 1988,
  Statistical Power Analysis for the Behavioral Sciences, 2nd ed., ch. 2), with z from
  scipy.special.ndtri (scipy 1.17);
- statsmodels 0.15 ``NormalIndPower`` as an outside solver for the two-sample z test;
- fourfold.engine itself as the reference for rows whose formula is not closed-form here (the
  curves must equal direct engine calls; the engine is checked against published tables in
  tests/engine).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy.special import ndtri

from fourfold import engine
from fourfold.plan.evaluation import compute
from fourfold.plan.model import Metric, Plan, Settings
from fourfold.plan.tradeoffs import FIGURES, tradeoffs

DAILY = 20_000.0


def mean_plan(daily: float = DAILY, **metric_fields) -> Plan:
    fields = dict(name="Basket value", role="primary", kind="mean", method="z", baseline=10.0,
                  sd=4.0, effect=0.5, relative=False)
    fields.update(metric_fields)
    return Plan(Settings(daily_units=daily, whole_weeks=False), [Metric(**fields)])


def closed_form(sd, delta, alpha, power):
    """2σ²(z₁₋α/₂ + z₁₋β)²/δ² (Lehr 1992)."""
    z = ndtri(1 - np.asarray(alpha) / 2) + ndtri(np.asarray(power))
    return 2 * sd**2 * z**2 / np.asarray(delta) ** 2


def test_effect_curve_matches_the_closed_form_formula():
    data = tradeoffs(mean_plan(), 0)
    figure = data.effect
    np.testing.assert_allclose(figure.curve.y, closed_form(4.0, figure.curve.x, 0.05, 0.8),
                               rtol=1e-3)
    np.testing.assert_allclose(figure.neighbour.y,
                               closed_form(4.0, figure.neighbour.x, 0.05, 0.9), rtol=1e-3)
    assert figure.curve.label == "power 80 %" and figure.neighbour.label == "power 90 %"


def test_rule_of_sixteen_coefficients_on_the_curves():
    # Lehr (1992): 2(z.975 + z.8)² = 15.7; at power 0.9 21.0; α = 0.01, power 0.8: 23.4.
    # With σ = 1 and δ = 1 the units per arm are the coefficient itself.
    plan = mean_plan(sd=1.0, effect=1.0, baseline=5.0)
    data = tradeoffs(plan, 0, effect_span=(0.5, 1.5), points=11)
    at_one = int(np.argmin(abs(data.effect.curve.x - 1.0)))
    assert data.effect.curve.x[at_one] == pytest.approx(1.0)
    assert data.effect.curve.y[at_one] == pytest.approx(15.7, abs=0.05)
    assert data.effect.neighbour.y[at_one] == pytest.approx(21.0, abs=0.05)
    strict = tradeoffs(dataclasses.replace(plan, settings=dataclasses.replace(
        plan.settings, alpha=0.01)), 0, effect_span=(0.5, 1.5), points=11)
    assert strict.effect.curve.y[at_one] == pytest.approx(23.4, abs=0.05)
    assert strict.effect.point[1] == 24.0  # the table's whole units: ceil(23.36)


def test_power_and_alpha_curves_against_statsmodels():
    from statsmodels.stats.power import NormalIndPower

    data = tradeoffs(mean_plan(), 0, points=9)
    solver = NormalIndPower()
    for x, y in zip(data.power.curve.x[::4], data.power.curve.y[::4], strict=True):
        expected = solver.solve_power(effect_size=0.5 / 4.0, alpha=0.05, power=x / 100.0)
        assert y == pytest.approx(expected, rel=2e-3)
    for x, y in zip(data.alpha.curve.x[::4], data.alpha.curve.y[::4], strict=True):
        expected = solver.solve_power(effect_size=0.5 / 4.0, alpha=x, power=0.8)
        assert y == pytest.approx(expected, rel=2e-3)
    for x, y in zip(data.power.neighbour.x[::4], data.power.neighbour.y[::4], strict=True):
        expected = solver.solve_power(effect_size=0.5 / 4.0, alpha=0.01, power=x / 100.0)
        assert y == pytest.approx(expected, rel=2e-3)


def test_curves_equal_direct_engine_calls_for_a_relative_proportion_row():
    # Reference: fourfold.engine called directly with the row's design (Fleiss et al. 2003
    # ch. 4 pooled test is checked in tests/engine).
    plan = Plan(Settings(daily_units=42_000, share=0.6, arms=2, correction="bonferroni"),
                [Metric(name="Conversion", role="primary", kind="proportion", baseline=0.031,
                        effect=0.05, relative=True, rho=0.2)])
    result = compute(plan)
    row = result.rows[0]
    data = tradeoffs(plan, 0, result)
    assert row.alpha == pytest.approx(0.025)  # Bonferroni over 2 arms
    factor = 1 - 0.2**2  # CUPED variance × (1 − ρ²), Deng et al. (2013)
    effects = data.effect.curve.x / 100.0
    direct = engine.sample_size("proportion", 0.031, effects, alpha=0.025, power=0.8,
                                relative=True) * factor
    np.testing.assert_allclose(data.effect.curve.y, direct, rtol=1e-9)
    assert data.effect_unit == "%" and data.effect.x_label == "effect (% of baseline)"
    assert data.power.neighbour.label == "α 0.01"
    per_day = 42_000 * 0.6 / 3  # control units a day: traffic × share / (1 + arms × ratio)
    days = data.runtime.marks.x
    np.testing.assert_array_equal(days, 7.0 * np.arange(1, 9))
    direct = engine.detectable_effect("proportion", 0.031, per_day * days / factor,
                                      alpha=0.025, power=0.8, relative=True) * 100
    np.testing.assert_allclose(data.runtime.marks.y, direct, rtol=1e-9)


@pytest.mark.parametrize("name", ["effect", "power", "alpha", "runtime"])
def test_design_point_lies_on_its_curve(name):
    plan = mean_plan(daily=2_000, kind="proportion", method=None, baseline=0.2, effect=0.1,
                     relative=True, sd=None)
    figure = getattr(tradeoffs(plan, 0, points=801), name)
    x, y = figure.point
    xs, ys = figure.curve.x, figure.curve.y
    if figure.x_log:
        xs, x = np.log(xs), math.log(x)
    assert xs.min() < x < xs.max()
    assert np.interp(x, xs, ys) == pytest.approx(y, rel=2e-3)


def test_a_row_that_cannot_be_computed_gives_empty_curves_and_the_reason():
    plan = mean_plan(kind="proportion", method=None, baseline=1.4, sd=None)
    result = compute(plan)
    assert result.rows[0].reason
    data = tradeoffs(plan, 0, result)
    assert data.reason == result.rows[0].reason
    for figure in data.figures:
        assert figure.reason == data.reason
        assert figure.curve.x.size == figure.curve.y.size == figure.neighbour.y.size == 0
        assert all(math.isnan(v) for v in figure.point)


def test_runtime_starts_before_the_days_a_quick_row_needs():
    data = tradeoffs(mean_plan(daily=2e6), 0)
    needed = data.runtime.point[0]
    assert needed < 1.0 and data.runtime.curve.x[0] < needed


def test_runtime_needs_daily_units_but_the_other_figures_do_not():
    plan = mean_plan()
    plan = dataclasses.replace(plan, settings=dataclasses.replace(plan.settings,
                                                                  daily_units=None))
    data = tradeoffs(plan, 0)
    assert "daily units" in data.runtime.reason and data.runtime.curve.x.size == 0
    assert not data.effect.reason and data.effect.curve.x.size > 0


def test_absolute_proportion_effects_show_in_percentage_points():
    plan = mean_plan(kind="proportion", method=None, baseline=0.1, effect=0.01, sd=None)
    data = tradeoffs(plan, 0)
    assert data.effect_unit == "pp" and data.effect_scale == 100.0
    assert data.effect.point[0] == pytest.approx(1.0)
    assert data.runtime.point[1] == pytest.approx(1.0)


def test_effect_span_is_kept_only_while_the_effect_is_inside_it():
    plan = mean_plan()
    assert tradeoffs(plan, 0, effect_span=(0.1, 0.9)).effect_span == (0.1, 0.9)
    default = tradeoffs(plan, 0).effect_span
    assert default == pytest.approx((0.2, 1.25))  # 0.4× to 2.5× the effect
    assert tradeoffs(plan, 0, effect_span=(0.6, 0.9)).effect_span == default


def test_a_two_sided_range_with_a_margin_is_measured_from_the_margin():
    plan = mean_plan(effect=0.0, margin=-0.4)
    low, high = tradeoffs(plan, 0).effect_span
    assert (low, high) == pytest.approx((-0.4 + 0.4 * 0.4, -0.4 + 2.5 * 0.4))


def one_sided(delta, sd, alpha, power):
    """σ²(1 + 1/r)(z₁₋α + z₁₋β)²/δ² with r = 1: a one-sided test against a margin (Chow, Shao &
    Wang 2008, Sample Size Calculations in Clinical Research, 2nd ed., §3.2.1)."""
    z = ndtri(1 - alpha) + ndtri(power)
    return 2 * sd**2 * z**2 / np.asarray(delta) ** 2


def test_a_margin_row_plots_units_against_the_margin():
    """Non-inferiority: no true change (effect 0), the basket may not shrink by 0.4 or more."""
    plan = mean_plan(effect=0.0, margin=-0.4, alternative="greater")
    data = tradeoffs(plan, 0)
    assert data.quantity == "margin" and data.effect_editable
    figure = data.effect
    assert figure.title == "Sample size against the margin"
    assert figure.x_label == "margin (difference in means)"
    # margins on the far side of the effect, 0.4 to 2.5 times its distance from it
    assert data.effect_span == pytest.approx((-0.4 * 2.5, -0.4 * 0.4))
    np.testing.assert_allclose(figure.curve.y, one_sided(figure.curve.x, 4.0, 0.05, 0.8),
                               rtol=1e-9)
    assert figure.point == (-0.4, compute(plan).rows[0].units_control)
    assert figure.point[1] == math.ceil(one_sided(0.4, 4.0, 0.05, 0.8))


def test_a_margin_rows_weeks_show_the_tightest_margin_ruled_out():
    """After d days, n = d × 20,000 / 2 control units rule out −(z₁₋α + z₁₋β)·σ·√2/√n."""
    plan = mean_plan(effect=0.0, margin=-0.4, alternative="greater")
    figure = tradeoffs(plan, 0).runtime
    assert (figure.title, figure.y_label) == ("What each week can rule out", "margin ruled out")
    n = figure.marks.x * DAILY / 2
    expected = -(ndtri(0.95) + ndtri(0.8)) * 4.0 * math.sqrt(2) / np.sqrt(n)
    np.testing.assert_allclose(figure.marks.y, expected, rtol=1e-9)
    assert figure.point[1] == -0.4


def test_a_guardrail_with_a_runtime_plots_the_margin_it_rules_out():
    plan = mean_plan(effect=0.0, margin=0.4, alternative="less")
    plan.settings.runtime_days = 3.0
    row = compute(plan).rows[0]
    data = tradeoffs(plan, 0)
    assert not data.effect_editable and row.solved == "detectable_margin"
    n = 3.0 * DAILY / 2
    expected = (ndtri(0.95) + ndtri(0.8)) * 4.0 * math.sqrt(2) / math.sqrt(n)
    assert data.effect.point[0] == pytest.approx(expected, rel=1e-9) == row.margin_abs


def test_effect_is_not_editable_on_rows_that_solve_for_it():
    plan = mean_plan(solve="detectable_effect", n=5000.0)
    data = tradeoffs(plan, 0)
    assert not data.effect_editable
    assert tradeoffs(mean_plan(), 0).effect_editable


def test_log_axis_when_units_span_a_decade():
    data = tradeoffs(mean_plan(), 0)
    assert data.effect.y_log  # 1/δ² over 0.4×–2.5× spans ~39×
    assert not data.power.y_log and data.alpha.x_log


def test_plan_duration_is_marked_on_the_runtime_figure():
    plan = mean_plan()
    result = compute(plan)
    data = tradeoffs(plan, 0, result)
    assert data.runtime.guide == pytest.approx(result.duration_days)
    assert set(FIGURES) == {figure.name for figure in data.figures}


def test_bad_index_and_points_are_rejected():
    with pytest.raises(ValueError, match="index"):
        tradeoffs(mean_plan(), 3)
    with pytest.raises(ValueError, match="points"):
        tradeoffs(mean_plan(), 0, points=2)


def test_interim_looks_inflate_the_curves_like_the_evaluation():
    # Reference: the engine's group sequential design (its inflation factors are checked
    # against Jennison & Turnbull 2000, ch. 2, in tests/engine) times the fixed units.
    from fourfold.engine import sequential

    plan = mean_plan(daily=2_000)
    plan = dataclasses.replace(plan, settings=dataclasses.replace(plan.settings, looks=3))
    result = compute(plan)
    data = tradeoffs(plan, 0, result, points=41)
    grow = sequential.design(3, alpha=0.05, power=0.8).inflation
    assert grow > 1.0
    fixed = closed_form(4.0, data.effect.curve.x, 0.05, 0.8)
    np.testing.assert_allclose(data.effect.curve.y, fixed * grow, rtol=2e-3)
    grow_90 = sequential.design(3, alpha=0.05, power=0.9).inflation
    np.testing.assert_allclose(data.effect.neighbour.y,
                               closed_form(4.0, data.effect.neighbour.x, 0.05, 0.9) * grow_90,
                               rtol=2e-3)
    assert data.effect.point[1] == result.rows[0].units_control
    for figure in (data.power, data.alpha):
        xs, x = figure.curve.x, figure.point[0]
        if figure.x_log:
            xs, x = np.log(xs), math.log(x)
        assert np.interp(x, xs, figure.curve.y) == pytest.approx(figure.point[1], rel=1e-3)


@pytest.mark.parametrize("looks, spending, futility", [(10, "ld-obrien-fleming", False),
                                                      (4, "ld-pocock", True)])
def test_interpolated_inflation_stays_near_the_exact_designs(looks, spending, futility):
    # Along the power and α figures the inflation is interpolated between a few designs; the
    # curves must stay within 0.5 % of the exact design at every point (about a pixel on a
    # figure a few hundred pixels tall). Reference: the engine's designs at each point.
    from fourfold.plan import sequential

    plan = mean_plan(daily=2_000)
    settings = dataclasses.replace(plan.settings, looks=looks, spending=spending,
                                   futility=futility)
    plan = dataclasses.replace(plan, settings=settings)
    data = tradeoffs(plan, 0, compute(plan))
    effect = 0.5
    for figure in (data.power, data.alpha):
        for i in range(3, figure.curve.x.size, 7):
            if figure.name == "power":
                alpha, power = 0.05, figure.curve.x[i] / 100.0
            else:
                alpha, power = figure.curve.x[i], 0.8
            exact = closed_form(4.0, effect, alpha, power) * sequential.row_design(
                settings, alpha, power, "two-sided").inflation
            assert figure.curve.y[i] == pytest.approx(exact, rel=5e-3), (figure.name, i)
