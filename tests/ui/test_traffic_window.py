"""The traffic model in the window, the way a user goes: Plan → Traffic model… (its action, its
shortcut, the settings' button), the dialog's tables typed into with keys, its buttons clicked,
a curve loaded from a file, OK as one undo step (a scenario's change while one is shown); the
summary and the days flagged past a reach curve; rows that follow their history windows.
Expected numbers come from the plan layer (fourfold.plan.traffic and .windows, tested by hand
in tests/plan); no outside source."""

from __future__ import annotations

import dataclasses

import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QGuiApplication
from PySide6.QtWidgets import QApplication, QDialog, QFileDialog, QLineEdit

from fourfold.plan import Metric, Plan, Settings, compute, load, sample_path, traffic
from fourfold.ui.columns import column_index
from fourfold.ui.traffic_dialog import TrafficDialog

RETURNING = "Returning visitors, ramp-up to all traffic"
CURVE = tuple((day, 40_000.0 * day ** 0.7) for day in range(1, 29))


def _shown(qtbot, make_window, **kwargs):
    window = make_window(**kwargs)
    window.resize(1400, 900)
    window.show()
    qtbot.waitExposed(window)
    window.windowHandle().requestActivate()
    qtbot.waitUntil(lambda: QApplication.activeWindow() is window)
    return window


def _settle(qtbot, window) -> None:
    qtbot.waitUntil(lambda: not window.document.pending())


def _type(qtbot, table, row: int, column: int, text: str) -> None:
    """Type into a cell of one of the dialog's tables (F2, the text, Enter)."""
    table.setFocus()
    table.setCurrentCell(row, column)
    qtbot.keyClick(table, Qt.Key.Key_F2)
    editors = [child for child in table.viewport().findChildren(QLineEdit)
               if child.isVisible()]
    editor = editors[-1]
    editor.selectAll()
    qtbot.keyClicks(editor, text)
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    QApplication.sendPostedEvents(None, 0)  # the closed editor goes (deleteLater)


def _user(qtbot, steps):
    """``exec`` replaced by what a user does in the dialog (``steps(dialog)``), then OK."""
    seen = []

    def run(dialog):
        seen.append(dialog)
        dialog.show()
        qtbot.waitExposed(dialog)
        steps(dialog)
        dialog.buttons.button(dialog.buttons.StandardButton.Ok).click()
        return dialog.result()

    return run, seen


@pytest.mark.triggers("traffic_action")
def test_a_reach_curve_loaded_from_a_file_ramp_and_burn_in_are_one_undo_step(
        qtbot, make_window, monkeypatch, tmp_path):
    window = _shown(qtbot, make_window)
    before = dataclasses.replace(window.document.plan.settings)
    curve = tmp_path / "reach.csv"
    curve.write_text("day,units\n" + "".join(f"{d},{u:.0f}\n" for d, u in CURVE),
                     encoding="utf-8")
    monkeypatch.setattr(QFileDialog, "getOpenFileName",
                        lambda *args, **kwargs: (str(curve), ""))

    def steps(dialog):
        qtbot.mouseClick(dialog.load_curve, Qt.MouseButton.LeftButton)
        assert dialog.model_box.currentData() == "reach" and dialog.reach_table.rowCount() == 28
        qtbot.mouseClick(dialog.add_step, Qt.MouseButton.LeftButton)
        _type(qtbot, dialog.ramp_table, 0, 1, "5")
        qtbot.mouseClick(dialog.add_step, Qt.MouseButton.LeftButton)
        _type(qtbot, dialog.ramp_table, 1, 0, "4")
        _type(qtbot, dialog.ramp_table, 1, 1, "25 %")
        dialog.burn_in.setFocus()
        qtbot.keyClick(dialog.burn_in, Qt.Key.Key_Up)
        dialog.preview()
        assert "With this traffic the plan runs" in dialog.fit_text.text(), dialog.status.text()
        assert dialog.figure.curve["observed"] == 28.0

    run, seen = _user(qtbot, steps)
    monkeypatch.setattr(TrafficDialog, "exec", run)
    window.traffic_action.trigger()
    assert seen and seen[0].result() == QDialog.DialogCode.Accepted
    settings = window.document.plan.settings
    assert settings.traffic == "reach" and settings.reach_source == "reach.csv"
    assert settings.reach == tuple((d, float(round(u))) for d, u in CURVE)
    assert settings.ramp == ((1, 0.05), (4, 0.25)) and settings.burn_in == 1
    _settle(qtbot, window)
    assert window.document.result.duration_days == compute(window.document.plan).duration_days
    assert window.settings_panel.traffic_button.text().startswith("Reach curve,")
    assert not window.settings_panel.fields["daily_units"].isEnabled()
    window.undo_action.trigger()  # one step takes it all back
    assert window.document.plan.settings == before


@pytest.mark.presses("traffic_action")
def test_the_shortcut_and_the_settings_button_open_the_dialog(qtbot, make_window, monkeypatch):
    window = _shown(qtbot, make_window)
    opened = []
    monkeypatch.setattr(TrafficDialog, "exec", lambda self: opened.append(self) or 0)
    window.table.setFocus()
    qtbot.keyClick(window.table, Qt.Key.Key_T, Qt.KeyboardModifier.ControlModifier
                   | Qt.KeyboardModifier.ShiftModifier)
    assert len(opened) == 1 and opened[0].document is window.document
    qtbot.mouseClick(window.settings_panel.traffic_button, Qt.MouseButton.LeftButton)
    assert len(opened) == 2
    assert opened[1].model_box.currentData() == "constant"


def test_a_bad_cell_is_named_and_nothing_changes(qtbot, make_window, monkeypatch):
    window = _shown(qtbot, make_window)
    before = dataclasses.replace(window.document.plan.settings)

    def steps(dialog):
        dialog.model_box.setCurrentIndex(dialog.model_box.findData("reach"))
        qtbot.mouseClick(dialog.add_day, Qt.MouseButton.LeftButton)
        _type(qtbot, dialog.reach_table, 0, 1, "1200")
        qtbot.mouseClick(dialog.add_day, Qt.MouseButton.LeftButton)
        _type(qtbot, dialog.reach_table, 1, 1, "900")  # distinct units never fall

    run, seen = _user(qtbot, steps)
    monkeypatch.setattr(TrafficDialog, "exec", run)
    window.traffic_action.trigger()
    dialog = seen[0]
    assert dialog.result() != QDialog.DialogCode.Accepted
    assert "never fall" in dialog.status.text()
    assert window.document.plan.settings == before and not window.undo_action.isEnabled()


def test_paste_and_scale_a_sample_of_the_units(qtbot, make_window):
    window = _shown(qtbot, make_window)
    dialog = TrafficDialog(window.document, window)
    qtbot.addWidget(dialog)
    dialog.show()
    qtbot.waitExposed(dialog)
    QGuiApplication.clipboard().setText("1\t1000\n2\t1500\n3\t1800\n")
    qtbot.mouseClick(dialog.paste_curve, Qt.MouseButton.LeftButton)
    dialog.scale.setFocus()
    qtbot.keyClicks(dialog.scale, "20")
    qtbot.mouseClick(dialog.scale_button, Qt.MouseButton.LeftButton)
    assert dialog.values()["reach"] == ((1, 20_000.0), (2, 30_000.0), (3, 36_000.0))
    assert dialog.source.text() == "× 20"
    dialog.preview()
    assert "Not extrapolated" in dialog.fit_text.text()


def test_in_a_scenario_the_traffic_is_the_scenarios_change(qtbot, make_window, monkeypatch):
    window = _shown(qtbot, make_window)
    window.switch_scenario("All eligible traffic")

    def steps(dialog):
        dialog.burn_in.setValue(2)

    run, _ = _user(qtbot, steps)
    monkeypatch.setattr(TrafficDialog, "exec", run)
    window.traffic_action.trigger()
    whole = window.document.whole
    changed = next(s for s in whole.scenarios if s.name == "All eligible traffic").settings
    assert changed == {"share": 1.0, "burn_in": 2} and whole.settings.burn_in == 0


def test_a_duration_past_the_reach_curve_is_flagged(qtbot, make_window):
    # The sample's returning visitors on the rows' per-visit figures (not their windows).
    plan = load(sample_path())
    for fields in next(s for s in plan.scenarios if s.name == RETURNING).rows.values():
        fields.pop("windowed")
    window = _shown(qtbot, make_window, plan=plan)
    window.switch_scenario(RETURNING)
    _settle(qtbot, window)
    duration = window.summary.texts()[0]
    settings = window.document.plan.settings
    days = window.document.result.duration_days
    error = float(traffic.model(settings).fit.error(days))
    assert duration.startswith(f"Duration {days:g} days") and f"±{error * 100:.2g} %" in duration
    index = window.model.index(0, column_index("days"))
    assert "past the reach curve's 28 days" in window.model.data(index,
                                                                 Qt.ItemDataRole.ToolTipRole)


def test_rows_that_follow_their_windows_show_the_figures_used(qtbot, make_window):
    windowed = Metric(name="Spend", role="primary", kind="mean", baseline=10.0, sd=1.0,
                      effect=0.5, relative=False, windowed=True,
                      windows=({"days": 7, "baseline": 10.0, "sd": 5.0},
                               {"days": 14, "baseline": 10.0, "sd": 7.0},
                               {"days": 21, "baseline": 10.0, "sd": 8.0}))
    window = _shown(qtbot, make_window, plan=Plan(Settings(daily_units=400), [windowed]))
    column = column_index("windowed")
    assert not window.table.isColumnHidden(column)
    sd = window.model.index(0, column_index("sd"))
    assert window.model.data(sd) == "8"  # the 21-day window: the plan's duration
    assert "first 21 days" in window.model.data(sd, Qt.ItemDataRole.ToolTipRole)
    assert not window.model.setData(sd, "3")
    assert "untick 'By window'" in window.statusBar().currentMessage()
    assert window.model.setData(window.model.index(0, column), Qt.CheckState.Unchecked.value,
                                Qt.ItemDataRole.CheckStateRole)
    _settle(qtbot, window)
    assert window.model.data(sd) == "1"
    assert window.document.result.window_days is None
    assert window.table.isColumnHidden(column) is False
    window.undo_action.trigger()
    _settle(qtbot, window)
    assert window.document.result.window_days == 21.0


def test_a_plan_without_windows_hides_the_column(qtbot, make_window):
    window = _shown(qtbot, make_window, plan=load(sample_path()))
    assert window.table.isColumnHidden(column_index("windowed"))
