"""Ratio and quantile rows, Dunnett's correction, the √k allocation and the direction of a
row, through the plan: fields, evaluation, commands, files and the trade-off plots.

Outside sources: the closed form n = σ²(1 + 1/r)(z₁₋α/₂ + z₁₋β)²/δ² (Lehr 1992, Statistics in
Medicine 11:1099; common practice for unequal arms) with scipy 1.17's normal quantiles, the
sd of a ratio's linearised values computed with numpy on generated per-unit data (the delta
method, Deng, Knoblich & Lu 2018), the log-normal density from ``scipy.stats.lognorm``, and
Dunnett's two-sided critical value for two arms, 2.21 (Dunnett 1964, Biometrics 20:482,
Table II, from memory).
"""

import dataclasses
import json
import math
import pathlib

import numpy as np
import pytest
from scipy import stats

from fourfold.plan import Metric, Plan, PlanError, Settings, dumps, load, loads
from fourfold.plan.arms import equal_allocation_saving, row_alphas, treatment_ratio
from fourfold.plan.commands import CommandStack, SetField, SetFields
from fourfold.plan.evaluation import compute
from fourfold.plan.kinds import direction_words, quantile_name, unit_sd
from fourfold.plan.tradeoffs import tradeoffs

VERSION_1 = pathlib.Path(__file__).parent / "data" / "plan-version-1.json"


def _lehr(sd, delta, alpha=0.05, power=0.8, sides=2, ratio=1.0):
    z = stats.norm.isf(alpha / sides) + stats.norm.ppf(power)
    return (1 + 1 / ratio) * sd**2 * z**2 / delta**2


def _ratio_row(**changes):
    values = dict(name="Items per order", role="primary", kind="ratio", baseline=2.6,
                  denominator=0.034, numerator_sd=0.61, denominator_sd=0.19, correlation=0.8,
                  effect=0.04, relative=True, unit="items")
    values.update(changes)
    return Metric(**values)


def _quantile_row(**changes):
    values = dict(name="Page load p95", role="guardrail", kind="quantile", baseline=3.1,
                  quantile_level=0.95, second_level=0.5, second_value=1.7, effect=0.0,
                  relative=False, alternative="less", margin=0.05, better="lower", unit="s")
    values.update(changes)
    return Metric(**values)


def test_ratio_row_uses_the_delta_method_sd_of_per_unit_data():
    # Generated visitors: orders Y and items X per visitor; the row's inputs are numpy's
    # moments, and its units are Lehr's n with numpy's sd of the linearised values.
    rng = np.random.default_rng(14)
    orders = rng.poisson(0.05, 400_000)
    items = np.array([rng.poisson(1.6, k).sum() + k for k in orders], dtype=float)
    orders = orders.astype(float)
    r = items.mean() / orders.mean()
    row = _ratio_row(baseline=r, denominator=orders.mean(), numerator_sd=items.std(ddof=1),
                     denominator_sd=orders.std(ddof=1),
                     correlation=float(np.corrcoef(items, orders)[0, 1]))
    linear_sd = ((items - r * orders) / orders.mean()).std(ddof=1)
    assert unit_sd(row) == pytest.approx(linear_sd, rel=1e-9)
    result = compute(Plan(Settings(), [row])).rows[0]
    assert result.reason == ""
    assert result.units_control == math.ceil(_lehr(linear_sd, 0.04 * r) * (1 - 1e-12))


def test_quantile_row_uses_the_density_of_the_log_normal_or_the_given_one():
    dist = stats.lognorm(s=np.log(3.1 / 1.7) / stats.norm.ppf(0.95), scale=1.7)
    sd = np.sqrt(0.95 * 0.05) / dist.pdf(3.1)
    plan = Plan(Settings(), [_quantile_row(), _quantile_row(density=0.2)])
    first, second = compute(plan).rows
    # One-sided at α = 0.05, margin 0.05 s, no true change: δ = 0.05.
    assert first.units_control == math.ceil(_lehr(sd, 0.05, sides=1) * (1 - 1e-12))
    assert second.units_control == math.ceil(
        _lehr(np.sqrt(0.95 * 0.05) / 0.2, 0.05, sides=1) * (1 - 1e-12))


@pytest.mark.parametrize("row,words", [
    (_ratio_row(denominator=None), "a ratio row needs its denominator's mean per unit"),
    (_ratio_row(correlation=None), "a ratio row needs the correlation"),
    (_ratio_row(numerator_sd=0.0, denominator_sd=0.0), "move in lockstep"),
    (_quantile_row(quantile_level=None), "a quantile row needs its level"),
    (_quantile_row(second_value=None), "needs the density at the quantile"),
    (_quantile_row(second_value=4.0), "the higher level must have the higher value"),
])
def test_missing_or_impossible_kind_inputs_are_explained(row, words):
    plan = Plan(Settings(daily_units=10_000), [row, _ratio_row(role="secondary")])
    result = compute(plan)
    assert words in result.rows[0].reason and math.isnan(result.rows[0].units_control)
    assert result.rows[1].reason == ""  # the other row of the group still computes
    assert any(words in note for note in result.notes)


def test_dunnett_alpha_per_sidedness_and_fewer_units_than_bonferroni():
    rows = [_ratio_row(), _quantile_row()]
    plans = {name: Plan(Settings(arms=2, correction=name), rows)
             for name in ("bonferroni", "sidak", "dunnett")}
    alphas = row_alphas(plans["dunnett"])
    # Two-sided primary: 2·(1 − Φ(2.2121)) (Dunnett 1964 Table II: 2.21 for two arms).
    assert alphas[0] == pytest.approx(2 * stats.norm.sf(2.2121), rel=2e-4)
    assert alphas[1] > alphas[0] / 2  # one-sided guardrail: its own critical value
    units = {name: [row.units_total for row in compute(plan).rows]
             for name, plan in plans.items()}
    assert units["dunnett"][0] < units["sidak"][0] < units["bonferroni"][0]
    assert units["dunnett"][1] < units["sidak"][1] < units["bonferroni"][1]
    assert [row.alpha for row in compute(plans["dunnett"]).rows] == pytest.approx(alphas)
    # Two primary metrics: Bonferroni over the metrics, Dunnett over the arms.
    two = Plan(Settings(arms=2, correction="dunnett"), [_ratio_row(), _ratio_row(name="B")])
    assert row_alphas(two)[0] == pytest.approx(2 * stats.norm.sf(2.2121) / 2, rel=0.02)


def test_sqrt_k_allocation_splits_units_and_saves_against_equal():
    settings = Settings(arms=3, allocation="sqrt-k", daily_units=20_000, whole_weeks=False)
    plan = Plan(settings, [_ratio_row()])
    assert treatment_ratio(settings) == pytest.approx(1 / np.sqrt(3))
    row = compute(plan).rows[0]
    assert row.units_treatment == math.ceil(row.units_control / np.sqrt(3) - 1e-9)
    saving = equal_allocation_saving(plan)
    equal = compute(dataclasses.replace(plan, settings=dataclasses.replace(
        settings, allocation="fixed"))).rows[0]
    assert saving.units == row.units_total and saving.equal_units == equal.units_total
    # (1 + √k)² / (2(1 + k)) of the equal total for z tests (common practice, no source).
    assert saving.units / saving.equal_units == pytest.approx(
        (1 + np.sqrt(3)) ** 2 / 8, rel=1e-4)
    assert saving.units_saved > 0 and saving.days_saved >= 0
    assert equal_allocation_saving(Plan(Settings(arms=3), [_ratio_row()])) is None
    # The ratio a fixed allocation keeps comes back when the rule is switched off.
    assert treatment_ratio(dataclasses.replace(settings, allocation="fixed", ratio=0.5)) == 0.5


def test_a_guardrail_takes_the_one_sided_test_of_its_direction():
    stack = CommandStack(Plan(metrics=[Metric(name="Load", kind="mean", baseline=1.84,
                                              sd=0.61, margin=0.02, relative=False)]))
    stack.do(SetField(0, "role", "guardrail"))
    assert (stack.plan.metrics[0].alternative, stack.plan.metrics[0].margin) == ("greater",
                                                                                 -0.02)
    stack.do(SetField(0, "better", "lower"))
    assert (stack.plan.metrics[0].alternative, stack.plan.metrics[0].margin) == ("less", 0.02)
    stack.undo()
    assert stack.plan.metrics[0].better == "higher" and stack.plan.metrics[0].margin == -0.02
    # A paste that sets the alternative itself keeps it.
    stack.do(SetFields([(0, "better", "lower"), (0, "alternative", "two-sided")]))
    assert stack.plan.metrics[0].alternative == "two-sided"
    # Not a guardrail: better changes nothing else.
    stack.do(SetFields([(0, "role", "secondary"), (0, "alternative", "two-sided")]))
    stack.do(SetField(0, "better", "higher"))
    assert stack.plan.metrics[0].alternative == "two-sided"


@pytest.mark.parametrize("metric,size,words", [
    (_quantile_row(), "50 ms", "must not get worse (higher) by more than 50 ms"),
    (Metric(better="higher", alternative="greater", margin=-0.01), "1 pp",
     "must not get worse (lower) by more than 1 pp"),
    (Metric(better="higher", alternative="two-sided", margin=0.0), "0",
     "tests for a change either way"),
    (Metric(better="lower", alternative="greater", margin=0.0), "0",
     "tests whether it gets worse (higher)"),
])
def test_direction_in_words(metric, size, words):
    assert direction_words(metric, size) == words


def test_fields_refuse_impossible_values():
    with pytest.raises(PlanError, match="correlation must satisfy -1 ≤ correlation ≤ 1"):
        loads(json.dumps({"format": "fourfold-plan", "schema_version": 3, "metrics": [
            {"id": "r1", "name": "x", "kind": "ratio", "baseline": 1.0, "correlation": 2.0}]}))
    with pytest.raises(PlanError, match="unit must be at most 20 characters"):
        SetField(0, "unit", "x" * 21).apply(Plan.empty())
    with pytest.raises(PlanError, match="quantile_level must satisfy 0 < quantile_level < 1"):
        SetField(0, "quantile_level", 95).apply(Plan.empty())


def test_version_1_files_open_unchanged():
    text = VERSION_1.read_text(encoding="utf-8")
    assert json.loads(text)["schema_version"] == 1 and '"unit"' not in text
    old = load(VERSION_1)
    assert all(metric.unit == "" and metric.better == "higher" for metric in old.metrics)
    assert old.settings.allocation == "fixed"
    # Its rows evaluate as the engine says (test_plan_evaluation's direct engine calls).
    assert all(row.reason == "" for row in compute(old).rows)
    assert VERSION_1.read_text(encoding="utf-8") == text  # opening never rewrites it
    assert loads(dumps(old)) == old and json.loads(dumps(old))["schema_version"] == 1


def test_plans_with_the_new_kinds_round_trip(tmp_path):
    plan = Plan(Settings(arms=3, allocation="sqrt-k", correction="dunnett", daily_units=5e4),
                [_ratio_row(), _quantile_row(), _quantile_row(density=0.25, unit="ms")])
    path = tmp_path / "kinds.json"
    path.write_text(dumps(plan), encoding="utf-8")
    assert json.loads(path.read_text(encoding="utf-8"))["schema_version"] == 3
    again = load(path)
    assert again == plan and compute(again) == compute(plan)


def test_trade_off_axes_name_the_unit_and_the_quantile():
    plan = Plan(Settings(daily_units=42_000), [_quantile_row(relative=False),
                                               _ratio_row(relative=False, effect=0.1)])
    assert quantile_name(plan.metrics[0]) == "p95"
    first = tradeoffs(plan, 0)
    # a guardrail (one-sided, with a margin): its first figure is about the margin
    assert first.quantity == "margin"
    assert first.effect.x_label == "margin (difference in the p95, s)"
    assert first.effect_unit == "s" and first.reason == ""
    assert tradeoffs(plan, 1).effect.x_label == "effect (difference in ratios, items)"
