"""The window with ratio and quantile rows, units, 'better when', Dunnett and the √k split
(pytest-qt, offscreen), driven through the table's model, the settings panel's drop-downs and
the history dialog, as a user's edits arrive. The figures themselves are checked in
tests/engine and tests/plan against outside sources; here the wiring is under test."""

from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import Qt

from fourfold.history import ColumnMap, read_history
from fourfold.plan import Metric, Plan, Settings, load, sample_path
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.evaluation import compute
from fourfold.plan.kinds import unit_sd
from fourfold.ui.columns import COLUMNS, column_index
from fourfold.ui.document import PlanDocument
from fourfold.ui.history_dialog import HistoryDialog

TOOLTIP = Qt.ItemDataRole.ToolTipRole
SAMPLE = Path(__file__).resolve().parents[2] / "samples" / "quillmoss-history.csv"


def _text(window, row, key):
    return window.model.data(window.model.index(row, column_index(key)))


def _set(window, row, key, value):
    ok = window.model.setData(window.model.index(row, column_index(key)), value)
    window.document.recompute_now()
    return ok


def _row(plan, kind):
    return next(i for i, metric in enumerate(plan.metrics) if metric.kind == kind)


def test_kind_columns_follow_the_rows_and_a_derived_sd_is_shown_not_typed(make_window):
    window = make_window(Plan(Settings(), [Metric(name="Spend", kind="mean", baseline=10.0,
                                                  sd=5.0)]))
    ratio_columns = [column_index(c.key) for c in COLUMNS if c.kind == "ratio"]
    assert all(window.table.isColumnHidden(i) for i in ratio_columns)
    assert _set(window, 0, "kind", "ratio")
    assert not any(window.table.isColumnHidden(i) for i in ratio_columns)
    tip = window.model.data(window.model.index(0, column_index("units_total")), TOOLTIP)
    assert "denominator" in tip  # why the row is not computed
    for key, text in (("denominator", "0.034"), ("numerator_sd", "0.61"),
                      ("denominator_sd", "0.19"), ("correlation", "0.8")):
        assert _set(window, 0, key, text)
    metric = window.document.plan.metrics[0]
    assert window.document.result.rows[0].reason == ""
    assert _text(window, 0, "sd") == f"{unit_sd(metric):.4g}"
    messages = []
    window.document.message.connect(messages.append)
    assert not _set(window, 0, "sd", "3")
    assert "derived from its own inputs" in messages[-1]
    window.document.undo()  # the last edit (correlation) …
    window.document.recompute_now()
    assert window.document.plan.metrics[0].correlation is None


def test_units_show_beside_numbers_and_typed_units_are_read(make_window):
    window = make_window()
    plan = window.document.plan
    row = _row(plan, "quantile")
    assert _text(window, row, "baseline") == "2.9 s"
    assert _text(window, row, "margin") == "+0.05 s"
    assert _set(window, row, "baseline", "3.1 s")
    assert plan.metrics[row].baseline == 3.1
    assert window.model.data(window.model.index(row, column_index("baseline")),
                             Qt.ItemDataRole.EditRole) == "3.1"
    assert _set(window, row, "unit", "ms")
    assert _text(window, row, "baseline") == "3.1 ms"


def test_better_when_sets_a_guardrails_test_in_one_undo_step(make_window):
    window = make_window()
    plan = window.document.plan
    row = _row(plan, "quantile")
    assert (plan.metrics[row].alternative, plan.metrics[row].margin) == ("less", 0.05)
    assert _set(window, row, "better", "higher")
    assert (plan.metrics[row].alternative, plan.metrics[row].margin) == ("greater", -0.05)
    tip = window.model.data(window.model.index(row, column_index("better")), TOOLTIP)
    assert tip == "This guardrail must not get worse (lower) by more than 0.05 s"
    window.undo_action.trigger()
    window.document.recompute_now()
    assert (plan.metrics[row].better, plan.metrics[row].alternative) == ("lower", "less")


def test_dunnett_and_the_sqrt_k_split_from_the_settings_panel(qtbot, make_window):
    window = make_window()
    panel = window.settings_panel
    correction = panel.fields["correction"]
    correction.setCurrentIndex(correction.findData("bonferroni"))
    correction.activated.emit(correction.currentIndex())
    window.document.recompute_now()
    bonferroni = window.document.result.total_units
    correction.setCurrentIndex(correction.findData("dunnett"))
    correction.activated.emit(correction.currentIndex())
    window.document.recompute_now()
    assert window.document.plan.settings.correction == "dunnett"
    assert window.document.result.total_units < bonferroni
    assert _text(window, 0, "alpha_out") == "0.027"  # 2·(1 − Φ(2.21)): Dunnett 1964, k = 2

    split = panel.fields["allocation"]
    split.setCurrentIndex(split.findData("sqrt-k"))
    split.activated.emit(split.currentIndex())
    window.document.recompute_now()
    settings = window.document.plan.settings
    assert settings.allocation == "sqrt-k" and settings.ratio == 1.0
    assert not panel.fields["ratio"].isEnabled()
    assert panel.fields["ratio"].text() == "0.7071"
    row = window.document.result.rows[0]
    assert row.units_treatment == np.ceil(row.units_control * treatment_ratio(settings) - 1e-9)
    assert "fewer units" in window.summary.texts()[1]
    window.undo_action.trigger()
    window.document.recompute_now()
    assert panel.fields["ratio"].isEnabled() and "fewer" not in window.summary.texts()[1]


def test_history_dialog_reads_a_quantile_and_a_ratio_into_new_rows(qtbot):
    document = PlanDocument(load(sample_path()))
    dialog = HistoryDialog(document, path=str(SAMPLE))
    qtbot.addWidget(dialog)
    while dialog.map_table.rowCount():
        dialog.map_table.removeRow(0)
    dialog.add_mapping_row(ColumnMap("quantile", "page_load_s", level=0.95))
    dialog.add_mapping_row(ColumnMap("ratio", "items", denominator="orders"))
    assert dialog.mapping()[0].level == 0.95
    dialog.start_reading()
    qtbot.waitUntil(lambda: not dialog.reading, timeout=20_000)
    expected = read_history(SAMPLE, [ColumnMap("quantile", "page_load_s", level=0.95),
                                     ColumnMap("ratio", "items", denominator="orders")])
    before = len(document.plan.metrics)
    dialog.apply_to_plan()
    dialog.wait()
    p95, items = document.plan.metrics[before:]
    assert (p95.kind, p95.quantile_level) == ("quantile", 0.95)
    assert p95.density == pytest.approx(expected.metrics[0].parts["density"], rel=1e-12)
    assert items.kind == "ratio" and unit_sd(items) == pytest.approx(expected.metrics[1].sd)
    result = compute(document.plan)
    assert result.rows[before].reason == "" and result.rows[before + 1].reason == ""
