"""Pasting a block that runs past the last row or column of the plan table.

That a paste past a spreadsheet's last row extends the table, and that one paste is one undo
step, is common practice of spreadsheets, no source. The α range (0, 0.5] is the plan's own rule
(``fourfold.plan.fields``).
"""

from __future__ import annotations

import pytest

from fourfold.plan import Metric, dumps, load, sample_path
from fourfold.ui.columns import COLUMNS, column_index
from fourfold.ui.document import PlanDocument
from fourfold.ui.table_model import PlanTableModel
from fourfold.ui.table_view import PlanTableView


@pytest.fixture
def view(qtbot):
    widget = PlanTableView()
    qtbot.addWidget(widget)
    widget.setModel(PlanTableModel(PlanDocument(load(sample_path())), widget))
    return widget


def _at(view, row, key):
    view.setCurrentIndex(view.plan_model().index(row, column_index(key)))


def test_a_block_past_the_last_row_adds_rows_in_the_same_undo_step(qtbot, view):
    model = view.plan_model()
    document = model.document
    before = dumps(document.plan)
    last = model.rowCount() - 1
    _at(view, last, "name")
    block = ("Page load time (s)\tguardrail\tmean\t1.9\n"
             "Refund requests\tguardrail\tproportion\t0.8\n"
             "Reviews per order\tsecondary\trate\t0.25\n")
    with qtbot.waitSignal(view.message) as blocker:
        assert view.paste(block)
    assert blocker.args[0] == "Pasted 12 cells (2 new rows)"
    metrics = document.plan.metrics
    assert model.rowCount() == len(metrics) == last + 3
    assert [m.name for m in metrics[-3:]] == ["Page load time (s)", "Refund requests",
                                              "Reviews per order"]
    assert [m.kind for m in metrics[-2:]] == ["proportion", "rate"]
    # each line's kind is read first: a proportion's baseline is typed in percent, a rate's not
    assert [m.baseline for m in metrics[-3:]] == pytest.approx([1.9, 0.008, 0.25])
    # the other fields of the new rows are those of a row made by Plan → Add metric
    fresh = Metric()
    for metric in metrics[-2:]:
        assert (metric.effect, metric.relative, metric.solve, metric.notes) == (
            fresh.effect, fresh.relative, fresh.solve, fresh.notes)
    assert document.stack.undo_text == "Paste 12 cells (2 new rows)"
    assert view.selectionModel().isSelected(model.index(last + 2, column_index("baseline")))
    pasted = dumps(document.plan)
    document.undo()
    assert dumps(document.plan) == before and model.rowCount() == last + 1
    document.redo()
    assert dumps(document.plan) == pasted and model.rowCount() == last + 3


@pytest.mark.parametrize(("key", "text", "expected"), [
    ("name", "Renamed\tsecondary\nRefunds\tguardrail\nReviews\tboss\n",
     "Role"),                    # text the table cannot read, in the second new row
    ("alpha", "0.05\n0.04\n0.7\n", "alpha"),  # the plan refuses α = 0.7
])
def test_a_refused_cell_in_a_new_row_refuses_the_whole_paste(qtbot, view, key, text,
                                                             expected):
    model = view.plan_model()
    document = model.document
    before = dumps(document.plan)
    rows = model.rowCount()
    _at(view, rows - 1, key)
    messages = []
    view.message.connect(messages.append)
    view.problem.connect(messages.append)
    document.message.connect(messages.append)
    assert not view.paste(text)
    assert dumps(document.plan) == before and model.rowCount() == rows
    assert not document.stack.can_undo
    assert len(messages) == 1 and f"row {rows + 2}: {expected}" in messages[0]


def test_cells_right_of_the_last_column_are_dropped_and_counted(qtbot, view):
    model = view.plan_model()
    last = len(COLUMNS) - 1
    view.setCurrentIndex(model.index(0, last))
    with qtbot.waitSignal(view.message) as blocker:
        assert view.paste("first note\textra\tmore\nsecond note\textra\n")
    assert blocker.args[0] == "Pasted 2 cells; 3 cell(s) past the last column dropped"
    assert [m.notes for m in model.document.plan.metrics[:2]] == ["first note", "second note"]


def test_the_report_counts_computed_cells_apart_from_dropped_ones(qtbot, view):
    model = view.plan_model()
    view.setCurrentIndex(model.index(0, column_index("solve")))
    with qtbot.waitSignal(view.message) as blocker:
        assert view.paste("power\t12\n")
    assert blocker.args[0] == "Pasted 1 cells; 1 cell(s) on computed columns skipped"
    assert model.document.plan.metrics[0].solve == "power"
