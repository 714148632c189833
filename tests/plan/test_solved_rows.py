"""Rows solved together are solved as each row alone would be.

:func:`fourfold.plan.evaluation.compute` solves a plan's rows column by column (one engine call
per group, one numpy array per quantity after it) and shares each group sequential design and
each design's look days between the rows that ask for the same α, power, sidedness and days
(:mod:`fourfold.plan.solved_rows`). The reference is the same row in a plan of its own, with the
same settings and no correction of α, so that nothing but the row decides its figures (a
consistency check, no outside source): a design or look days shared by rows that differ in
any of those would give one of them another row's figures.
"""

import dataclasses

import numpy as np
import pytest

from fourfold.plan import Metric, Plan, Settings, compute, effective, load, sample_path


def _rows() -> list[Metric]:
    """Rows that differ in α, power, direction, kind, the quantity solved and their units."""
    sample = load(sample_path())
    conversion, revenue, _, items, contacts, load_time, p95 = sample.metrics
    return [
        conversion,
        dataclasses.replace(conversion, name="Conversion at α 0.01", alpha=0.01),
        dataclasses.replace(conversion, name="Conversion at power 0.9", power=0.9),
        dataclasses.replace(conversion, name="Conversion, one-sided", alternative="greater"),
        dataclasses.replace(conversion, name="Larger lift", effect=0.08),
        revenue,
        dataclasses.replace(revenue, name="Revenue, lower", alternative="less", effect=-0.04),
        items, contacts, load_time, p95,
        dataclasses.replace(load_time, name="Load time, power at n", solve="power", n=40_000.0),
        dataclasses.replace(revenue, name="Revenue, effect at n", solve="detectable_effect",
                            n=900_000.0, alpha=0.02),
        dataclasses.replace(conversion, name="Conversion, power at n", solve="power",
                            n=250_000.0, power=0.9),
        dataclasses.replace(contacts, name="Contacts, margin at n", solve="detectable_effect",
                            n=300_000.0),
    ]


def _reach():
    sample = load(sample_path())
    return effective(sample, next(s.name for s in sample.scenarios if "reach" in s.settings))


@pytest.mark.parametrize("settings", [
    dict(looks=3),
    dict(looks=5, spending="pocock"),
    dict(looks=4, whole_weeks=False),
    dict(looks=2, futility=True),
    dict(looks=3, runtime_days=28.0),
    dict(looks=1),
    "reach",
], ids=["3 looks at week ends", "5 Pocock looks", "4 looks by day", "futility",
        "fixed runtime", "fixed design", "reach curve"])
def test_each_row_of_a_varied_plan_is_the_row_solved_alone(settings):
    base = _reach().settings if settings == "reach" else load(sample_path()).settings
    chosen = dict(looks=3) if settings == "reach" else settings
    settings = dataclasses.replace(base, correction="none", **chosen)
    rows = _rows()
    together = compute(Plan(settings, rows)).rows
    assert not any(row.reason for row in together)
    if settings.runtime_days is None:
        assert len({row.days for row in together}) > 2  # the rows' runs differ
    for row, found in zip(rows, together, strict=True):
        alone = compute(Plan(dataclasses.replace(settings), [row])).rows[0]
        np.testing.assert_equal(dataclasses.astuple(found), dataclasses.astuple(alone),
                                err_msg=row.name)


def test_rows_with_units_of_their_own_at_a_trickle_of_traffic_fail_with_a_reason():
    """At 10⁻³⁰⁵ visitors a day a row's days are past counting (10³¹⁰); with interim looks
    in whole weeks its run was once counted in whole weeks as an integer, which raised
    ValueError and left the plan without a result."""
    settings = Settings(daily_units=1e-305, looks=3, whole_weeks=True)
    row = Metric(name="Spend", role="secondary", kind="mean", baseline=10.0, sd=5.0,
                 effect=0.5, relative=False, solve="power", n=50_000.0)
    result = compute(Plan(settings, [row]))
    assert result.rows[0].reason == ("needs more days than can be counted at 1e-305 daily "
                                     "units")
