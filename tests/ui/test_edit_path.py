"""The edit path of a large plan: only the edited row is announced and the plots skip redraws
that would draw the same thing. Expected values come from a freshly built model on the same plan
(the table must show what a full recompute shows); no outside source is involved.
"""

from __future__ import annotations

import copy
import dataclasses

import pytest
from user_steps import click_cell, show, type_into_cell

from fourfold.plan import Metric, Plan, load, sample_path
from fourfold.plan.commands import SetField, SetSetting
from fourfold.plan.evaluation import compute
from fourfold.plan.fields import METRIC_FIELDS
from fourfold.ui.columns import COLUMNS, column_index
from fourfold.ui.document import PlanDocument
from fourfold.ui.plots import PlotPanel
from fourfold.ui.summary import SummaryBar
from fourfold.ui.table_model import PlanTableModel


def _big_plan(rows: int = 60) -> Plan:
    sample = load(sample_path())
    metrics = [dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}")
               for i in range(rows)]
    return Plan(sample.settings, metrics)


def _mean_row(plan: Plan, start: int) -> int:
    """The first row from ``start`` on whose sd is typed (a mean row of the sample)."""
    return next(index for index in range(start, len(plan.metrics))
                if plan.metrics[index].kind == "mean")


def _texts(model):
    return [[model.data(model.index(row, column)) for column in range(len(COLUMNS))]
            for row in range(model.rowCount())]


def _recorded(model):
    ranges = []
    model.dataChanged.connect(lambda a, b, _roles=(): ranges.append(
        (a.row(), a.column(), b.row(), b.column())))
    return ranges


def test_an_edit_announces_only_its_row_and_the_table_matches_a_full_recompute(qtbot):
    document = PlanDocument(_big_plan())
    model = PlanTableModel(document)
    _texts(model)  # fill the model's cache of cell roles
    ranges = _recorded(model)
    row = _mean_row(document.plan, 7)
    sd = document.plan.metrics[row].sd
    assert document.apply(SetField(row, "sd", sd * 1.5))
    qtbot.waitUntil(lambda: not document.pending())
    assert ranges == [(row, 0, row, len(COLUMNS) - 1)]
    fresh = PlanTableModel(PlanDocument(document.plan))
    assert _texts(model) == _texts(fresh)
    assert model.data(model.index(row, column_index("sd"))) != _texts(PlanTableModel(
        PlanDocument(_big_plan())))[row][column_index("sd")]


def test_a_setting_announces_every_row(qtbot):
    document = PlanDocument(_big_plan())
    model = PlanTableModel(document)
    ranges = _recorded(model)
    assert document.apply(SetSetting("power", 0.9))
    qtbot.waitUntil(lambda: not document.pending())
    assert ranges == [(0, 0, 59, len(COLUMNS) - 1)]
    assert _texts(model) == _texts(PlanTableModel(PlanDocument(document.plan)))


def test_the_plots_skip_an_edit_of_another_row_and_follow_their_own(qtbot, monkeypatch):
    import fourfold.plan.tradeoffs as tradeoffs_module

    calls = []
    real = tradeoffs_module.tradeoffs
    monkeypatch.setattr(tradeoffs_module, "tradeoffs",
                        lambda *args, **kwargs: calls.append(args[1]) or real(*args, **kwargs))
    panel = PlotPanel()
    qtbot.addWidget(panel)
    panel.resize(720, 640)
    panel.show()
    document = PlanDocument(_big_plan(12))

    def show():
        panel.show_row(document.plan, document.result, 1)
        qtbot.waitUntil(lambda: not panel._redraw_timer.isActive(), timeout=2000)

    show()
    assert calls == [1]
    other = _mean_row(document.plan, 2)  # a row below, not the one shown
    document.apply(SetField(other, "sd", document.plan.metrics[other].sd * 2.0))
    document.recompute_now()
    show()
    assert calls == [1]
    document.apply(SetField(1, "sd", document.plan.metrics[1].sd * 2.0))
    document.recompute_now()
    show()
    assert calls == [1, 1]
    effect = panel.grid.plots["effect"]
    _, units = effect.points("point")
    assert units[0] == compute(document.plan).rows[1].units_control


def test_after_an_edit_the_table_is_painted_before_the_plots_and_scenarios_are_redrawn(
        make_window, qtbot):
    # The recompute evaluates the scenario on show and the table is painted with it; the plots
    # and the other scenarios (for the overlays and the comparison) follow in the next turns,
    # with no further recompute and showing the same edit.
    from PySide6.QtCore import QEvent, QObject

    window = make_window()
    window.show()
    qtbot.waitExposed(window)
    window.table.setCurrentIndex(window.model.index(1, column_index("sd")))
    window.document.recompute_now()
    qtbot.waitUntil(lambda: window.plots.tradeoffs is not None)
    order = []

    class Painted(QObject):
        def eventFilter(self, obj, event):  # noqa: N802 (Qt's name)
            if event.type() == QEvent.Type.Paint and "table" not in order:
                order.append("table")
            return False

    painted = Painted()
    window.table.viewport().installEventFilter(painted)
    drawn = window.plots._redraw

    def redraw():
        order.append("plots")
        drawn()

    window.plots._redraw_timer.timeout.disconnect()
    window.plots._redraw_timer.timeout.connect(redraw)
    before = window.plots.tradeoffs
    sd = window.document.plan.metrics[1].sd * 1.5
    window.model.setData(window.model.index(1, column_index("sd")), f"{sd:g}")
    qtbot.waitUntil(lambda: window.plots.tradeoffs is not before)
    assert order[:2] == ["table", "plots"]
    assert window.document.outcomes[0].result.rows[1] is window.document.result.rows[1]
    effect = window.plots.grid.plots["effect"]
    assert effect.points("point")[1][0] == compute(window.document.plan).rows[1].units_control


def test_an_edit_of_one_row_of_20000_reads_solves_and_announces_that_row_only(qtbot,
                                                                               monkeypatch):
    # What an edit costs grows with what it changes, not with the plan: the row's key is
    # built, the row solved, the summary's facts read and the table told for that row alone.
    import fourfold.plan.evaluation as evaluation
    from fourfold.plan.summary import RowFacts

    document = PlanDocument(_big_plan(20_000))
    model = PlanTableModel(document)
    solved, keyed, read = [], [], []
    real_solve, real_key, real_read = evaluation.solve_rows, evaluation.row_inputs, RowFacts._read
    monkeypatch.setattr(evaluation, "solve_rows", lambda plan, designs, alphas, missing, *rest:
                        solved.append(list(missing)) or real_solve(plan, designs, alphas,
                                                                  missing, *rest))
    monkeypatch.setattr(evaluation, "row_inputs",
                        lambda metric: keyed.append(metric.name) or real_key(metric))
    monkeypatch.setattr(RowFacts, "_read", lambda facts, index, *rest:
                        read.append(index) or real_read(facts, index, *rest))
    ranges = _recorded(model)
    row = _mean_row(document.plan, 12_345)
    before = document.result
    assert document.apply(SetField(row, "sd", document.plan.metrics[row].sd * 1.5))
    qtbot.waitUntil(lambda: not document.pending())
    assert solved == [[row]]
    assert keyed == [document.plan.metrics[row].name]
    assert read == [row]
    assert ranges == [(row, 0, row, len(COLUMNS) - 1)]
    after = document.result
    assert [i for i, (a, b) in enumerate(zip(before.rows, after.rows, strict=True))
            if a is not b] == [row]
    fresh = compute(document.plan)
    assert after.rows == fresh.rows
    for name in ("duration_days", "total_units", "binding_index", "notes", "incomplete"):
        assert getattr(after, name) == getattr(fresh, name), name
    assert after.duration_powers == fresh.duration_powers


_READ: set[int] = set()


class _Watched(Metric):
    """A metric row that notes every read of its fields (the rows an edit looks at)."""

    def __getattribute__(self, name):
        _READ.add(id(self))
        return object.__getattribute__(self, name)


def test_typing_into_a_cell_of_a_large_plan_reads_no_row_off_screen(make_window, qtbot):
    # An edit costs what it changes: the edited row is read, keyed, solved and repainted,
    # the binding row named; no other row is looked at, not even to see that it is unchanged.
    sample = load(sample_path())
    metrics = [_Watched(**{name: getattr(sample.metrics[i % len(sample.metrics)], name)
                           for name in METRIC_FIELDS}) for i in range(3_000)]
    window = make_window(Plan(sample.settings, metrics))
    show(qtbot, window)
    row = _mean_row(window.document.plan, 20)
    click_cell(qtbot, window, row, "sd")
    qtbot.waitUntil(lambda: not window.plots._redraw_timer.isActive())
    sd = window.document.plan.metrics[row].sd
    _READ.clear()
    type_into_cell(qtbot, window, row, "sd", f"{sd * 1.5:g}")
    qtbot.waitUntil(lambda: not window.document.pending()
                    and not window.plots._redraw_timer.isActive())
    assert window.document.plan.metrics[row].sd == pytest.approx(sd * 1.5)
    read = {index for index, metric in enumerate(metrics) if id(metric) in _READ}
    table = window.table
    shown = range(table.rowAt(0), table.rowAt(table.viewport().height() - 1) + 1)
    assert read <= {row, window.document.result.binding_index, *shown}


def _row_texts(model, row: int) -> list:
    return [model.data(model.index(row, column)) for column in range(len(COLUMNS))]


def test_typing_into_a_row_beside_rows_that_follow_their_windows_shows_its_new_units(
        make_window, qtbot):
    # The sample's returning-visitors scenario: five rows follow their history windows and
    # are evaluated in rounds; "Page load time" does not, and its new sd must reach the table.
    window = make_window()
    show(qtbot, window)
    returning = next(scenario.name for scenario in window.document.whole.scenarios
                     if "reach" in scenario.settings)
    window.switch_scenario(returning)
    qtbot.waitUntil(lambda: not window.document.pending())
    plan = window.document.plan
    row = next(index for index, metric in enumerate(plan.metrics)
               if metric.kind == "mean" and not metric.windowed)
    before = window.model.row_result(row).units_control
    type_into_cell(qtbot, window, row, "sd", f"{plan.metrics[row].sd * 2:g}")
    qtbot.waitUntil(lambda: not window.document.pending())
    fresh = PlanTableModel(PlanDocument(copy.deepcopy(window.document.whole)))
    assert window.model.row_result(row).units_control > before
    assert _row_texts(window.model, row) == _row_texts(fresh, row)
    assert window.summary.texts() == SummaryBar(fresh.document).texts()


def test_an_edit_beside_rows_solved_at_the_duration_solves_only_its_row(qtbot, monkeypatch):
    # Rows without units of their own (power at the plan's duration) are solved again only
    # when the duration moves or they change, not on every edit of another row.
    import fourfold.plan.evaluation as evaluation

    plan = _big_plan(2_000)
    for index in range(2, len(plan.metrics), 7):
        plan.metrics[index] = dataclasses.replace(plan.metrics[index], solve="power", n=None)
    document = PlanDocument(plan)
    model = PlanTableModel(document)
    solved = []
    real = evaluation.solve_rows
    monkeypatch.setattr(evaluation, "solve_rows", lambda plan, designs, alphas, rows, *rest:
                        solved.append(list(rows)) or real(plan, designs, alphas, rows, *rest))
    ranges = _recorded(model)
    row = _mean_row(document.plan, 1_001)
    duration = document.result.duration_days
    assert document.apply(SetField(row, "sd", document.plan.metrics[row].sd * 1.5))
    qtbot.waitUntil(lambda: not document.pending())
    assert document.result.duration_days == duration
    assert [rows for rows in solved if rows] == [[row]]
    assert ranges == [(row, 0, row, len(COLUMNS) - 1)]
    fresh = compute(document.plan)
    assert document.result.rows == fresh.rows
    assert document.result.duration_powers == fresh.duration_powers
    last = range(2, len(plan.metrics), 7)[-1]  # a row solved at the duration, still shown so
    assert document.plan.metrics[last].solve == "power" == document.result.rows[last].solved
    assert document.result.rows[last].power > 0.5


def test_an_edit_leaves_the_notes_of_other_rows_as_they_were_written(make_window, qtbot):
    # Secondary rows that need more than the plan gives get a note each (here over 400); an
    # edit of another row (a secondary mean's sd lowered) neither writes them out again nor
    # refills the notes' tooltip.
    sample = load(sample_path())
    metrics = [dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}")
               for i in range(3_000)]
    for index, metric in enumerate(metrics):
        if metric.role == "secondary" and metric.kind == "proportion":
            metrics[index] = dataclasses.replace(metric, effect=metric.effect / 4)
    window = make_window(Plan(sample.settings, metrics))
    show(qtbot, window)
    before = window.document.result.notes
    needy = {note for note in before if "(secondary) would need" in note}
    assert len(needy) > 400
    written = []
    window.summary.notes.setToolTip = written.append
    row = next(index for index in range(20, len(metrics))
               if metrics[index].kind == "mean" and metrics[index].role == "secondary")
    units, sd = window.document.result.rows[row].units_control, metrics[row].sd
    type_into_cell(qtbot, window, row, "sd", f"{sd * 0.8:g}")
    qtbot.waitUntil(lambda: not window.document.pending())
    after = window.document.result
    assert window.document.plan.metrics[row].sd == pytest.approx(sd * 0.8)
    assert after.rows[row].units_control < units
    assert after.notes == compute(window.document.plan).notes == before
    assert all(a is b for a, b in zip(before, after.notes, strict=True) if a in needy)
    assert written == []


def test_an_edit_of_a_sorted_large_plan_reads_the_sort_keys_of_its_row_only(make_window,
                                                                              qtbot):
    # The header shows the sort while the rows hold it: after an edit only the rows the
    # recompute changed are checked, and an edit that breaks the order still clears it.
    window = make_window(_big_plan(3_000))
    show(qtbot, window)
    table, model = window.table, window.model
    table.sort_column(column_index("baseline"))
    qtbot.waitUntil(lambda: not window.document.pending())
    header = table.horizontalHeader()
    assert header.sortIndicatorSection() == column_index("baseline")
    read = []
    real = model.sort_key
    model.sort_key = lambda row, column: read.append(row) or real(row, column)
    row = _mean_row(window.document.plan, 20)
    type_into_cell(qtbot, window, row, "sd", f"{window.document.plan.metrics[row].sd * 1.5:g}")
    qtbot.waitUntil(lambda: not window.document.pending())
    assert header.sortIndicatorSection() == column_index("baseline")  # the order holds
    assert read == [row]
    type_into_cell(qtbot, window, row, "baseline", "0")  # a mean of 0 goes first: not sorted
    qtbot.waitUntil(lambda: not window.document.pending())
    assert header.sortIndicatorSection() == -1
