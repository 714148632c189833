"""From history to the plan's traffic, the way a user goes: Plan → Import history… on the sample
history (the file chosen, Read clicked), "Use this reach curve as the plan's traffic" ticked
with a scale typed, "Rows follow the window that matches the plan's duration" ticked, Apply —
one undo step, in the base or in a scenario; and Plan → Traffic model… → Load file… on the JSON
that ``fourfold history … --json`` wrote.

The expected curve and windows are those of the real command line's JSON read by
fourfold.plan.traffic_files (tests/history checks the JSON against pandas and the durations by
hand); here the wiring of the dialogs is under test. No outside source.
"""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QDialog
from user_steps import answer_file_dialogs, show

from fourfold import cli
from fourfold.plan import compute
from fourfold.plan.traffic_files import history_reach, history_windows
from fourfold.ui.columns import column_index
from fourfold.ui.history_dialog import HistoryDialog
from fourfold.ui.traffic_dialog import TrafficDialog

SAMPLE = Path(__file__).resolve().parents[2] / "samples" / "quillmoss-history.csv"
METRICS = ["--proportion", "converted", "--mean", "revenue", "--pre", "revenue:pre_revenue"]


@pytest.fixture
def history_json(capsys):
    """What ``fourfold history SAMPLE --unit visitor --time time … --json`` prints."""
    assert cli.main(["history", str(SAMPLE), "--unit", "visitor", "--time", "time", *METRICS,
                     "--json"]) == 0
    return capsys.readouterr().out


def _click(qtbot, widget) -> None:
    assert widget.isEnabled() and widget.isVisible()
    qtbot.mouseClick(widget, Qt.MouseButton.LeftButton)


def _type(qtbot, edit, text: str) -> None:
    edit.setFocus()
    qtbot.keyClick(edit, Qt.Key.Key_A, Qt.KeyboardModifier.ControlModifier)
    qtbot.keyClicks(edit, text)


def _import(qtbot, monkeypatch, window, *, scale: str | None, follow: bool, targets=True):
    """Replace the dialog's ``exec`` by a user's steps: choose the sample, keep conversion and
    revenue, read, tick the traffic choices, send the metrics to the plan's first two rows
    (or to new rows), Apply."""
    seen: list[HistoryDialog] = []

    def run(dialog):
        seen.append(dialog)
        dialog.show()
        qtbot.waitExposed(dialog)
        answer_file_dialogs(monkeypatch, open_path=SAMPLE)
        _click(qtbot, dialog.choose_button)
        for row in reversed(range(dialog.map_table.rowCount())):
            if dialog._cell_text(row, 0) not in ("converted", "revenue"):
                dialog.map_table.removeRow(row)
        _click(qtbot, dialog.read_button)
        qtbot.waitUntil(lambda: not dialog.reading, timeout=30_000)
        assert dialog.summary is not None, dialog.status.text()
        if scale is not None:
            _click(qtbot, dialog.use_reach_box)
            assert dialog.use_reach_box.isChecked()
            _type(qtbot, dialog.reach_scale, scale)
        if follow:
            _click(qtbot, dialog.follow_box)
            assert dialog.follow_box.isChecked()
        if targets:
            for row in range(dialog.result_table.rowCount()):
                name = dialog.result_table.item(row, 0).text()
                dialog.set_target(row, 0 if name.startswith("converted") else 1)
        _click(qtbot, dialog.apply_button)
        result = dialog.result()
        dialog.close()
        return result

    monkeypatch.setattr(HistoryDialog, "exec", run)
    window.history_action.trigger()
    assert seen
    return seen[0]


@pytest.mark.triggers("history_action")
def test_the_import_sets_the_reach_curve_and_rows_that_follow_their_windows(
        qtbot, make_window, monkeypatch, history_json):
    window = make_window()
    show(qtbot, window)
    before = copy.deepcopy(window.document.whole)
    constant = window.document.result.duration_days
    dialog = _import(qtbot, monkeypatch, window, scale="59.35", follow=True)
    assert dialog.result() == QDialog.DialogCode.Accepted
    data = json.loads(history_json)
    plan = window.document.plan
    settings = plan.settings
    assert settings.traffic == "reach"
    assert settings.reach == tuple((day, units * 59.35) for day, units in
                                   history_reach(data, "sample"))
    assert settings.reach_source == ("quillmoss-history.csv, distinct units by first day "
                                     "× 59.35")
    for row, name in ((0, "converted"), (1, "revenue")):
        metric = plan.metrics[row]
        assert metric.windowed
        assert [w["days"] for w in metric.windows] == [7, 14, 21, 28]
        for got, want in zip(metric.windows, history_windows(data, name), strict=True):
            assert got == pytest.approx(want, rel=1e-12)
    assert window.settings_panel.traffic_button.text() == "Reach curve…"
    qtbot.waitUntil(lambda: not window.document.pending())
    assert not window.table.isColumnHidden(column_index("windowed"))
    result = window.document.result
    assert result.duration_days == compute(plan).duration_days != constant
    assert result.window_days == result.duration_days
    assert window.undo_action.text().endswith("and use its reach curve")
    window.undo_action.trigger()  # one step takes it all back
    assert window.document.whole == before


def test_in_a_scenario_the_import_and_its_curve_are_the_scenarios_changes(
        qtbot, make_window, monkeypatch):
    window = make_window()
    show(qtbot, window)
    window.switch_scenario("Without arm B")
    before = copy.deepcopy(window.document.whole)
    _import(qtbot, monkeypatch, window, scale="20", follow=True)
    whole = window.document.whole
    assert whole.settings == before.settings and whole.metrics == before.metrics
    changed = next(s for s in whole.scenarios if s.name == "Without arm B")
    assert changed.settings["traffic"] == "reach" and changed.settings["arms"] == 1
    assert changed.settings["reach_source"].endswith("× 20")
    first = whole.metrics[0].id
    assert changed.rows[first]["windowed"] is True and changed.rows[first]["windows"]
    window.undo_action.trigger()
    assert window.document.whole == before


def test_a_bad_scale_is_named_and_without_the_ticks_the_traffic_stays(
        qtbot, make_window, monkeypatch):
    window = make_window()
    show(qtbot, window)
    before = copy.deepcopy(window.document.whole)
    dialog = _import(qtbot, monkeypatch, window, scale="0", follow=False)
    assert dialog.result() != QDialog.DialogCode.Accepted
    assert "units × must be above 0" in dialog.status.text()
    assert window.document.whole == before
    # Unticked: the rows keep the windows (for the By window column later), the traffic and
    # the rows' own figures stay as the plan had them.
    _import(qtbot, monkeypatch, window, scale=None, follow=False, targets=False)
    plan = window.document.plan
    assert plan.settings == before.settings
    added = plan.metrics[-2:]
    assert [m.windowed for m in added] == [False, False] and all(m.windows for m in added)


@pytest.mark.triggers("traffic_action")
def test_the_traffic_dialog_loads_the_json_the_command_line_wrote(
        qtbot, make_window, monkeypatch, tmp_path, history_json):
    window = make_window()
    show(qtbot, window)
    written = tmp_path / "history.json"
    written.write_text(history_json, encoding="utf-8")
    answer_file_dialogs(monkeypatch, open_path=written)
    seen = []

    def run(dialog):
        seen.append(dialog)
        dialog.show()
        qtbot.waitExposed(dialog)
        _click(qtbot, dialog.load_curve)
        _type(qtbot, dialog.scale, "59.35")
        _click(qtbot, dialog.scale_button)
        dialog.buttons.button(dialog.buttons.StandardButton.Ok).click()
        return dialog.result()

    monkeypatch.setattr(TrafficDialog, "exec", run)
    window.traffic_action.trigger()
    assert seen[0].result() == QDialog.DialogCode.Accepted
    settings = window.document.plan.settings
    reach = history_reach(json.loads(history_json), "history.json")
    assert settings.traffic == "reach" and settings.reach_source == "history.json × 59.35"
    # The dialog's table shows whole units (a count, rounded up) and keeps what it shows.
    assert settings.reach == tuple((day, float(math.ceil(units * 59.35))) for day, units in
                                   reach)
    qtbot.waitUntil(lambda: not window.document.pending())
    assert window.document.result.duration_days == compute(window.document.plan).duration_days
