"""SetFields with appended rows: a paste past the last row is one undo step, all or nothing.

Undo/redo semantics follow common practice (no source). Allowed values are the plan's own rules
(``fourfold.plan.fields``: α in (0, 0.5), roles primary/secondary/guardrail).
"""

import pytest

from fourfold.plan import Metric, Plan, PlanError, Settings, dumps
from fourfold.plan.commands import Change, SetFields


def _plan():
    return Plan(Settings(title="Invented"), [Metric(name="A", baseline=0.2),
                                             Metric(name="B", baseline=0.3)])


def test_appended_rows_and_cell_edits_are_one_step(recorded):
    stack, after, before = recorded(_plan())
    start = dumps(stack.plan)
    edits = [(1, "baseline", 0.35), (2, "name", "C"), (3, "name", "D"), (3, "kind", "mean"),
             (3, "sd", 4.0)]
    stack.do(SetFields(edits, text="Paste 5 cells (2 new rows)",
                       append=[Metric(), Metric()]))
    metrics = stack.plan.metrics
    assert [m.name for m in metrics] == ["A", "B", "C", "D"]
    assert metrics[1].baseline == 0.35 and (metrics[3].kind, metrics[3].sd) == ("mean", 4.0)
    assert metrics[2].effect == Metric().effect  # untouched fields keep a new row's defaults
    assert after == before == [Change("rows_inserted", (2, 3), ("baseline", "name", "kind",
                                                                 "sd"))]
    done = dumps(stack.plan)
    stack.undo()
    assert dumps(stack.plan) == start
    assert after[-1] == Change("rows_removed", (2, 3), ("baseline",))
    stack.redo()
    assert dumps(stack.plan) == done
    assert stack.undo_text == "Paste 5 cells (2 new rows)"


def test_the_given_rows_are_not_changed_by_the_command(recorded):
    stack, _, _ = recorded(_plan())
    template = Metric()
    stack.do(SetFields([(2, "name", "C")], append=[template]))
    assert template.name == Metric().name and stack.plan.metrics[2] is not template


@pytest.mark.parametrize(("edits", "message"), [
    ([(2, "name", "C"), (3, "alpha", 0.7)], "row 4: alpha"),
    ([(2, "role", "boss")], "row 3: role"),
    ([(4, "name", "E")], "row must be from 0 to 3"),
])
def test_a_refused_edit_adds_no_row_and_changes_nothing(edits, message, recorded):
    stack, after, before = recorded(_plan())
    start = dumps(stack.plan)
    with pytest.raises(PlanError, match=message):
        stack.do(SetFields([(0, "baseline", 0.25), *edits], append=[Metric(), Metric()]))
    assert dumps(stack.plan) == start and after == before == [] and not stack.can_undo


def test_without_appended_rows_the_change_is_cells(recorded):
    stack, after, _ = recorded(_plan())
    stack.do(SetFields([(1, "baseline", 0.4), (0, "notes", "n")]))
    assert after == [Change("cells", (0, 1), ("baseline", "notes"))]
