"""Subscribers of the undo stack see its new state: texts, undo/redo flags and clean flag.

Undo/redo semantics follow common practice (no source): after a command its text is the one to
undo; after undo it is the one to redo; a saved state is clean again when it is reached.
"""

import pytest

from fourfold.plan import Metric, Plan, Settings
from fourfold.plan.commands import CommandStack, PlanError, RemoveMetrics, SetField


def _stack():
    plan = Plan(Settings(title="Invented"),
                [Metric(name="A", baseline=0.2), Metric(name="B", baseline=0.3)])
    stack = CommandStack(plan)
    seen = []
    stack.subscribe(lambda change: seen.append(
        (change.kind, stack.undo_text, stack.redo_text, stack.can_undo, stack.can_redo,
         stack.clean)))
    return stack, seen


def test_subscribers_read_the_state_after_do_undo_redo():
    stack, seen = _stack()
    stack.do(SetField(0, "baseline", 0.25))
    stack.undo()
    stack.redo()
    text = "Set baseline of A"
    assert seen == [
        ("cells", text, "", True, False, False),
        ("cells", "", text, False, True, True),
        ("cells", text, "", True, False, False),
    ]


def test_subscribers_read_the_state_after_a_merged_edit_and_a_reset():
    stack, seen = _stack()
    stack.do(SetField(1, "baseline", 0.31))
    stack.mark_clean()
    stack.do(SetField(1, "baseline", 0.32), merge=True)
    stack.do(SetField(1, "baseline", 0.33), merge=True)
    stack.do(RemoveMetrics([0]))
    assert [entry[3:] for entry in seen] == [(True, False, False), (True, False, False),
                                             (True, False, False), (True, False, False)]
    stack.undo()
    stack.undo()
    assert seen[-1][1:] == ("Set baseline of B", "Set baseline of B", True, True, True)
    stack.reset(Plan.empty())
    assert seen[-1] == ("reset", "", "", False, False, True)


def test_a_refused_command_notifies_nobody_and_keeps_the_history():
    stack, seen = _stack()
    stack.do(SetField(0, "baseline", 0.25))
    with pytest.raises(PlanError, match="alternative"):
        stack.do(SetField(0, "alternative", "sideways"))
    assert len(seen) == 1 and stack.undo_text == "Set baseline of A" and not stack.can_redo
