"""Every scenario command is one undo step: undo restores the plan exactly, redo repeats it;
the notifications describe the plan shown (Fourfold's own semantics; no outside source)."""

import dataclasses

import pytest

from fourfold.plan import PlanError, effective
from fourfold.plan import scenarios as sc
from fourfold.plan.commands import (
    CommandStack,
    RemoveMetrics,
    SetField,
    SetFields,
    SetSetting,
)
from fourfold.plan.model import Metric, Plan, Scenario, Settings
from fourfold.plan.scenario_commands import (
    ApplyToBase,
    DeleteScenario,
    DuplicateScenario,
    ForgetStale,
    NewScenario,
    RenameScenario,
    RestoreRows,
    SwitchScenario,
)


def _plan() -> Plan:
    return Plan(
        Settings(arms=2, share=0.6, daily_units=40_000.0),
        [Metric(name="Conversion", role="primary", baseline=0.031, id="conv"),
         Metric(name="Basket", kind="mean", baseline=40.0, sd=12.0, id="basket"),
         Metric(name="Load time", role="guardrail", kind="mean", baseline=1.8, sd=0.6,
                effect=0.0, margin=0.02, relative=False, alternative="less", id="load")],
        [Scenario("One arm", settings={"arms": 1}),
         Scenario("Bigger lift", rows={"conv": {"effect": 0.07}}, omitted=["basket"]),
         Scenario("All traffic", settings={"share": 1.0},
                  rows={"conv": {"baseline": 0.04}, "gone": {"sd": 2.0}})],
        active="Bigger lift",
    )


def _state(plan: Plan) -> dict:
    """Everything about the plan, row ids included."""
    return dataclasses.asdict(plan)


COMMANDS = {
    "new": lambda: NewScenario("Fresh"),
    "new, default name": lambda: NewScenario(),
    "switch": lambda: SwitchScenario("One arm"),
    "switch to base": lambda: SwitchScenario(None),
    "rename active": lambda: RenameScenario("Bigger lift", "Lift +7 %"),
    "rename other": lambda: RenameScenario("One arm", "Single arm"),
    "duplicate": lambda: DuplicateScenario("All traffic"),
    "delete active": lambda: DeleteScenario("Bigger lift"),
    "delete other": lambda: DeleteScenario("One arm"),
    "apply active": lambda: ApplyToBase("Bigger lift"),
    "apply other": lambda: ApplyToBase("All traffic"),
    "forget stale": lambda: ForgetStale("All traffic"),
    "bring back rows": lambda: RestoreRows("Bigger lift"),
    "cell in scenario": lambda: SetField(0, "baseline", 0.05),
    "cells in scenario": lambda: SetFields([(0, "power", 0.9), (1, "sd", 0.7)]),
    "setting in scenario": lambda: SetSetting("whole_weeks", False),
    "leave out in scenario": lambda: RemoveMetrics([1]),
}


@pytest.mark.parametrize("make", COMMANDS.values(), ids=COMMANDS.keys())
def test_every_scenario_command_undoes_and_redoes_exactly(make, recorded):
    stack, after, before = recorded(_plan())
    start = _state(stack.plan)
    start_view = _state(stack.view)
    stack.do(make())
    done, done_view = _state(stack.plan), _state(stack.view)
    assert done != start
    stack.undo()
    assert _state(stack.plan) == start and _state(stack.view) == start_view
    stack.redo()
    assert _state(stack.plan) == done and _state(stack.view) == done_view
    assert after == before  # each change announced before and after, alike
    assert len(after) == 3


def test_the_scenario_commands_name_themselves_in_the_edit_menu(recorded):
    stack, _, _ = recorded(_plan())
    texts = []
    for make in COMMANDS.values():
        stack.do(make())
        texts.append(stack.undo_text)
        stack.undo()
    assert texts == [
        "New scenario Fresh", "New scenario Scenario 4", "Show One arm", "Show Base",
        "Rename scenario Bigger lift", "Rename scenario One arm",
        "Duplicate scenario All traffic", "Delete scenario Bigger lift",
        "Delete scenario One arm", "Apply Bigger lift to the base",
        "Apply All traffic to the base", "Forget stale changes of All traffic",
        "Bring back the rows Bigger lift leaves out",
        "Set baseline of Conversion in Bigger lift", "Edit 2 cells in Bigger lift",
        "Set whole_weeks in Bigger lift", "Leave out Load time in Bigger lift",
    ]


def test_leaving_out_a_row_announces_rows_of_the_plan_shown(recorded):
    stack, after, before = recorded(_plan())  # "Bigger lift" shows Conversion and Load time
    stack.do(RemoveMetrics([1]))
    stack.undo()
    assert [(c.kind, c.rows) for c in after] == [("rows_removed", (1,)),
                                                  ("rows_inserted", (1,))]
    assert before == after


def test_a_cell_edited_in_a_scenario_is_announced_at_its_row_in_the_scenario(recorded):
    stack, after, _ = recorded(_plan())
    stack.do(SetField(1, "sd", 0.5))
    assert (after[-1].kind, after[-1].rows, after[-1].fields) == ("cells", (1,), ("sd",))
    assert stack.plan.scenarios[1].rows["load"] == {"sd": 0.5}


def test_dragging_a_value_in_a_scenario_is_one_undo_step():
    stack = CommandStack(_plan())
    for value in (0.06, 0.065, 0.08):
        stack.do(SetField(0, "effect", value), merge=True)
    stack.undo()
    assert stack.plan.scenarios[1].rows["conv"] == {"effect": 0.07}
    assert stack.undo_text == ""


def test_a_switch_or_scenario_edit_marks_the_plan_unsaved_and_undo_makes_it_clean():
    stack = CommandStack(_plan())
    stack.do(SwitchScenario("One arm"))
    assert not stack.clean
    stack.undo()
    assert stack.clean


def test_deleting_the_active_scenario_shows_the_base():
    stack = CommandStack(_plan())
    stack.do(DeleteScenario("Bigger lift"))
    assert stack.plan.active is None and stack.view is stack.plan


def test_renaming_the_active_scenario_keeps_it_active_and_checks_the_name():
    stack = CommandStack(_plan())
    stack.do(RenameScenario("Bigger lift", "Lift"))
    assert stack.plan.active == "Lift"
    with pytest.raises(PlanError, match="exists already"):
        stack.do(RenameScenario("Lift", "one ARM"))
    with pytest.raises(PlanError, match="no scenario called"):
        stack.do(RenameScenario("Nope", "x"))


def test_duplicate_places_the_copy_after_its_source_and_shows_it():
    stack = CommandStack(_plan())
    stack.do(DuplicateScenario("One arm"))
    assert [s.name for s in stack.plan.scenarios] == [
        "One arm", "One arm (copy)", "Bigger lift", "All traffic"]
    assert stack.plan.active == "One arm (copy)"
    assert stack.view.settings.arms == 1


def test_switching_to_the_shown_scenario_is_refused():
    stack = CommandStack(_plan())
    with pytest.raises(PlanError, match="shown already"):
        stack.do(SwitchScenario("Bigger lift"))


def test_apply_to_base_makes_the_scenario_the_base_and_keeps_the_other_scenarios_plans():
    stack = CommandStack(_plan())
    plan = stack.plan
    before = {s.name: effective(plan, s.name) for s in plan.scenarios}
    chosen = before.pop("Bigger lift")
    stack.do(ApplyToBase("Bigger lift"))
    assert [s.name for s in plan.scenarios] == ["One arm", "All traffic"]
    assert plan.active is None
    assert plan.settings == chosen.settings and plan.metrics == chosen.metrics
    assert [m.id for m in plan.metrics] == ["conv", "load"]  # Basket was left out: deleted
    for name, was in before.items():
        now = effective(plan, name)
        assert now.settings == was.settings, name
        kept = [m for m in was.metrics if m.id != "basket"]
        assert now.metrics == kept, name
    # "One arm" did not change the effect: it now keeps the former base's value explicitly
    assert plan.scenarios[0].rows == {"conv": {"effect": 0.05}}


def test_forget_stale_drops_only_the_stale_changes():
    stack = CommandStack(_plan())
    stack.do(ForgetStale("All traffic"))
    assert stack.plan.scenarios[2].rows == {"conv": {"baseline": 0.04}}
    assert sc.problems(stack.plan) == ()
    with pytest.raises(PlanError, match="no stale changes"):
        stack.do(ForgetStale("All traffic"))


def test_forget_stale_drops_a_method_that_no_longer_fits_its_kind():
    stack = CommandStack(_plan())
    stack.do(SetField(1, "method", "z"))  # Load time in "Bigger lift"
    stack.do(SwitchScenario(None))
    stack.do(SetField(2, "kind", "proportion"))
    stack.do(SetField(2, "baseline", 0.2))
    assert sc.problems(stack.plan, "Bigger lift")
    stack.do(ForgetStale("Bigger lift"))
    assert sc.problems(stack.plan, "Bigger lift") == ()
    assert stack.plan.scenarios[1].rows == {"conv": {"effect": 0.07}}
