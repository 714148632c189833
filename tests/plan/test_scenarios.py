"""Scenarios store only what they change: the effective plan, base edits flowing through, rows
left out, stale changes reported (Fourfold's own semantics; no outside source)."""

import copy
import dataclasses

import pytest

from fourfold.plan import PlanError, effective, load, sample_path
from fourfold.plan import scenarios as sc
from fourfold.plan.commands import (
    CommandStack,
    InsertMetrics,
    MoveMetric,
    RemoveMetrics,
    ReorderMetrics,
    SetField,
    SetFields,
    SetSetting,
)
from fourfold.plan.model import Metric, Plan, Scenario, Settings
from fourfold.plan.scenario_commands import NewScenario, SwitchScenario


def _plan() -> Plan:
    return Plan(
        Settings(arms=2, share=0.6, daily_units=40_000.0),
        [Metric(name="Conversion", role="primary", baseline=0.031, id="conv"),
         Metric(name="Basket", role="secondary", kind="mean", baseline=40.0, sd=12.0,
                id="basket"),
         Metric(name="Load time", role="guardrail", kind="mean", baseline=1.8, sd=0.6,
                effect=0.0, margin=0.02, relative=False, alternative="less", id="load")],
    )


def _stack_with_scenario(name="B") -> CommandStack:
    stack = CommandStack(_plan())
    stack.do(NewScenario(name))
    return stack


def test_a_new_scenario_shows_the_base_and_stores_nothing():
    stack = _stack_with_scenario()
    assert stack.plan.active == "B"
    assert stack.plan.scenarios == [Scenario("B")]
    assert stack.view.settings == stack.plan.settings
    assert stack.view.metrics == stack.plan.metrics


def test_edits_in_a_scenario_are_stored_as_its_changes_and_leave_the_base_alone():
    stack = _stack_with_scenario()
    stack.do(SetField(0, "effect", 0.07))
    stack.do(SetSetting("arms", 1))
    scenario = stack.plan.scenarios[0]
    assert scenario.rows == {"conv": {"effect": 0.07}}
    assert scenario.settings == {"arms": 1}
    assert stack.plan.metrics[0].effect == 0.05 and stack.plan.settings.arms == 2
    assert stack.view.metrics[0].effect == 0.07 and stack.view.settings.arms == 1


def test_a_base_edit_reaches_scenarios_that_do_not_change_that_field_and_not_those_that_do():
    stack = _stack_with_scenario("Own effect")
    stack.do(SetField(0, "effect", 0.07))
    stack.do(SwitchScenario(None))
    stack.do(NewScenario("Untouched"))  # from the base: no changes
    stack.do(SwitchScenario(None))
    stack.do(SetField(0, "effect", 0.04))
    stack.do(SetField(0, "baseline", 0.05))
    stack.do(SetSetting("share", 0.8))
    plan = stack.plan
    own, untouched = effective(plan, "Own effect"), effective(plan, "Untouched")
    assert own.metrics[0].effect == 0.07  # its own change wins
    assert untouched.metrics[0].effect == 0.04
    assert own.metrics[0].baseline == untouched.metrics[0].baseline == 0.05
    assert own.settings.share == untouched.settings.share == 0.8


def test_a_new_scenario_copies_the_active_scenario():
    stack = _stack_with_scenario("Own effect")
    stack.do(SetField(0, "effect", 0.07))
    stack.do(NewScenario("Copy"))
    assert stack.plan.scenarios[1].rows == {"conv": {"effect": 0.07}}
    assert stack.plan.scenarios[1].rows is not stack.plan.scenarios[0].rows


def test_setting_a_field_back_to_the_base_value_drops_the_change():
    stack = _stack_with_scenario()
    stack.do(SetField(1, "sd", 20.0))
    stack.do(SetSetting("share", 1.0))
    stack.do(SetField(1, "sd", 12.0))
    stack.do(SetSetting("share", 0.6))
    assert stack.plan.scenarios[0] == Scenario("B")


def test_edits_are_validated_as_base_edits_are():
    stack = _stack_with_scenario()
    before = copy.deepcopy(stack.plan)
    for command, message in [(SetField(0, "alpha", 0.7), "alpha must satisfy"),
                             (SetField(0, "method", "t"), "method must be one of"),
                             (SetSetting("arms", 0), "arms must be a whole number"),
                             (SetField(5, "effect", 0.1), "row must be from 0 to 2")]:
        with pytest.raises(PlanError, match=message):
            stack.do(command)
    assert stack.plan == before and stack.plan.scenarios == before.scenarios


def test_a_kind_change_in_a_scenario_clears_a_method_of_the_old_kind():
    stack = _stack_with_scenario()
    stack.do(SetField(1, "method", "t"))
    stack.do(SetField(1, "kind", "proportion"))
    assert stack.plan.scenarios[0].rows["basket"] == {"kind": "proportion"}  # method back to
    assert stack.view.metrics[1].method is None                              # the base's None


def test_removing_rows_in_a_scenario_leaves_them_out_and_row_numbers_follow_the_view():
    stack = _stack_with_scenario()
    stack.do(RemoveMetrics([0]))
    assert stack.plan.scenarios[0].omitted == ["conv"]
    assert [m.name for m in stack.view.metrics] == ["Basket", "Load time"]
    assert len(stack.plan.metrics) == 3
    stack.do(SetField(0, "sd", 10.0))  # row 0 of the scenario is Basket
    assert stack.plan.scenarios[0].rows == {"basket": {"sd": 10.0}}


@pytest.mark.parametrize("command", [
    InsertMetrics(0, [Metric()]),
    MoveMetric(0, 1),
    ReorderMetrics([2, 1, 0]),
    SetFields([(0, "name", "x")], append=[Metric()]),
])
def test_adding_moving_and_sorting_rows_in_a_scenario_are_refused_with_a_message(command):
    stack = _stack_with_scenario()
    before = copy.deepcopy(stack.plan)
    with pytest.raises(PlanError, match="base"):
        stack.do(command)
    assert stack.plan == before and stack.plan.scenarios == before.scenarios
    assert not stack.can_redo and stack.undo_text == "New scenario B"


def test_a_row_deleted_from_the_base_makes_its_changes_stale_and_reported_not_dropped():
    stack = _stack_with_scenario()
    stack.do(SetField(0, "effect", 0.07))
    stack.do(RemoveMetrics([2]))  # leaves out Load time in B
    stack.do(SwitchScenario(None))
    stack.do(RemoveMetrics([0, 2]))
    problems = sc.problems(stack.plan, "B")
    assert len(problems) == 2
    assert "changes effect of row conv, which is no longer in the plan" in problems[0]
    assert "leaves out row load, which is no longer in the plan" in problems[1]
    assert stack.plan.scenarios[0].rows == {"conv": {"effect": 0.07}}  # kept
    stack.undo()  # the rows come back with their ids, and the changes apply again
    assert sc.problems(stack.plan) == ()
    assert effective(stack.plan, "B").metrics[0].effect == 0.07


def test_a_method_that_no_longer_fits_its_kind_is_reported_and_the_default_used():
    stack = _stack_with_scenario()
    stack.do(SetField(1, "method", "z"))
    stack.do(SwitchScenario(None))
    stack.do(SetField(1, "kind", "proportion"))
    stack.do(SetField(1, "baseline", 0.2))
    resolved = sc.resolve(stack.plan, "B")
    assert resolved.plan.metrics[1].method is None
    assert "method 'z' does not fit the kind 'proportion'" in resolved.problems[0]


def test_unknown_fields_are_reported_not_applied():
    plan = _plan()
    plan.scenarios.append(Scenario("S", settings={"colour": "green"},
                                   rows={"conv": {"sparkle": 1, "effect": 0.1}}))
    resolved = sc.resolve(plan, "S")
    assert resolved.plan.metrics[0].effect == 0.1
    assert [("colour" in p, "sparkle" in p) for p in resolved.problems] == [
        (True, False), (False, True)]


def test_the_effective_plan_shares_unchanged_rows_and_keeps_ids():
    plan = _plan()
    plan.scenarios.append(Scenario("S", rows={"basket": {"sd": 9.0}}))
    view = effective(plan, "S")
    assert view.metrics[0] is plan.metrics[0]
    assert view.metrics[1] is not plan.metrics[1]
    assert [m.id for m in view.metrics] == ["conv", "basket", "load"]
    assert view.scenarios == [] and plan.metrics[1].sd == 12.0


def test_scenario_names_are_checked():
    stack = _stack_with_scenario("Drop arm B")
    for name, message in [("drop ARM b", "exists already"), ("base", "names the plan"),
                          ("", "needs a name"), ("x" * 61, "at most 60")]:
        with pytest.raises(PlanError, match=message):
            stack.do(NewScenario(name))
    stack.do(NewScenario())
    assert stack.plan.scenarios[-1].name == "Scenario 2"


def test_copied_rows_get_fresh_ids_and_redo_gives_them_the_same_ones():
    stack = CommandStack(_plan())
    copies = [dataclasses.replace(stack.plan.metrics[0]), Metric(id="")]
    stack.do(InsertMetrics(1, copies))
    ids = [m.id for m in stack.plan.metrics]
    assert len(set(ids)) == 5 and ids[0] == "conv" and all(ids)
    stack.undo()
    stack.redo()
    assert [m.id for m in stack.plan.metrics] == ids
    stack.do(SetFields([(0, "name", "Pasted")], append=[dataclasses.replace(copies[0])]))
    assert len({m.id for m in stack.plan.metrics}) == 6


def test_describe_names_each_change_in_words():
    plan = load(sample_path())
    assert sc.describe(plan, "Without arm B") == (
        "Differs from the base in treatment arms 1 (base 2).")
    assert "Checkout conversion: effect 7 % (base 5 %)" in sc.describe(
        plan, "Accept +7 % conversion lift")
    assert "ramp-up days 1–2 at 5 %, days 3–4 at 25 % (base none)" in sc.describe(
        plan, "Returning visitors, ramp-up to all traffic")


def test_a_changed_row_is_the_same_object_until_its_base_row_or_its_changes_move():
    # The effective rows are kept between resolves (the row cache then sees nothing changed);
    # any edit of the base row or of the scenario's changes must still show at once.
    stack = _stack_with_scenario()
    stack.do(SetField(0, "baseline", 0.04))
    first = effective(stack.plan, "B").metrics[0]
    assert effective(stack.plan, "B").metrics[0] is first and first.baseline == 0.04
    stack.do(SetField(0, "baseline", 0.05))
    assert effective(stack.plan, "B").metrics[0].baseline == 0.05
    stack.plan.metrics[0].effect = 0.07  # a base field the scenario does not change
    moved = effective(stack.plan, "B").metrics[0]
    assert moved is not first and (moved.baseline, moved.effect) == (0.05, 0.07)
    stack.undo()
    assert effective(stack.plan, "B").metrics[0].baseline == 0.04
