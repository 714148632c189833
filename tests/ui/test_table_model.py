"""The plan table model: Qt's model rules, edits through commands, paste, signals.

Reference values come from :mod:`fourfold.engine` called directly (the window must show what the
engine computes) and from Lehr (1992), *Statistics in Medicine* 11:1099–1102 ("16 s²/d²":
coefficient 15.7 at α = 0.05 two-sided, power 0.8).
"""

from __future__ import annotations

import math

import pytest
from PySide6.QtCore import Qt

from fourfold import engine
from fourfold.plan import Metric, Plan, Settings, dumps, load, sample_path
from fourfold.plan.commands import InsertMetrics, MoveMetric, RemoveMetrics, SetField
from fourfold.ui.columns import COLUMNS, column_index
from fourfold.ui.document import PlanDocument
from fourfold.ui.table_model import SORT_ROLE, PlanTableModel
from fourfold.ui.table_view import PlanTableView


def _mean_plan(rows: int = 1) -> Plan:
    metrics = [Metric(name=f"Basket value {i + 1}", role="primary", kind="mean", baseline=40.0,
                      sd=10.0, effect=1.0, relative=False) for i in range(rows)]
    return Plan(Settings(daily_units=10_000.0, whole_weeks=False), metrics)


@pytest.fixture
def model(qtbot):
    document = PlanDocument(load(sample_path()))
    return PlanTableModel(document)


def _cell(model, row, key, role=Qt.ItemDataRole.DisplayRole):
    return model.data(model.index(row, column_index(key)), role)


def test_model_passes_qt_model_tester_through_edits_and_row_changes(qtmodeltester, model):
    qtmodeltester.check(model, force_py=True)
    document = model.document
    document.apply(InsertMetrics(1, [Metric(name="Extra"), Metric(name="Extra 2")]))
    document.apply(MoveMetric(0, 3))
    document.apply(RemoveMetrics([0, 2]))
    document.apply(SetField(0, "baseline", 0.2))
    document.recompute_now()
    document.undo()
    document.undo()
    document.undo()
    document.recompute_now()
    assert model.rowCount() == len(document.plan.metrics)
    assert [model.metric(r) for r in range(model.rowCount())] == document.plan.metrics


def test_lehr_rule_shows_in_the_units_cell(qtbot):
    # Lehr (1992): n per arm = 15.7 σ²/δ² at α = 0.05 two-sided, power 0.8; σ = 10, δ = 1.
    model = PlanTableModel(PlanDocument(_mean_plan()))
    units = _cell(model, 0, "units_control", SORT_ROLE)
    assert units / 100 == pytest.approx(15.7, abs=0.05)


def test_editing_a_baseline_recomputes_units_to_the_engines_value(qtbot):
    plan = _mean_plan()
    plan.metrics[0].relative = True
    plan.metrics[0].effect = 0.05
    document = PlanDocument(plan)
    model = PlanTableModel(document)
    assert model.setData(model.index(0, column_index("baseline")), "50")
    qtbot.waitUntil(lambda: not document.pending())
    expected = math.ceil(float(engine.sample_size("mean", 50.0, 0.05, sd=10.0, relative=True)))
    assert _cell(model, 0, "units_control", SORT_ROLE) == expected
    assert _cell(model, 0, "units_control") == f"{expected:,d}"


def test_invalid_text_is_refused_with_a_message_and_the_old_value_kept(qtbot):
    document = PlanDocument(_mean_plan())
    model = PlanTableModel(document)
    before = dumps(document.plan)
    with qtbot.waitSignal(document.message) as blocker:
        assert not model.setData(model.index(0, column_index("baseline")), "forty")
    assert "Baseline" in blocker.args[0] and "not a number" in blocker.args[0]
    with qtbot.waitSignal(document.message) as blocker:  # parsed, refused by the plan rules
        assert not model.setData(model.index(0, column_index("sd")), "-3")
    assert "sd" in blocker.args[0]
    assert dumps(document.plan) == before
    assert not document.stack.can_undo
    assert _cell(model, 0, "baseline") == "40"


def test_percent_cells_are_typed_and_shown_as_percentages(qtbot, model):
    conversion = column_index("effect")
    assert model.data(model.index(0, conversion)) == "+5.0 %"
    assert model.setData(model.index(0, conversion), "7.5")
    assert model.document.plan.metrics[0].effect == pytest.approx(0.075)
    assert model.setData(model.index(0, column_index("baseline")), "2.9 %")
    assert model.document.plan.metrics[0].baseline == pytest.approx(0.029)


def test_undo_and_redo_restore_exact_states(qtbot, model):
    document = model.document
    states = [dumps(document.plan)]
    edits = [("baseline", "3.3"), ("effect", "4"), ("name", "Conversion"), ("kind", "mean"),
             ("sd", "0.2"), ("alternative", "greater")]
    for key, text in edits:
        assert model.setData(model.index(0, column_index(key)), text)
        states.append(dumps(document.plan))
    for state in reversed(states[:-1]):
        document.undo()
        assert dumps(document.plan) == state
    for state in states[1:]:
        document.redo()
        assert dumps(document.plan) == state


def test_paste_of_a_three_by_four_block_is_one_undo_step(qtbot, model):
    view = PlanTableView()
    qtbot.addWidget(view)
    view.setModel(model)
    document = model.document
    before = dumps(document.plan)
    view.setCurrentIndex(model.index(1, column_index("baseline")))
    block = "2.5\t15\t3%\tno\n2.6\t16\t4 %\tyes\n12\t\t5\tyes\n"
    assert view.paste(block)
    metrics = document.plan.metrics
    # Rows 2-4 of the sample: a mean, a proportion (baseline typed in percent), a mean; all
    # three have relative effects, typed in percent of the baseline.
    assert [m.baseline for m in metrics[1:4]] == pytest.approx([2.5, 0.026, 12.0])
    assert [m.sd for m in metrics[1:4]] == [15.0, 16.0, None]
    assert [m.effect for m in metrics[1:4]] == pytest.approx([0.03, 0.04, 0.05])
    assert [m.relative for m in metrics[1:4]] == [False, True, True]
    assert document.stack.undo_text == "Paste 12 cells"
    document.undo()
    assert dumps(document.plan) == before


def test_paste_with_a_bad_cell_changes_nothing_and_names_it(qtbot, model):
    view = PlanTableView()
    qtbot.addWidget(view)
    view.setModel(model)
    before = dumps(model.document.plan)
    view.setCurrentIndex(model.index(0, column_index("baseline")))
    with qtbot.waitSignal(view.problem) as blocker:
        assert not view.paste("0.1\t0.2\nlots\t0.3\n")
    assert "row 2" in blocker.args[0] and "lots" in blocker.args[0]
    assert dumps(model.document.plan) == before


def test_copy_then_paste_elsewhere_reproduces_the_inputs(qtbot, model):
    view = PlanTableView()
    qtbot.addWidget(view)
    view.setModel(model)
    first, last = column_index("name"), column_index("notes")
    view.selectionModel().select(
        view._range(0, first, 0, last), view.selectionModel().SelectionFlag.ClearAndSelect)
    text = view.selection_text()
    view.selectionModel().clearSelection()
    view.setCurrentIndex(model.index(4, first))
    assert view.paste(text)
    plan = model.document.plan
    for key in ("name", "kind", "baseline", "effect", "relative", "alpha", "method", "notes"):
        assert getattr(plan.metrics[4], key) == pytest.approx(getattr(plan.metrics[0], key))


def test_a_paste_of_500_cells_recomputes_once_with_one_ranged_signal(qtbot):
    document = PlanDocument(_mean_plan(500))
    model = PlanTableModel(document)
    view = PlanTableView()
    qtbot.addWidget(view)
    view.setModel(model)
    ranges = []
    model.dataChanged.connect(lambda a, b, _roles=(): ranges.append(
        (a.row(), a.column(), b.row(), b.column())))
    view.setCurrentIndex(model.index(0, column_index("baseline")))
    assert view.paste("".join(f"{41 + i % 7}\n" for i in range(500)))
    assert ranges == []  # nothing is announced before the recompute
    qtbot.waitUntil(lambda: not document.pending())
    assert ranges == [(0, 0, 499, len(COLUMNS) - 1)]
    assert document.plan.metrics[499].baseline == 41 + 499 % 7


def test_binding_metric_follows_the_data(qtbot, model):
    document = model.document
    result = document.result
    binding = result.binding_index
    assert binding is not None
    assert model.headerData(binding, Qt.Orientation.Vertical,
                            Qt.ItemDataRole.DecorationRole) is not None
    guardrail = next(i for i, m in enumerate(document.plan.metrics)
                     if m.role == "guardrail" and i != binding and m.solve == "sample_size")
    margin = document.plan.metrics[guardrail].margin
    document.apply(SetField(guardrail, "margin", margin / 10))  # 10× closer: ~100× the units
    document.recompute_now()
    assert document.result.binding_index == guardrail
    assert model.headerData(guardrail, Qt.Orientation.Vertical,
                            Qt.ItemDataRole.DecorationRole) is not None
    assert model.headerData(binding, Qt.Orientation.Vertical,
                            Qt.ItemDataRole.DecorationRole) is None


def test_computed_cells_are_read_only_and_the_solved_cell_stands_out(qtbot, model):
    units = model.index(0, column_index("units_control"))
    power = model.index(0, column_index("power_out"))
    assert not model.flags(units) & Qt.ItemFlag.ItemIsEditable
    assert model.flags(model.index(0, column_index("baseline"))) & Qt.ItemFlag.ItemIsEditable
    assert model.data(units, Qt.ItemDataRole.FontRole).bold()
    assert model.data(power, Qt.ItemDataRole.FontRole).italic()
    assert model.data(units, Qt.ItemDataRole.BackgroundRole) != \
        model.data(power, Qt.ItemDataRole.BackgroundRole)
    assert not model.setData(units, "5")


def test_a_row_that_cannot_be_computed_shows_a_dash_with_the_reason(qtbot, model):
    model.document.apply(SetField(0, "kind", "mean"))  # a mean with no SD yet
    model.document.recompute_now()
    units = model.index(0, column_index("units_control"))
    assert model.data(units) == "—"
    reason = model.document.result.rows[0].reason
    assert reason and reason in model.data(units, Qt.ItemDataRole.ToolTipRole)
    assert math.isnan(model.data(units, SORT_ROLE))


def test_every_column_header_explains_itself(model):
    for column in range(model.columnCount()):
        tip = model.headerData(column, Qt.Orientation.Horizontal, Qt.ItemDataRole.ToolTipRole)
        assert len(tip) > 30


def test_a_fixed_runtime_moves_the_highlight_to_the_detectable_effect(qtbot, model):
    from fourfold.plan.commands import SetSetting

    document = model.document
    document.apply(SetSetting("runtime_days", 28.0))
    document.recompute_now()
    row = document.result.rows[0]
    assert row.solved == "detectable_effect"
    assert model.is_solved(0, column_index("detectable"))
    assert not model.is_solved(0, column_index("units_control"))
    shown = model.data(model.index(0, column_index("detectable")))
    assert shown == f"+{row.effect_rel * 100:.2f} %"
    assert "runtime" in model.data(model.index(0, column_index("solve")),
                                   Qt.ItemDataRole.ToolTipRole)
