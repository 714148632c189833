"""The Qt-free undo stack: exact restore, precise notifications, invalid edits change nothing.

Undo/redo semantics follow common practice (no source): undo reverts the last command, a new
command clears the redo list, a saved state stays "clean" only while it is reachable.
"""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold.plan import Metric, Plan, PlanError, Settings, dumps
from fourfold.plan.commands import (
    Change,
    CommandStack,
    InsertMetrics,
    MoveMetric,
    RemoveMetrics,
    SetField,
    SetFields,
    SetSetting,
)


def _plan() -> Plan:
    return Plan(
        Settings(title="Invented"),
        [
            Metric(name="A", role="primary", kind="mean", method="t", baseline=5.0, sd=2.0),
            Metric(name="B", kind="proportion", method="arcsine", baseline=0.2),
            Metric(name="C", kind="rate", method="z", baseline=0.3, role="guardrail"),
            Metric(name="D", baseline=0.4),
        ],
    )


def _names(stack):
    return [metric.name for metric in stack.plan.metrics]


def test_set_field_do_undo_redo(recorded):
    stack, after, before = recorded(_plan())
    start = dumps(stack.plan)
    stack.do(SetField(1, "baseline", 0.25))
    changed = dumps(stack.plan)
    assert stack.plan.metrics[1].baseline == 0.25
    assert after == before == [Change("cells", (1,), ("baseline",))]
    assert stack.undo_text == "Set baseline of B" and stack.can_undo and not stack.can_redo
    stack.undo()
    assert dumps(stack.plan) == start
    assert stack.redo_text == "Set baseline of B" and stack.can_redo
    stack.redo()
    assert dumps(stack.plan) == changed
    assert len(after) == 3


def test_kind_change_clears_a_foreign_method_in_one_step(recorded):
    stack, after, _ = recorded(_plan())
    stack.do(SetField(1, "kind", "mean"))
    metric = stack.plan.metrics[1]
    assert (metric.kind, metric.method) == ("mean", None)
    assert after[-1] == Change("cells", (1,), ("kind", "method"))
    stack.undo()
    assert (stack.plan.metrics[1].kind, stack.plan.metrics[1].method) == ("proportion", "arcsine")
    stack.do(SetField(2, "kind", "mean"))
    assert stack.plan.metrics[2].method == "z"
    assert after[-1] == Change("cells", (2,), ("kind",))


def test_set_fields_is_one_step_and_names_rows_and_fields(recorded):
    stack, after, _ = recorded(_plan())
    start = dumps(stack.plan)
    stack.do(SetFields([(0, "sd", 3.0), (3, "name", "Dee"), (0, "baseline", 6.0)],
                       text="Paste"))
    assert after[-1] == Change("cells", (0, 3), ("sd", "name", "baseline"))
    assert stack.undo_text == "Paste"
    stack.undo()
    assert dumps(stack.plan) == start


def test_set_fields_checks_a_method_against_a_kind_set_earlier_in_the_batch(recorded):
    stack, _, _ = recorded(_plan())
    stack.do(SetFields([(3, "kind", "mean"), (3, "method", "t")]))
    assert (stack.plan.metrics[3].kind, stack.plan.metrics[3].method) == ("mean", "t")
    start = dumps(stack.plan)
    with pytest.raises(PlanError):
        stack.do(SetFields([(3, "kind", "rate"), (3, "method", "t")]))
    assert dumps(stack.plan) == start


def test_insert_remove_move_restore_exactly(recorded):
    stack, after, before = recorded(_plan())
    start = dumps(stack.plan)
    stack.do(InsertMetrics(1, [Metric(name="X"), Metric(name="Y")]))
    assert _names(stack) == ["A", "X", "Y", "B", "C", "D"]
    assert after[-1] == Change("rows_inserted", (1, 2))
    stack.do(RemoveMetrics([4, 0, 2]))
    assert _names(stack) == ["X", "B", "D"]
    assert after[-1] == before[-1] == Change("rows_removed", (0, 2, 4))
    assert after[-1].blocks() == ((0, 0), (2, 2), (4, 4))
    stack.do(MoveMetric(0, 2))
    assert _names(stack) == ["B", "D", "X"]
    assert after[-1] == Change("rows_moved", (0, 2))
    stack.undo()
    assert after[-1] == Change("rows_moved", (2, 0))
    stack.undo()
    assert _names(stack) == ["A", "X", "Y", "B", "C", "D"]
    assert after[-1] == Change("rows_inserted", (0, 2, 4))
    stack.undo()
    assert after[-1] == Change("rows_removed", (1, 2))
    assert dumps(stack.plan) == start
    for _ in range(3):
        stack.redo()
    assert _names(stack) == ["B", "D", "X"]


def test_insert_validates_and_normalises_rows(recorded):
    stack, after, _ = recorded(_plan())
    start = dumps(stack.plan)
    with pytest.raises(PlanError, match="method"):
        stack.do(InsertMetrics(0, [Metric(name="ok"), Metric(kind="rate", method="t")]))
    assert dumps(stack.plan) == start and after == [] and not stack.can_undo
    stack.do(InsertMetrics(4, [Metric(name="  E  ", baseline=1)]))
    assert stack.plan.metrics[4].name == "E" and type(stack.plan.metrics[4].baseline) is float


def test_settings_change_and_notification(recorded):
    stack, after, _ = recorded(_plan())
    stack.do(SetSetting("arms", 2.0))
    assert stack.plan.settings.arms == 2
    assert after[-1] == Change("settings", fields=("arms",))
    stack.undo()
    assert stack.plan.settings.arms == 1


@pytest.mark.parametrize(
    "command",
    [
        SetField(0, "alpha", 0.9),
        SetField(0, "sd", -1.0),
        SetField(9, "baseline", 1.0),
        SetField(0, "colour", "red"),
        SetField(1, "method", "t"),
        SetFields([(0, "baseline", 1.0), (1, "power", 2.0)]),
        SetSetting("alpha", None),
        SetSetting("colour", "red"),
        InsertMetrics(7, [Metric()]),
        InsertMetrics(0, []),
        RemoveMetrics([1, 1]),
        RemoveMetrics([4]),
        RemoveMetrics([]),
        MoveMetric(0, 4),
        MoveMetric(1, 1),
    ],
)
def test_invalid_commands_change_nothing_and_notify_nobody(recorded, command):
    stack, after, before = recorded(_plan())
    stack.do(SetField(0, "name", "Alpha"))
    state, count = dumps(stack.plan), len(after)
    with pytest.raises(PlanError):
        stack.do(command)
    assert dumps(stack.plan) == state
    assert len(after) == len(before) == count
    assert stack.undo_text == "Set name of A" and not stack.can_redo


def test_new_command_clears_redo_and_empty_stacks_do_nothing(recorded):
    stack, after, _ = recorded(_plan())
    stack.undo()
    stack.redo()
    assert after == [] and stack.undo_text == stack.redo_text == ""
    stack.do(SetField(0, "baseline", 7.0))
    stack.undo()
    stack.do(SetField(0, "baseline", 8.0))
    assert not stack.can_redo
    assert stack.plan.metrics[0].baseline == 8.0


def test_clean_flag_follows_the_saved_state(recorded):
    stack, _, _ = recorded(_plan())
    assert stack.clean
    stack.do(SetField(0, "baseline", 7.0))
    assert not stack.clean
    stack.mark_clean()
    assert stack.clean
    stack.undo()
    assert not stack.clean
    stack.redo()
    assert stack.clean
    stack.undo()
    stack.do(SetField(0, "baseline", 9.0))
    assert not stack.clean
    stack.undo()
    assert not stack.clean


def test_merge_makes_a_drag_one_undo_step(recorded):
    stack, _, _ = recorded(_plan())
    start = dumps(stack.plan)
    for value in (0.01, 0.02, 0.03):
        stack.do(SetField(3, "effect", value), merge=True)
    assert stack.plan.metrics[3].effect == 0.03
    stack.undo()
    assert dumps(stack.plan) == start and not stack.can_undo


def test_merged_kind_changes_restore_the_method(recorded):
    stack, _, _ = recorded(_plan())
    start = dumps(stack.plan)
    stack.do(SetField(2, "kind", "mean"), merge=True)
    stack.do(SetField(2, "kind", "proportion"), merge=True)
    assert stack.plan.metrics[2].method is None
    stack.undo()
    assert dumps(stack.plan) == start


def test_merge_stops_at_the_saved_state(recorded):
    stack, _, _ = recorded(_plan())
    stack.do(SetField(3, "effect", 0.01), merge=True)
    stack.mark_clean()
    stack.do(SetField(3, "effect", 0.02), merge=True)
    stack.undo()
    assert stack.clean and stack.plan.metrics[3].effect == 0.01


def test_reset_replaces_the_document(recorded):
    stack, after, before = recorded(_plan())
    stack.do(SetField(0, "baseline", 7.0))
    fresh = Plan.empty()
    stack.reset(fresh)
    assert stack.plan is fresh and stack.clean and not stack.can_undo and not stack.can_redo
    assert after[-1] == before[-1] == Change("reset")


def test_unsubscribe():
    stack = CommandStack(_plan())
    seen = []
    stop = stack.subscribe(seen.append)
    stack.do(SetField(0, "baseline", 7.0))
    stop()
    stack.undo()
    assert len(seen) == 1


def test_before_subscribers_see_the_old_plan():
    stack = CommandStack(_plan())
    seen = []
    stack.subscribe(lambda change: seen.append(len(stack.plan.metrics)), before=True)
    stack.do(RemoveMetrics([0, 1]))
    stack.undo()
    assert seen == [4, 2]


_EDITS = st.one_of(
    st.tuples(st.just("field"), st.integers(0, 5), st.sampled_from(
        [("baseline", 0.3), ("kind", "mean"), ("kind", "rate"), ("name", "Z"),
         ("alpha", 0.2), ("alpha", 0.9), ("role", "guardrail")])),
    st.tuples(st.just("insert"), st.integers(0, 6), st.integers(1, 2)),
    st.tuples(st.just("remove"), st.integers(0, 5), st.integers(0, 5)),
    st.tuples(st.just("move"), st.integers(0, 5), st.integers(0, 5)),
    st.tuples(st.just("setting"), st.sampled_from(["arms", "share"]), st.sampled_from([2, 0.5])),
)


def _command(edit):
    action, a, b = edit
    if action == "field":
        return SetField(a, *b)
    if action == "insert":
        return InsertMetrics(a, [Metric(name=f"N{i}") for i in range(b)])
    if action == "remove":
        return RemoveMetrics(sorted({a, b}))
    if action == "move":
        return MoveMetric(a, b)
    return SetSetting(a, b)


@settings(max_examples=40, deadline=None)
@given(st.lists(_EDITS, max_size=12))
def test_any_sequence_undoes_and_redoes_exactly(edits):
    stack = CommandStack(_plan())
    states = [dumps(stack.plan)]
    for edit in edits:
        try:
            stack.do(_command(edit))
        except PlanError:
            assert dumps(stack.plan) == states[-1]
            continue
        states.append(dumps(stack.plan))
    for state in reversed(states[:-1]):
        stack.undo()
        assert dumps(stack.plan) == state
    for state in states[1:]:
        stack.redo()
        assert dumps(stack.plan) == state



def test_rows_and_settings_together_are_one_step_or_nothing(recorded):
    from fourfold.plan.settings_commands import SetSettings, WithSettings

    stack, after, before = recorded(_plan())
    saved = dumps(stack.plan)
    together = WithSettings(InsertMetrics(4, [Metric(name="E")]),
                            SetSettings({"traffic": "reach", "reach": [[1, 500], [2, 800]]}),
                            "Import history into 1 new row and use its reach curve")
    stack.do(together)
    assert _names(stack)[-1] == "E" and stack.plan.settings.traffic == "reach"
    assert after[-1] == before[-1] == Change("rows_inserted", (4,),
                                             settings=("traffic", "reach"))
    stack.undo()
    assert dumps(stack.plan) == saved
    assert after[-1] == Change("rows_removed", (4,), settings=("traffic", "reach"))
    # Settings the plan refuses (units that fall) take the rows' edit back with them (a
    # stack without "before" subscribers applies to the plan itself, no trial copy first).
    plain = CommandStack(_plan())
    refused = WithSettings(SetField(0, "baseline", 6.0),
                           SetSettings({"reach": [[1, 500], [2, 400]]}), "Import")
    with pytest.raises(PlanError, match="never fall"):
        plain.do(refused)
    assert dumps(plain.plan) == saved and not plain.can_undo
