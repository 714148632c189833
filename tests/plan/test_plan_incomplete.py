"""Incomplete plans: a deciding row that cannot be computed leaves the plan without a duration.

A primary or guardrail row that cannot be computed might need longer than every other row, so
no duration may be given as if it were known (Kohavi, Tang & Xu 2020, ch. 15 and 17: every
guardrail must be powered; the rest is Fourfold's own rule, no outside source).
"""

import dataclasses

from fourfold.plan import (
    Metric,
    Plan,
    Settings,
    compute,
    dumps,
    evaluate,
    load,
    loads,
    sample_path,
)


def _sample():
    return load(sample_path())


def test_the_sample_plan_is_complete():
    result = compute(_sample())
    assert (result.status, result.incomplete, result.incomplete_text()) == ("complete", (), "")
    assert result.duration_days == 35.0


def test_a_primary_row_that_cannot_be_computed_leaves_no_duration():
    plan = _sample()
    plan.metrics[0].kind = "mean"  # no SD yet: the primary row cannot be computed
    result = compute(plan)
    assert result.status == "incomplete"
    assert (result.duration_days, result.total_units, result.binding_index,
            result.binding_name) == (None, None, None, None)
    assert result.incomplete_text() == ("row 1 (Checkout conversion): sd is required for a "
                                        "mean (the per-unit standard deviation)")
    assert result.notes[0].startswith("Incomplete plan: 1 primary or guardrail row cannot be "
                                      "computed")


def test_the_issue_case_a_guardrail_margin_on_the_wrong_side_as_loaded_from_a_file():
    """Before: the page-load guardrail dropped out and the plan reported 35 days anyway."""
    plan = loads(dumps(_sample()).replace('"margin": 0.02', '"margin": -0.02'))
    result = compute(plan)
    assert result.status == "incomplete" and result.duration_days is None
    assert [(item.index, item.name) for item in result.incomplete] == [(5, "Page load time (s)")]


def test_a_secondary_row_that_cannot_be_computed_leaves_the_plan_complete():
    plan = _sample()
    plan.metrics[1].sd = None
    result = compute(plan)
    assert result.status == "complete" and result.duration_days == 35.0
    assert "Revenue per visitor: not computed — sd is required for a mean" in " ".join(
        result.notes)


def test_a_fixed_runtime_does_not_hide_an_incomplete_plan():
    plan = _sample()
    plan.settings.runtime_days = 28.0
    plan.metrics[5].sd = None
    result = compute(plan)
    assert result.status == "incomplete" and result.duration_days is None


def test_evaluate_carries_the_status_and_the_reasons():
    plan = Plan(Settings(daily_units=1000.0), [
        Metric(name="Spend", role="primary", kind="mean", baseline=5.0, sd=None),
        Metric(name="Refunds", role="guardrail", baseline=0.02, effect=0.0, relative=False,
               alternative="less", margin=0.005),
    ])
    attrs = evaluate(plan).attrs
    assert attrs["status"] == "incomplete" and attrs["duration_days"] is None
    assert attrs["incomplete"] == [{"index": 0, "name": "Spend", "reason": "sd is required for "
                                    "a mean (the per-unit standard deviation)"}]
    plan.metrics[0] = dataclasses.replace(plan.metrics[0], sd=2.0)
    attrs = evaluate(plan).attrs
    assert (attrs["status"], attrs["incomplete"]) == ("complete", [])
