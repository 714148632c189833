"""Sorting the plan table by a column: header clicks, one undo step, blanks last, the indicator.

Expected orders are worked out here from the plan's own values with Python's ``sorted`` (a
stable sort, Python 3.11 documentation, "Sorting Techniques"); that a sort keeps equal rows in
their order and puts empty cells last in both directions is common practice of spreadsheets,
no source.
"""

from __future__ import annotations

import math

import pytest
from PySide6.QtCore import QPoint, Qt

from fourfold.plan import dumps, load, sample_path
from fourfold.plan.commands import SetField
from fourfold.ui.columns import COLUMNS, column_index
from fourfold.ui.document import PlanDocument
from fourfold.ui.table_model import SORT_ROLE, PlanTableModel
from fourfold.ui.table_view import PlanTableView

ASCENDING, DESCENDING = Qt.SortOrder.AscendingOrder, Qt.SortOrder.DescendingOrder


@pytest.fixture
def view(qtbot):
    document = PlanDocument(load(sample_path()))
    widget = PlanTableView()
    qtbot.addWidget(widget)
    widget.setModel(PlanTableModel(document, widget))
    widget.resize(1200, 400)
    widget.show()
    return widget


def _names(view):
    return [metric.name for metric in view.plan_model().document.plan.metrics]


def _click_header(qtbot, view, key):
    header = view.horizontalHeader()
    column = column_index(key)
    view.scrollTo(view.model().index(0, column))
    x = header.sectionViewportPosition(column) + header.sectionSize(column) // 2
    qtbot.mouseClick(header.viewport(), Qt.MouseButton.LeftButton,
                     pos=QPoint(x, header.height() // 2))


def _indicator(view):
    header = view.horizontalHeader()
    section = header.sortIndicatorSection()
    return None if section < 0 else (COLUMNS[section].key, header.sortIndicatorOrder())


def test_header_clicks_sort_by_raw_numbers_up_then_down_in_one_undo_step(qtbot, view):
    document = view.plan_model().document
    start = dumps(document.plan)
    metrics = list(document.plan.metrics)
    # the raw baselines (a proportion of 0.031 is shown as "3.1 %", yet sorts as 0.031)
    expected = [m.name for m in sorted(metrics, key=lambda m: m.baseline)]
    _click_header(qtbot, view, "baseline")
    assert _names(view) == expected
    assert _indicator(view) == ("baseline", ASCENDING)
    assert document.stack.undo_text == "Sort rows by Baseline"
    _click_header(qtbot, view, "baseline")
    assert _names(view) == [m.name for m in sorted(metrics, key=lambda m: -m.baseline)]
    assert _indicator(view) == ("baseline", DESCENDING)
    assert document.stack.undo_text == "Sort rows by Baseline, descending"
    document.undo()
    assert _names(view) == expected
    document.undo()
    assert dumps(document.plan) == start
    assert not document.stack.can_undo


def test_the_current_row_and_selection_follow_the_sorted_rows(qtbot, view):
    model = view.plan_model()
    name = model.metric(4).name
    column = column_index("notes")
    view.setCurrentIndex(model.index(4, column))
    _click_header(qtbot, view, "baseline")
    current = view.currentIndex()
    assert current.column() == column
    assert model.metric(current.row()).name == name
    assert [index.row() for index in view.selectionModel().selectedIndexes()] == [current.row()]


def test_blank_cells_go_last_in_both_directions_and_ties_keep_their_order(qtbot, view):
    model = view.plan_model()
    metrics = list(model.document.plan.metrics)
    with_sd = [m for m in metrics if m.sd is not None]
    blank = [m.name for m in metrics if m.sd is None and m.kind != "rate"]
    rates = [m.name for m in metrics if m.sd is None and m.kind == "rate"]  # "= mean", no number
    assert with_sd and blank and rates
    trailing = [m.name for m in metrics if m.sd is None]  # stable: in their original order
    view.sort_column(column_index("sd"))
    assert _indicator(view) == ("sd", ASCENDING)
    assert _names(view) == [m.name for m in sorted(with_sd, key=lambda m: m.sd)] + trailing
    view.sort_column(column_index("sd"))
    assert _indicator(view) == ("sd", DESCENDING)
    assert _names(view) == [m.name for m in sorted(with_sd, key=lambda m: -m.sd)] + trailing


def test_computed_columns_sort_on_results_and_rows_that_cannot_compute_go_last(qtbot, view):
    model = view.plan_model()
    document = model.document
    document.apply(SetField(0, "kind", "mean"))  # a mean with no SD yet: the row shows "—"
    broken = model.metric(0).name
    column = column_index("units_control")
    view.sort_column(column)  # sorts on the result of the edit (pending recompute run first)
    assert _names(view)[-1] == broken
    units = [model.data(model.index(row, column), SORT_ROLE) for row in range(5)]
    assert units == sorted(units) and not any(math.isnan(value) for value in units)
    view.sort_column(column)
    assert _names(view)[-1] == broken
    units = [model.data(model.index(row, column), SORT_ROLE) for row in range(5)]
    assert units == sorted(units, reverse=True)


def test_choices_sort_by_the_label_shown(qtbot, view):
    model = view.plan_model()
    column = column_index("method")
    shown = {model.metric(row).name: model.data(model.index(row, column))
             for row in range(model.rowCount())}
    # an unset method shows the kind's default ("pooled", "z"): it sorts under that name,
    # not as an empty value first
    assert "pooled" in shown.values() and "t" in shown.values()
    view.sort_column(column)
    assert _names(view) == sorted(shown, key=lambda name: shown[name].casefold())


def test_the_indicator_goes_once_the_order_or_the_column_changes(qtbot, view):
    model = view.plan_model()
    document = model.document
    view.sort_column(column_index("baseline"))
    document.apply(SetField(0, "notes", "an edit elsewhere"))
    document.recompute_now()
    assert _indicator(view) == ("baseline", ASCENDING)  # the order still holds
    document.apply(SetField(0, "baseline", 0.02))  # the same order, but a new value
    document.recompute_now()
    assert _indicator(view) is None
    view.sort_column(column_index("units_total"))
    assert _indicator(view) == ("units_total", ASCENDING)
    document.apply(SetField(0, "effect", -0.01))  # page load 10 ms faster: fewer units
    document.recompute_now()
    assert _indicator(view) is None
    view.sort_column(column_index("name"))
    document.undo()  # back to the previous order
    document.recompute_now()
    assert _indicator(view) is None
    view.sort_column(column_index("name"))
    assert _indicator(view) == ("name", ASCENDING)
    view.sort_column(column_index("name"))
    assert _indicator(view) == ("name", DESCENDING)


def test_a_sort_that_changes_nothing_adds_no_undo_step(qtbot, view):
    document = view.plan_model().document
    view.sort_column(column_index("name"))
    assert document.stack.undo_text == "Sort rows by Metric"
    document.stack.mark_clean()
    with qtbot.waitSignal(document.message) as blocker:
        view.plan_model().sort(column_index("name"), ASCENDING)
    assert "already sorted by Metric" in blocker.args[0]
    document.undo()
    assert not document.stack.can_undo  # only the one real sort was recorded


def test_the_model_stays_consistent_through_sorts(qtmodeltester, view):
    model = view.plan_model()
    qtmodeltester.check(model, force_py=True)
    model.sort(column_index("baseline"), DESCENDING)
    model.document.undo()
    model.document.redo()
    model.document.recompute_now()
    assert [model.metric(row) for row in range(model.rowCount())] == \
        model.document.plan.metrics


def test_the_plan_menu_action_sorts_by_the_current_column(make_window):
    window = make_window()
    model = window.model
    window.table.setCurrentIndex(model.index(0, column_index("name")))
    assert window.sort_action in window.plan_menu.actions()
    assert window.sort_action.shortcut().toString() == "Ctrl+Shift+O"
    names = [m.name for m in window.document.plan.metrics]
    window.sort_action.trigger()
    assert [m.name for m in window.document.plan.metrics] == sorted(names, key=str.casefold)
    window.sort_action.trigger()
    assert [m.name for m in window.document.plan.metrics] == sorted(
        names, key=str.casefold, reverse=True)
    assert window.undo_action.text() == "&Undo Sort rows by Metric, descending"
