"""ReorderMetrics: a permutation of the rows as one undo step (what a sort of the table does).

Undo/redo semantics follow common practice (no source): undo restores the exact previous
order, redo the sorted one; a refused command changes nothing and notifies nobody.
"""

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from fourfold.plan import Metric, Plan, PlanError, Settings, dumps
from fourfold.plan.commands import Change, ReorderMetrics


def _plan(count=4):
    return Plan(Settings(title="Invented"),
                [Metric(name=f"M{i}", baseline=0.1 + i / 100) for i in range(count)])


def _names(stack):
    return [metric.name for metric in stack.plan.metrics]


def test_reorder_applies_the_permutation_and_undo_restores_the_order(recorded):
    stack, after, before = recorded(_plan())
    start = dumps(stack.plan)
    objects = list(stack.plan.metrics)
    stack.do(ReorderMetrics([2, 0, 3, 1], text="Sort rows by Baseline"))
    assert _names(stack) == ["M2", "M0", "M3", "M1"]
    assert stack.plan.metrics == [objects[2], objects[0], objects[3], objects[1]]
    assert after == before == [Change("rows_reordered", (2, 0, 3, 1))]
    assert stack.undo_text == "Sort rows by Baseline"
    stack.undo()
    assert dumps(stack.plan) == start
    assert [id(m) for m in stack.plan.metrics] == [id(m) for m in objects]
    # undo reports the inverse permutation: row i now was row inverse[i] before the undo
    assert after[-1] == Change("rows_reordered", (1, 3, 0, 2))
    stack.redo()
    assert _names(stack) == ["M2", "M0", "M3", "M1"]


@pytest.mark.parametrize("order", [[0, 1, 2], [0, 1, 2, 2], [0, 1, 2, 4], [0, 1, 2, 3, 4],
                                   [0, 1, 2, 3.0], [True, 0, 2, 3], ["1", 0, 2, 3]])
def test_an_order_that_is_not_a_permutation_of_the_rows_is_refused(order, recorded):
    stack, after, _ = recorded(_plan())
    start = dumps(stack.plan)
    with pytest.raises(PlanError, match="order must name each of the rows 0 to 3"):
        stack.do(ReorderMetrics(order))
    assert dumps(stack.plan) == start and after == [] and not stack.can_undo


def test_the_identity_order_is_refused(recorded):
    stack, after, _ = recorded(_plan())
    with pytest.raises(PlanError, match="already in that order"):
        stack.do(ReorderMetrics(range(4)))
    assert after == [] and not stack.can_undo


def test_default_text():
    assert ReorderMetrics([1, 0]).text == "Reorder metrics"


@settings(max_examples=40, deadline=None)
@given(st.permutations(list(range(6))))
def test_any_permutation_round_trips_through_undo_and_redo(recorded, order):
    stack, after, _ = recorded(_plan(6))
    assume(list(order) != list(range(6)))
    start = dumps(stack.plan)
    stack.do(ReorderMetrics(order))
    assert _names(stack) == [f"M{row}" for row in order]
    done = dumps(stack.plan)
    stack.undo()
    assert dumps(stack.plan) == start
    stack.redo()
    assert dumps(stack.plan) == done
    # each change tells where every row came from
    first, undo, _redo = after
    names = [f"M{row}" for row in order]
    assert [names[row] for row in undo.rows] == [f"M{i}" for i in range(6)]
    assert first.rows == tuple(order)
