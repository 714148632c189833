"""``evaluate``'s table, built column by column, equals the table built row by row.

The reference is the way the table was built before it was made columnar: one dict per row
of the metric's fields and ``dataclasses.asdict`` of its result, then
``pandas.DataFrame.from_records`` (a consistency check, no outside source). The two must be
equal value for value and dtype for dtype, for plans with every kind of row, incomplete rows,
interim looks, scenarios, fields given as whole numbers or None, and no rows at all.
"""

import dataclasses

import pandas
import pytest

from fourfold.plan import Metric, Plan, Settings, effective, load, sample_path
from fourfold.plan.evaluation import RowResult, compute, evaluate
from fourfold.plan.fields import METRIC_FIELDS


def _row_by_row(plan: Plan) -> pandas.DataFrame:
    result = compute(plan)
    renamed = {"alpha": "alpha_override", "power": "power_override"}
    records = []
    for index, (metric, row) in enumerate(zip(plan.metrics, result.rows, strict=True)):
        record = {renamed.get(name, name): getattr(metric, name)
                  for name in METRIC_FIELDS if name != "simulation"}
        record.update(dataclasses.asdict(row))
        record["binding"] = index == result.binding_index
        record["power_at_duration"] = result.duration_powers[index]
        records.append(record)
    columns = [renamed.get(name, name) for name in METRIC_FIELDS if name != "simulation"]
    columns += [field.name for field in dataclasses.fields(RowResult)]
    columns += ["binding", "power_at_duration"]
    return pandas.DataFrame.from_records(records, columns=columns)


def _plans():
    sample = load(sample_path())
    yield "sample", sample
    for scenario in sample.scenarios:
        yield scenario.name, effective(sample, scenario.name)
    yield "looks", Plan(dataclasses.replace(sample.settings, looks=3), sample.metrics)
    yield "incomplete", Plan(sample.settings, [
        *sample.metrics, Metric(name="No sd", role="primary", kind="mean", sd=None)])
    yield "overrides", Plan(Settings(daily_units=1000.0), [
        Metric(name="A", alpha=0.01, power=0.9, n=5000.0, solve="power"),
        Metric(name="B", solve="detectable_effect")])
    yield "runtime", Plan(dataclasses.replace(sample.settings, runtime_days=21.0),
                          sample.metrics)
    # Fields as a notebook may give them: whole numbers, None beside numbers (the table keeps
    # what pandas makes of them: int64, float64 with NaN, object).
    yield "whole numbers", Plan(Settings(daily_units=10_000), [
        Metric(name="Spend", role="primary", kind="mean", baseline=10, sd=5, effect=1,
               relative=False, rho=0, n=None),
        Metric(name="Visits", role="guardrail", kind="mean", baseline=3, sd=2, effect=1,
               relative=False, rho=0.5, alpha=0.01, n=None)])
    yield "mixed", Plan(Settings(daily_units=10_000), [
        Metric(name="A", role="primary", kind="mean", baseline=10, sd=5.0, effect=1,
               relative=False),
        Metric(name="B", kind="mean", baseline=10.5, sd=None, effect=0.5, relative=False,
               n=500, solve="power")])


@pytest.mark.parametrize(("name", "plan"), list(_plans()), ids=[n for n, _ in _plans()])
def test_columns_equal_the_row_by_row_table(name, plan):
    pandas.testing.assert_frame_equal(evaluate(plan), _row_by_row(plan), check_exact=True)


def test_a_plan_without_rows():
    plan = Plan(Settings(), [])
    pandas.testing.assert_frame_equal(evaluate(plan), _row_by_row(plan), check_exact=True)
