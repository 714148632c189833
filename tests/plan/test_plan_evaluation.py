"""Evaluation of plans, checked against closed forms, published rules and direct engine calls.

Sources named beside each check. Reference library: scipy (``scipy.stats.norm``), version
recorded in ``SCIPY``.
"""

import dataclasses
import math
import pathlib

import numpy as np
import pytest
import scipy
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import norm

from fourfold import engine
from fourfold.plan import CHOICES, Metric, Plan, Settings, load, sample_path, validate_metric
from fourfold.plan.evaluation import compute, evaluate, runtime_units
from fourfold.plan.kinds import unit_sd

SCIPY = scipy.__version__
VERSION_1 = pathlib.Path(__file__).parent / "data" / "plan-version-1.json"


def _mean_row(**changes) -> Metric:
    values = dict(name="Basket value", role="primary", kind="mean", baseline=40.0, sd=10.0,
                  effect=1.0, relative=False)
    values.update(changes)
    return Metric(**values)


def _closed_form_n(sd, delta, alpha, power, sides=2, ratio=1.0):
    """n per arm = 2σ²(z₁₋α/₂ + z₁₋β)²/δ² — common practice, no source; Lehr (1992).

    With k treatment units per control unit, the control arm needs σ²(1 + 1/k)(z…)²/δ²
    (common practice, no source).
    """
    z = norm.ppf(1 - alpha / sides) + norm.ppf(power)
    return (1 + 1 / ratio) * sd**2 * z**2 / delta**2


@pytest.mark.parametrize(
    ("alpha", "power", "coefficient"),
    [
        (0.05, 0.8, 15.7),  # Lehr (1992) Statistics in Medicine 11:1099, "rule of 16": 15.7
        (0.05, 0.9, 21.0),  # Lehr (1992): 21.0 at power 0.9
        (0.01, 0.8, 23.4),  # z₀.₉₉₅ = 2.576; 2(2.576 + 0.842)² = 23.4 (common practice)
    ],
)
def test_mean_row_follows_lehr(alpha, power, coefficient):
    plan = Plan(Settings(alpha=alpha, power=power), [_mean_row(sd=10.0, effect=1.0)])
    row = compute(plan).rows[0]
    assert row.reason == ""
    assert row.units_control / 100 == pytest.approx(coefficient, abs=0.05)
    assert row.units_control == math.ceil(_closed_form_n(10.0, 1.0, alpha, power))


def test_units_are_whole_and_rounded_up():
    settings = Settings(arms=2, ratio=1.5, daily_units=1000.0, whole_weeks=False)
    row = compute(Plan(settings, [_mean_row(sd=7.3, effect=0.9)])).rows[0]
    exact = _closed_form_n(7.3, 0.9, 0.05, 0.8, ratio=1.5)
    assert row.units_control == math.ceil(exact)
    assert row.units_treatment == math.ceil(1.5 * row.units_control)
    assert row.units_total == row.units_control + 2 * row.units_treatment
    assert row.days == pytest.approx(
        float(engine.duration_days(row.units_total, 1000.0, 1.0, False)))
    assert row.effect_abs == 0.9 and row.effect_rel == pytest.approx(0.9 / 40)


def _sample():
    return load(sample_path())


def test_sample_plan_evaluates_every_row_and_runs_a_few_weeks():
    plan = _sample()
    result = compute(plan)
    assert [row.reason for row in result.rows] == [""] * len(plan.metrics)
    assert all(np.isfinite(row.units_total) for row in result.rows)
    assert result.binding_name == "Checkout conversion"
    assert 14 <= result.duration_days <= 56 and result.duration_days % 7 == 0


@pytest.mark.parametrize("path", [sample_path(), VERSION_1], ids=["sample", "version-1"])
def test_sample_rows_match_direct_engine_calls(path):
    # The current sample (Dunnett's correction, ratio and quantile rows) and the sample as a
    # version-1 file had it (Bonferroni; means, proportions and rates only).
    plan = load(path)
    result = compute(plan)
    settings = plan.settings
    primaries = sum(metric.role == "primary" for metric in plan.metrics)
    for metric, row in zip(plan.metrics, result.rows, strict=True):
        metrics = primaries if metric.role == "primary" else 1
        if settings.correction == "dunnett":
            alpha = float(engine.adjusted_alpha(settings.alpha / metrics, settings.arms,
                                                "dunnett", alternative=metric.alternative))
        else:
            alpha = float(engine.adjusted_alpha(settings.alpha, settings.arms * metrics,
                                                settings.correction))
        assert row.alpha == pytest.approx(alpha)
        factor = float(engine.variance_factor(metric.rho, metric.cluster_size, metric.icc,
                                              metric.cluster_cv))
        sd = unit_sd(metric) if metric.kind in ("ratio", "quantile") else metric.sd
        n = float(engine.sample_size(
            metric.kind, metric.baseline, metric.effect, sd=sd, alpha=alpha,
            power=settings.power, alternative=metric.alternative, ratio=settings.ratio,
            relative=metric.relative, margin=metric.margin, method=metric.method)) * factor
        assert row.units_control == math.ceil(n), metric.name
        assert row.design_factor == pytest.approx(factor)


def test_sample_guardrail_matches_the_one_sided_closed_form():
    plan = _sample()
    page_load = next(i for i, m in enumerate(plan.metrics) if m.name.startswith("Page load"))
    metric = plan.metrics[page_load]
    row = compute(plan).rows[page_load]
    # Non-inferiority, one-sided, δ = effect − margin, at the level of one comparison under
    # Dunnett's correction for two arms, z = 1.916 (Dunnett 1955, Table 1a, ν = ∞: 1.92).
    assert norm.isf(row.alpha) == pytest.approx(1.916, abs=5e-4)
    n = _closed_form_n(metric.sd, metric.effect - metric.margin, row.alpha, 0.8, sides=1)
    assert row.units_control == math.ceil(n)


def test_correction_counts_arms_and_primary_rows():
    metrics = [_mean_row(name="P1"), _mean_row(name="P2"), _mean_row(name="S", role="secondary"),
               _mean_row(name="G", role="guardrail", alpha=0.1)]
    plan = Plan(Settings(arms=3, correction="bonferroni"), metrics)
    alphas = [row.alpha for row in compute(plan).rows]
    # Bonferroni: α/k (common practice, no source).
    assert alphas == pytest.approx([0.05 / 6, 0.05 / 6, 0.05 / 3, 0.1 / 3])
    plan.settings.correction = "sidak"
    alphas = [row.alpha for row in compute(plan).rows]
    # Šidák: 1 − (1 − α)^(1/k) (Šidák 1967, JASA 62:626; from memory).
    assert alphas == pytest.approx([1 - 0.95 ** (1 / 6)] * 2 + [1 - 0.95 ** (1 / 3),
                                                                 1 - 0.9 ** (1 / 3)])
    assert ("α corrected (Šidák): primary rows for 3 arms × 2 primary metrics, other rows for "
            "3 arms.") in compute(plan).notes
    plan.settings.correction = "none"
    assert [row.alpha for row in compute(plan).rows] == [0.05, 0.05, 0.05, 0.1]
    assert not any("corrected" in note for note in compute(plan).notes)


def test_binding_metric_follows_the_data():
    metrics = [_mean_row(name="Primary", sd=10.0),
               _mean_row(name="Guard", role="guardrail", sd=5.0),
               _mean_row(name="Secondary", role="secondary", sd=50.0)]
    plan = Plan(Settings(daily_units=500.0), metrics)
    result = compute(plan)
    assert (result.binding_index, result.binding_name) == (0, "Primary")
    assert result.duration_days == result.rows[0].days
    assert result.total_units == result.rows[0].units_total
    plan.metrics[1].sd = 20.0
    result = compute(plan)
    assert (result.binding_index, result.binding_name) == (1, "Guard")
    assert result.duration_days == result.rows[1].days > result.rows[0].days
    plan.metrics[1].solve, plan.metrics[1].n = "power", 1000.0
    plan.metrics[0].kind = "proportion"
    result = compute(plan)
    assert result.binding_index is None and result.duration_days is None
    assert result.rows[0].reason != ""


def test_secondary_rows_that_need_more_are_named_in_the_notes():
    metrics = [_mean_row(name="Primary"), _mean_row(name="Wide", role="secondary", sd=30.0),
               _mean_row(name="Narrow", role="secondary", sd=2.0)]
    result = compute(Plan(Settings(daily_units=500.0), metrics))
    wide = result.rows[1]
    assert result.binding_name == "Primary"
    assert (f"Wide (secondary) would need {wide.days:g} days for its power; the test runs "
            f"{result.duration_days:g}.") in result.notes
    assert not any(note.startswith("Narrow") for note in result.notes)
    without_traffic = compute(Plan(Settings(), metrics))
    assert any(note.startswith("Wide (secondary) would need") and "units" in note
               for note in without_traffic.notes)


def test_without_daily_units_the_binding_row_has_no_days():
    plan = Plan(Settings(), [_mean_row(), _mean_row(name="Big", role="guardrail", sd=30.0)])
    result = compute(plan)
    assert result.binding_name == "Big" and result.duration_days is None
    assert math.isnan(result.rows[0].days)


def test_runtime_mode_solves_for_detectable_effect():
    settings = Settings(arms=2, daily_units=42_000.0, share=0.6, runtime_days=28.0)
    plan = Plan(settings, [_mean_row(), _mean_row(name="P", role="guardrail", solve="power")])
    result = compute(plan)
    n = 28 * 42_000 * 0.6 / 3
    assert runtime_units(settings) == pytest.approx(n)
    first, second = result.rows
    assert first.solved == "detectable_effect" and second.solved == "power"
    # MDE = (z₁₋α/₂ + z₁₋β)·σ·√(2/n) — common practice, no source.
    expected = (norm.ppf(0.975) + norm.ppf(0.8)) * 10.0 * math.sqrt(2 / n)
    assert first.effect_abs == pytest.approx(expected, rel=1e-5)  # numeric root
    assert first.effect_rel == pytest.approx(expected / 40.0, rel=1e-5)
    z = 1.0 / (10.0 * math.sqrt(2 / n)) - norm.ppf(0.975)
    assert second.power == pytest.approx(norm.cdf(z), abs=1e-4)
    assert first.days == 28.0
    assert result.duration_days == 28.0 and result.binding_index is None
    assert result.total_units == pytest.approx(28 * 42_000 * 0.6)
    assert any("runtime" in note for note in result.notes)


def test_runtime_without_daily_units_is_a_row_reason():
    plan = Plan(Settings(runtime_days=14.0), [_mean_row()])
    row = compute(plan).rows[0]
    assert "daily units" in row.reason and math.isnan(row.effect_abs)


def test_design_factor_multiplies_units_and_divides_n():
    base = compute(Plan(Settings(), [_mean_row()])).rows[0]
    cuped = compute(Plan(Settings(), [_mean_row(rho=0.5)])).rows[0]
    # CUPED: variance × (1 − ρ²) — Deng, Xu, Kohavi & Walker (2013) WSDM.
    assert cuped.design_factor == pytest.approx(0.75)
    assert cuped.units_control == math.ceil(_closed_form_n(10.0, 1.0, 0.05, 0.8) * 0.75)
    clustered = compute(Plan(Settings(), [_mean_row(cluster_size=5.0, icc=0.1)])).rows[0]
    # Design effect 1 + (m − 1)·ICC — Kish (1965) Survey Sampling.
    assert clustered.design_factor == pytest.approx(1.4)
    assert clustered.units_control == math.ceil(_closed_form_n(10.0, 1.0, 0.05, 0.8) * 1.4)
    n = 2000.0
    plain = compute(Plan(Settings(), [_mean_row(solve="power", n=n)])).rows[0]
    reduced = compute(Plan(Settings(), [_mean_row(solve="power", n=n, rho=0.5)])).rows[0]
    assert reduced.power == pytest.approx(
        float(engine.power("mean", 40.0, 1.0, n / 0.75, sd=10.0)))
    assert reduced.power > plain.power
    assert base.design_factor == 1.0


def test_solve_for_significance_level_and_given_n():
    row = compute(Plan(Settings(), [_mean_row(solve="significance_level", n=1570.0)])).rows[0]
    assert row.solved == "significance_level"
    assert row.alpha == pytest.approx(0.05, abs=0.001)
    assert row.units_control == 1570.0


def test_rows_that_cannot_be_computed_get_reasons_not_exceptions():
    metrics = [
        Metric(name="Bad proportion", role="primary", baseline=1.5),
        _mean_row(name="No sd", sd=None),
        _mean_row(name="No n", solve="detectable_effect"),
        _mean_row(name="No effect", effect=None),
        _mean_row(name="Zero effect", effect=0.0),
        _mean_row(name="Fine"),
    ]
    result = compute(Plan(Settings(daily_units=1000.0), metrics))
    reasons = [row.reason for row in result.rows]
    assert all(reasons[:5]) and reasons[5] == ""
    for row in result.rows[:5]:
        assert math.isnan(row.units_control) and math.isnan(row.days)
    assert (result.status, result.binding_name, result.duration_days) == ("incomplete", None,
                                                                           None)
    assert [item.name for item in result.incomplete] == [m.name for m in metrics[:5]]
    assert sum("not computed" in note for note in result.notes) == 5


def test_fixed_design_sequential_fields_equal_the_fixed_values():
    row = compute(Plan(Settings(daily_units=900.0), [_mean_row()])).rows[0]
    assert row.units_max == row.units_expected_h1 == row.units_total
    assert row.days_expected_h1 == row.days and row.look_days is None


def test_evaluate_is_compute_as_a_frame():
    plan = _sample()
    result = compute(plan)
    frame = evaluate(plan)
    assert len(frame) == len(plan.metrics)
    assert list(frame["name"]) == [metric.name for metric in plan.metrics]
    for index, row in enumerate(result.rows):
        for field in dataclasses.fields(row):
            value, expected = frame[field.name].iloc[index], getattr(row, field.name)
            assert value == expected or (value != value and expected != expected), field.name
    assert list(frame["binding"]) == [i == result.binding_index
                                      for i in range(len(plan.metrics))]
    assert frame["alpha_override"].isna().all()
    assert frame.attrs["duration_days"] == result.duration_days
    assert frame.attrs["binding_name"] == result.binding_name
    assert frame.attrs["notes"] == list(result.notes)
    assert frame.attrs["settings"]["arms"] == 2


_METRICS = st.builds(
    Metric,
    role=st.sampled_from(CHOICES["role"]),
    kind=st.sampled_from(CHOICES["kind"]),
    baseline=st.floats(-2.0, 60.0),
    sd=st.one_of(st.none(), st.floats(0.01, 40.0)),
    effect=st.one_of(st.none(), st.floats(-1.0, 1.0)),
    relative=st.booleans(),
    alternative=st.sampled_from(CHOICES["alternative"]),
    margin=st.floats(-0.2, 0.2),
    alpha=st.one_of(st.none(), st.floats(0.001, 0.3)),
    power=st.one_of(st.none(), st.floats(0.05, 0.99)),
    rho=st.floats(-0.95, 0.95),
    cluster_size=st.floats(1.0, 20.0),
    icc=st.floats(0.0, 1.0),
    solve=st.sampled_from(CHOICES["solve"]),
    n=st.one_of(st.none(), st.floats(1.0, 1e7)),
)
_SETTINGS = st.builds(
    Settings,
    arms=st.integers(1, 4),
    ratio=st.floats(0.25, 4.0),
    correction=st.sampled_from(CHOICES["correction"]),
    daily_units=st.one_of(st.none(), st.floats(10.0, 1e6)),
    share=st.floats(0.05, 1.0),
    whole_weeks=st.booleans(),
    runtime_days=st.one_of(st.none(), st.integers(1, 90).map(float)),
)


@settings(max_examples=60, deadline=None)
@given(_SETTINGS, st.lists(_METRICS, min_size=1, max_size=3))
def test_compute_never_raises_and_explains_every_missing_result(plan_settings, metrics):
    """Property of the contract (no outside source): valid fields never make compute raise."""
    plan = Plan(plan_settings, [validate_metric(metric) for metric in metrics])
    result = compute(plan)
    assert len(result.rows) == len(metrics)
    for row in result.rows:
        if row.reason:
            assert math.isnan(row.units_control)
        else:
            assert row.units_control >= 1 and row.units_control == math.ceil(row.units_control)
    if result.binding_index is not None:
        binding = result.rows[result.binding_index]
        assert plan.metrics[result.binding_index].role in ("primary", "guardrail")
        assert result.total_units == binding.units_total
