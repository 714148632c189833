"""The comparison equals evaluating each scenario on its own; an incomplete scenario shows no
duration; the row caches serve every scenario (Fourfold's own semantics; no outside source)."""

import copy
import dataclasses
import math

import pandas
import pytest

from fourfold.plan import PlanError, compare, compute, evaluate, load, sample_path
from fourfold.plan.commands import CommandStack, SetField, SetSetting
from fourfold.plan.comparison import Caches, outcomes
from fourfold.plan.model import Scenario
from fourfold.plan.scenario_commands import SwitchScenario
from fourfold.plan.windows import uses_windows


def _by_hand(plan, settings=None, rows=None, omitted=()):
    """The plan a scenario describes, built directly (not through fourfold.plan.scenarios)."""
    built = copy.deepcopy(plan)
    built.scenarios, built.active = [], None
    built.settings = dataclasses.replace(built.settings, **(settings or {}))
    built.metrics = [dataclasses.replace(m, **(rows or {}).get(m.id, {}))
                     for m in built.metrics if m.id not in omitted]
    return built


def _sample():
    plan = load(sample_path())
    plan.scenarios.append(Scenario("No page-load guardrail, 90 % power",
                                   settings={"power": 0.9}, omitted=["page-load"]))
    return plan


def test_compare_has_one_row_per_scenario_base_first():
    plan = _sample()
    table = compare(plan)
    assert list(table["scenario"]) == ["Base"] + [s.name for s in plan.scenarios]
    assert list(table.columns[:8]) == ["scenario", "status", "duration_days", "duration_weeks",
                                       "total_units", "binding_metric", "changes", "notes"]


def test_each_scenario_row_equals_evaluating_that_scenario_on_its_own():
    plan = _sample()
    table = compare(plan).set_index("scenario")
    for scenario in [None, *plan.scenarios]:
        name = "Base" if scenario is None else scenario.name
        by_hand = (_by_hand(plan) if scenario is None else
                   _by_hand(plan, scenario.settings, scenario.rows, scenario.omitted))
        alone = compute(by_hand)
        frame = evaluate(plan, None if scenario is None else scenario.name)
        assert frame.attrs["duration_days"] == alone.duration_days == \
            table.loc[name, "duration_days"]
        assert frame.attrs["total_units"] == alone.total_units == table.loc[name, "total_units"]
        assert frame.attrs["binding_name"] == alone.binding_name == \
            table.loc[name, "binding_metric"]
        assert frame.attrs["scenario"] == name
        for metric, row in zip(by_hand.metrics, alone.rows, strict=True):
            if metric.role == "secondary":
                continue
            assert table.loc[name, f"{metric.name}: units_control"] == row.units_control
            assert table.loc[name, f"{metric.name}: power_frac"] == row.power
            assert table.loc[name, f"{metric.name}: effect_rel_frac"] == row.effect_rel


def test_a_row_left_out_has_empty_cells_in_that_scenario():
    table = compare(_sample()).set_index("scenario")
    cell = table.loc["No page-load guardrail, 90 % power", "Page load time (s): units_control"]
    assert math.isnan(cell)
    assert table.loc["Base", "Page load time (s): units_control"] > 0


def test_an_incomplete_scenario_shows_no_duration_and_says_why():
    plan = load(sample_path())
    plan.scenarios.append(Scenario("No effect", rows={"conversion": {"effect": None}}))
    row = compare(plan).set_index("scenario").loc["No effect"]
    assert row["status"] == "incomplete"
    assert math.isnan(row["duration_days"]) and math.isnan(row["total_units"])
    assert pandas.isna(row["binding_metric"])
    assert "Checkout conversion: not computed — needs an effect" in row["notes"]
    # the evaluation itself gives no duration for it either
    alone = compute(_by_hand(plan, rows={"conversion": {"effect": None}}))
    assert alone.status == "incomplete" and alone.duration_days is None


def test_the_changes_column_says_in_words_what_each_scenario_changes():
    table = compare(load(sample_path()))
    assert table["changes"][0] == ""
    assert table["changes"][1] == "Differs from the base in treatment arms 1 (base 2)."


def test_evaluate_of_an_unknown_scenario_is_refused():
    with pytest.raises(PlanError, match="no scenario called 'Nope'"):
        evaluate(load(sample_path()), "Nope")


def test_stale_changes_come_first_in_the_notes():
    plan = load(sample_path())
    plan.scenarios[0].rows["gone"] = {"effect": 0.1}
    assert "row gone" in evaluate(plan, "Without arm B").attrs["notes"][0]
    assert "row gone" in compare(plan)["notes"][1]


def test_the_row_caches_give_the_same_comparison_and_follow_edits():
    stack = CommandStack(_sample())
    caches = Caches()
    assert compare(stack.plan, caches=caches).equals(compare(stack.plan))
    stack.do(SetField(0, "baseline", 0.04))  # a base edit: every scenario's Conversion moves
    stack.do(SwitchScenario("All eligible traffic"))
    stack.do(SetSetting("share", 0.9))
    stack.do(SetField(0, "effect", 0.06))
    with_caches = compare(stack.plan, caches=caches)
    pandas.testing.assert_frame_equal(with_caches, compare(stack.plan))
    assert set(caches.caches) == {None, *(s.name for s in stack.plan.scenarios)}


def test_an_unchanged_row_is_reused_from_its_scenario_cache():
    plan = _sample()
    caches = Caches()
    first = outcomes(plan, caches)
    plan.metrics[1].sd = 15.0  # a secondary row of the base: every scenario re-solves only it
    second = outcomes(plan, caches)
    windowed = [uses_windows(each.plan) for each in second]
    assert windowed == [False] * 4 + [True, False]  # the sample's returning visitors
    for before, after, rounds in zip(first, second, windowed, strict=True):
        if rounds:
            # Rows that follow their windows are solved again in each round of the fixed
            # point (each round's figures are other inputs); the result is the same.
            assert after.result.rows[0] == before.result.rows[0]
            continue
        assert after.result.rows[0] is before.result.rows[0]
        assert after.result.rows[1] is not before.result.rows[1]
