"""The history dialog (pytest-qt, offscreen): one undoable edit, Cancel and bad files leave the
plan unchanged. Expected figures come from the Qt-free import, which tests/history checks
against numpy and pandas; here only the dialog's wiring is under test."""

import copy
from pathlib import Path

import numpy as np
import pytest

from fourfold.history import ColumnMap, read_history
from fourfold.plan import load, sample_path
from fourfold.ui.document import PlanDocument
from fourfold.ui.history_dialog import HistoryDialog

SAMPLE = Path(__file__).resolve().parents[2] / "samples" / "quillmoss-history.csv"


@pytest.fixture
def document(qtbot):
    return PlanDocument(load(sample_path()))


@pytest.fixture
def dialog(qtbot, document):
    widget = HistoryDialog(document, path=str(SAMPLE))
    qtbot.addWidget(widget)
    yield widget
    widget.wait()


def _read(qtbot, dialog):
    dialog.start_reading()
    qtbot.waitUntil(lambda: not dialog.reading, timeout=20_000)


def _keep_only(dialog, columns):
    for row in reversed(range(dialog.map_table.rowCount())):
        if dialog._cell_text(row, 0) not in columns:
            dialog.map_table.removeRow(row)


def test_guessed_mapping_reads_and_inserts_one_undoable_block(qtbot, dialog, document):
    _keep_only(dialog, {"converted", "revenue", "page_load_s"})
    before = copy.deepcopy(document.plan)
    _read(qtbot, dialog)
    assert dialog.summary is not None and dialog.result_table.rowCount() == 3
    assert "rows" in dialog.speed_label.text()
    expected = read_history(SAMPLE, [ColumnMap("proportion", "converted"),
                                     ColumnMap("mean", "revenue", pre="pre_revenue"),
                                     ColumnMap("mean", "page_load_s", pre="pre_page_load_s")])
    dialog.apply_to_plan()
    plan = document.plan
    assert len(plan.metrics) == len(before.metrics) + 3
    added = plan.metrics[-3:]
    assert [m.name for m in added] == ["converted", "revenue", "page_load_s"]
    assert added[0].kind == "proportion" and added[0].sd is None
    assert added[0].baseline == pytest.approx(expected["converted"].mean, rel=1e-12)
    assert added[1].sd == pytest.approx(expected["revenue"].sd, rel=1e-12)
    assert added[2].rho == pytest.approx(expected["page_load_s"].rho, rel=1e-12)
    assert "history" in document.stack.undo_text.lower()
    document.undo()
    assert document.plan == before
    assert not document.stack.can_undo


def test_results_go_into_existing_rows_as_one_edit(qtbot, dialog, document):
    _keep_only(dialog, {"revenue", "page_load_s"})
    row = next(r for r in range(dialog.map_table.rowCount())
               if dialog._cell_text(r, 0) == "revenue")
    dialog.map_table.cellWidget(row, 4).setCurrentText("99.9")
    before = copy.deepcopy(document.plan)
    _read(qtbot, dialog)
    names = [m.name for m in document.plan.metrics]
    revenue_row = names.index("Revenue per visitor")
    load_row = names.index("Page load time (s)")
    dialog.set_target(0, revenue_row)
    dialog.set_target(1, load_row)
    summary = dialog.summary
    assert summary["revenue"].cap is not None
    assert dialog.result_table.item(0, 7).text() == f"{summary['revenue'].cap.capped:,}"
    dialog.apply_to_plan()
    revenue = document.plan.metrics[revenue_row]
    assert revenue.baseline == pytest.approx(summary["revenue"].mean, rel=1e-12)
    assert revenue.sd == pytest.approx(summary["revenue"].sd, rel=1e-12)
    assert revenue.rho == pytest.approx(summary["revenue"].rho, rel=1e-12)
    assert len(document.plan.metrics) == len(before.metrics)
    document.undo()
    assert document.plan == before


def test_mixed_targets_are_refused_and_change_nothing(qtbot, dialog, document):
    _keep_only(dialog, {"converted", "revenue"})
    before = copy.deepcopy(document.plan)
    _read(qtbot, dialog)
    dialog.set_target(0, 0)
    dialog.apply_to_plan()
    assert "one Undo" in dialog.status.text()
    assert document.plan == before and not document.stack.can_undo


def test_cancel_leaves_the_plan_unchanged(qtbot, tmp_path, document):
    path = tmp_path / "long.csv"
    values = np.random.default_rng(1).integers(0, 100, 700_000)
    path.write_text("spend\n" + "\n".join(map(str, values)) + "\n")
    widget = HistoryDialog(document, path=str(path))
    qtbot.addWidget(widget)
    before = copy.deepcopy(document.plan)
    widget.start_reading()
    assert widget.cancel_button.isEnabled()
    widget.cancel_reading()
    qtbot.waitUntil(lambda: not widget.reading, timeout=20_000)
    assert widget.summary is None and not widget.apply_button.isEnabled()
    assert "Cancelled" in widget.status.text()
    assert document.plan == before and not document.stack.can_undo


def test_bad_files_show_a_message_and_change_nothing(qtbot, tmp_path, document):
    widget = HistoryDialog(document)
    qtbot.addWidget(widget)
    binary = tmp_path / "photo.csv"
    binary.write_bytes(b"\x89PNG\x00\x00")
    assert not widget.open_path(str(binary))
    assert "not a CSV" in widget.status.text()

    bad = tmp_path / "bad.csv"
    bad.write_text("spend,unit\n1,a\n2,b\nmany,c\n")
    assert widget.open_path(str(bad))
    widget.map_table.setRowCount(0)
    widget.add_mapping_row(ColumnMap("mean", "spend"))
    before = copy.deepcopy(document.plan)
    _read(qtbot, widget)
    assert "'spend'" in widget.status.text() and "line 4" in widget.status.text()
    assert widget.summary is None and not widget.apply_button.isEnabled()
    assert document.plan == before


def test_ratio_needs_a_denominator(qtbot, dialog):
    dialog.map_table.setRowCount(0)
    dialog.add_mapping_row(ColumnMap("count", "items"))
    dialog.map_table.cellWidget(0, 1).setCurrentText("ratio")
    dialog.start_reading()
    assert not dialog.reading
    assert "denominator" in dialog.status.text()


def test_warehouse_query_result_fills_rows(qtbot, document):
    duckdb = pytest.importorskip("duckdb")  # DuckDB 2.0, test-only
    widget = HistoryDialog(document)
    qtbot.addWidget(widget)
    widget.source_tabs.setCurrentIndex(1)
    widget.add_mapping_row(None)
    widget.map_table.cellWidget(0, 0).setCurrentText("revenue")
    widget.map_table.cellWidget(0, 3).setCurrentText("pre_revenue")
    widget.table_edit.setText("shop.visits")
    widget.partition_edit.setText("day")
    assert widget.write_sql()
    con = duckdb.connect()
    con.execute("CREATE SCHEMA shop; CREATE TABLE shop.visits AS SELECT *, "
                f"(row_number() OVER ()) % 7 AS day FROM read_csv_auto('{SAMPLE.as_posix()}')")
    result = con.execute(widget.sql_view.toPlainText()).df()
    widget.result_edit.setPlainText(result.to_csv(index=False, sep="\t"))
    assert widget.read_button.isEnabled()
    widget.read()
    expected = read_history(SAMPLE, [ColumnMap("mean", "revenue", pre="pre_revenue")])
    got = widget.summary["revenue"]
    assert got.sd == pytest.approx(expected["revenue"].sd, rel=1e-9)
    assert got.rho == pytest.approx(expected["revenue"].rho, rel=1e-9)
    count = len(document.plan.metrics)
    widget.apply_to_plan()
    assert len(document.plan.metrics) == count + 1
    document.undo()
    assert len(document.plan.metrics) == count


def test_warehouse_paste_errors_show_in_the_status_line(qtbot, document):
    widget = HistoryDialog(document)
    qtbot.addWidget(widget)
    widget.source_tabs.setCurrentIndex(1)
    widget.add_mapping_row(None)
    widget.map_table.cellWidget(0, 0).setCurrentText("revenue")
    widget.result_edit.setPlainText("rows,m1_revenue_n\n10,9\n")
    widget.read()
    assert "m1_revenue_mean" in widget.status.text() and widget.summary is None
