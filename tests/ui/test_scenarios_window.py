"""Scenarios in the window, driven the way a user goes: the Scenario menu's actions, their
shortcuts, clicks on the comparison and the summary's drop-down, keys in the table. Expected
numbers come from the plan layer's own evaluation of each scenario (plan.evaluate /
plan.sensitivity, tested against re-solving in tests/plan); no outside source."""

from __future__ import annotations

import json

import pytest
from PySide6.QtCore import QPoint, Qt
from PySide6.QtWidgets import QApplication, QLineEdit

from fourfold.plan import compute, effective, load, sample_path
from fourfold.plan.sensitivity import sensitivity
from fourfold.ui.columns import column_index

ARM_B = "Without arm B"
RETURNING = "Returning visitors, ramp-up to all traffic"


def _settle(qtbot, window) -> None:
    """Wait for the recompute and the scenarios tab's refresh after it."""
    qtbot.waitUntil(lambda: not window.document.pending()
                    and not window.scenario_panel.pending())


def _shown(qtbot, make_window, **kwargs):
    window = make_window(**kwargs)
    window.resize(1400, 900)
    window.show()
    qtbot.waitExposed(window)
    window.windowHandle().requestActivate()  # shortcuts go to the active window
    qtbot.waitUntil(lambda: QApplication.activeWindow() is window)
    window.asked = []

    def ask(title, label, default, w=window):
        w.asked.append(default)
        return w.answers.pop(0) if w.answers else default

    window.answers = []
    window.ask_text = ask
    return window


def _header_click(qtbot, view, column: int) -> None:
    header = view.horizontalHeader()
    x = header.sectionViewportPosition(column) + header.sectionSize(column) // 2
    qtbot.mouseClick(header.viewport(), Qt.MouseButton.LeftButton,
                     pos=QPoint(x, header.height() // 2))


def _cell(window, row: int, key: str) -> str:
    return window.model.data(window.model.index(row, column_index(key)))


@pytest.mark.presses("scenarios_tab_action")
def test_clicking_a_scenario_in_the_comparison_shows_it_everywhere(qtbot, make_window):
    window = _shown(qtbot, make_window)
    qtbot.keyClick(window.table, Qt.Key.Key_2, Qt.KeyboardModifier.ControlModifier)
    assert window.lower_tabs.currentWidget() is window.scenario_panel
    view = window.scenario_panel.comparison
    _header_click(qtbot, view, view.column_of(ARM_B))
    _settle(qtbot, window)
    assert window.document.scenario == ARM_B
    assert ARM_B in window.windowTitle()
    assert window.summary.scenario_text() == f"Scenario: {ARM_B}"
    duration = window.summary.texts()[0]
    assert "21 days" in duration and "−14 d vs base" in duration
    assert window.settings_panel.fields["arms"].value() == 1
    expected = compute(effective(load(sample_path()), ARM_B)).rows[0].units_control
    assert _cell(window, 0, "units_control") == f"{expected:,.0f}"
    model = view.model()
    assert model.headerData(view.column_of(ARM_B), Qt.Orientation.Horizontal) == f"▶ {ARM_B}"
    # a click on a cell of another column shows that one
    column = view.column_of(None)
    qtbot.mouseClick(view.viewport(), Qt.MouseButton.LeftButton,
                     pos=view.visualRect(model.index(1, column)).center())
    _settle(qtbot, window)
    assert window.document.scenario is None and "scenario" not in window.windowTitle()


def test_an_edit_in_the_table_goes_to_the_scenario_on_show(qtbot, make_window):
    window = _shown(qtbot, make_window)
    window.answers = ["Cheaper page"]
    window.new_scenario_action.trigger()
    _settle(qtbot, window)
    assert window.document.scenario == "Cheaper page"
    assert "Cheaper page" in window.windowTitle()
    table = window.table
    table.setCurrentIndex(window.model.index(5, column_index("sd")))
    table.setFocus()
    qtbot.keyClick(table, Qt.Key.Key_Return)
    editor = next(child for child in table.viewport().findChildren(QLineEdit)
                  if child.isVisible())
    editor.setText("0.5")
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: "in Cheaper page" in window.document.stack.undo_text)
    _settle(qtbot, window)
    whole = window.document.whole
    assert whole.metrics[5].sd == 0.61  # the base is untouched
    assert whole.scenarios[-1].rows == {"page-load": {"sd": 0.5}}
    assert _cell(window, 5, "sd") == "0.5 s"  # with the row's unit
    assert window.undo_action.text() == "&Undo Set sd of Page load time (s) in Cheaper page"


@pytest.mark.triggers("new_scenario_action", "delete_scenario_action")
def test_new_delete_and_undo_through_the_actions(qtbot, make_window):
    window = _shown(qtbot, make_window)
    names = lambda: [s.name for s in window.document.whole.scenarios]  # noqa: E731
    window.new_scenario_action.trigger()
    assert window.asked == ["Scenario 5"] and names()[-1] == "Scenario 5"
    window.answers = [None]  # cancelled: nothing happens
    window.new_scenario_action.trigger()
    assert len(names()) == 5
    window.delete_scenario_action.trigger()
    _settle(qtbot, window)
    assert names() == [ARM_B, "All eligible traffic", "Accept +7 % conversion lift", RETURNING]
    assert window.document.scenario is None
    assert "Undo brings it back" in window.statusBar().currentMessage()
    assert not window.delete_scenario_action.isEnabled()  # nothing to delete on the base
    window.undo_action.trigger()
    _settle(qtbot, window)
    assert names()[-1] == "Scenario 5" and window.document.scenario == "Scenario 5"
    window.redo_action.trigger()
    assert len(names()) == 4


def test_a_taken_name_is_refused_in_the_status_line(qtbot, make_window):
    window = _shown(qtbot, make_window)
    window.answers = ["without ARM b"]
    window.new_scenario_action.trigger()
    assert "exists already" in window.statusBar().currentMessage()
    assert len(window.document.whole.scenarios) == 4 and not window.document.dirty


@pytest.mark.triggers("rename_scenario_action", "duplicate_scenario_action",
                       "apply_scenario_action")
def test_rename_duplicate_and_apply_to_base_through_the_actions(qtbot, make_window):
    window = _shown(qtbot, make_window)
    window.switch_scenario(ARM_B)
    window.answers = ["One treatment arm"]
    window.rename_scenario_action.trigger()
    assert window.document.scenario == "One treatment arm"
    window.duplicate_scenario_action.trigger()
    assert window.document.scenario == "One treatment arm (copy)"
    _settle(qtbot, window)
    window.apply_scenario_action.trigger()
    _settle(qtbot, window)
    whole = window.document.whole
    assert whole.settings.arms == 1 and window.document.scenario is None
    assert [s.name for s in whole.scenarios][0] == "One treatment arm"
    # the other scenarios keep their numbers: "All eligible traffic" still has two arms
    assert effective(whole, "All eligible traffic").settings.arms == 2
    assert window.settings_panel.fields["arms"].value() == 1


@pytest.mark.presses("next_scenario_action", "previous_scenario_action", "show_base_action")
def test_shortcuts_and_the_summary_drop_down_switch_scenarios(qtbot, make_window):
    window = _shown(qtbot, make_window)
    modifiers = Qt.KeyboardModifier.ControlModifier | Qt.KeyboardModifier.AltModifier
    qtbot.keyClick(window.table, Qt.Key.Key_PageDown, modifiers)
    assert window.document.scenario == ARM_B
    qtbot.keyClick(window.table, Qt.Key.Key_PageUp, modifiers)
    assert window.document.scenario is None
    qtbot.keyClick(window.table, Qt.Key.Key_PageUp, modifiers)  # round to the last one
    assert window.document.scenario == RETURNING
    qtbot.keyClick(window.table, Qt.Key.Key_0, modifiers)
    assert window.document.scenario is None
    choice = window.summary.scenario
    choice.setFocus()
    qtbot.keyClick(choice, Qt.Key.Key_Down)
    _settle(qtbot, window)
    assert window.document.scenario == ARM_B
    assert choice.property("active") is True


def test_adding_a_row_in_a_scenario_is_refused_where_the_user_looks(qtbot, make_window):
    window = _shown(qtbot, make_window)
    window.switch_scenario(ARM_B)
    rows = window.model.rowCount()
    window.add_action.trigger()
    assert window.model.rowCount() == rows
    assert "rows are added to the base" in window.statusBar().currentMessage()


@pytest.mark.triggers("restore_rows_action")
def test_leaving_out_a_row_in_a_scenario_and_bringing_it_back(qtbot, make_window):
    window = _shown(qtbot, make_window)
    window.switch_scenario(ARM_B)
    _settle(qtbot, window)
    window.table.setCurrentIndex(window.model.index(5, 0))
    window.delete_action.trigger()
    _settle(qtbot, window)
    rows = len(window.document.whole.metrics)
    assert window.model.rowCount() == rows - 1 and rows == len(load(sample_path()).metrics)
    assert window.document.whole.scenarios[0].omitted == ["page-load"]
    assert window.restore_rows_action.isEnabled()
    window.restore_rows_action.trigger()
    _settle(qtbot, window)
    assert window.model.rowCount() == rows and not window.restore_rows_action.isEnabled()
    window.undo_action.trigger()
    _settle(qtbot, window)
    assert window.model.rowCount() == rows - 1


@pytest.mark.triggers("overlay_action")
@pytest.mark.presses("overlay_action")
def test_the_overlay_toggle_draws_and_hides_the_other_scenarios_curves(qtbot, make_window):
    window = _shown(qtbot, make_window)
    layer = window.plots.grid.plots["effect"].layer
    qtbot.waitUntil(lambda: layer.points("others")[0].size > 0)
    curves = sum(1 for value in layer.points("others")[0] if value != value)  # nan ends
    assert curves == 4
    qtbot.keyClick(window.table, Qt.Key.Key_O, Qt.KeyboardModifier.ControlModifier
                   | Qt.KeyboardModifier.AltModifier)
    assert not window.overlay_action.isChecked()
    qtbot.waitUntil(lambda: layer.points("others")[0].size == 0)
    window.overlay_action.trigger()
    qtbot.waitUntil(lambda: layer.points("others")[0].size > 0)


@pytest.mark.triggers("scenarios_tab_action")
def test_the_bars_show_what_moves_the_scenarios_duration_and_follow_the_amount(qtbot,
                                                                               make_window):
    window = _shown(qtbot, make_window)
    window.scenarios_tab_action.trigger()
    window.switch_scenario(ARM_B)
    _settle(qtbot, window)
    panel = window.scenario_panel
    expected = sensitivity(effective(load(sample_path()), ARM_B), 0.2)
    assert panel.bars.found == expected
    assert ARM_B in panel.bars.title and "Checkout conversion" in panel.bars.title
    panel.amount.setFocus()
    qtbot.keyClick(panel.amount, Qt.Key.Key_Up)
    assert panel.bars.found.amount == 0.25
    assert panel.bars.found == sensitivity(effective(load(sample_path()), ARM_B), 0.25)
    assert window.model.setData(window.model.index(0, column_index("effect")), "6%")
    _settle(qtbot, window)
    assert panel.bars.found.days == window.document.result.duration_days  # live


def test_an_incomplete_scenario_says_so_in_the_comparison(qtbot, make_window, tmp_path):
    data = json.loads((sample_path()).read_text(encoding="utf-8"))
    data["scenarios"][1]["rows"] = {"conversion": {"effect": None}}
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    window = _shown(qtbot, make_window, plan=load(path), path=path)
    window.scenarios_tab_action.trigger()
    view = window.scenario_panel.comparison
    model = view.model()
    column = view.column_of("All eligible traffic")
    assert model.index(0, column).data() == "incomplete"
    assert model.index(1, column).data() == "incomplete"
    assert model.index(1, column).data(Qt.ItemDataRole.UserRole + 1) == ""  # no difference
    assert "Incomplete" in model.headerData(column, Qt.Orientation.Horizontal,
                                            Qt.ItemDataRole.ToolTipRole)


@pytest.mark.triggers("forget_stale_action")
def test_stale_changes_are_reported_when_the_plan_opens(qtbot, make_window, tmp_path):
    data = json.loads((sample_path()).read_text(encoding="utf-8"))
    data["scenarios"][0]["rows"] = {"gone": {"effect": 0.1}}
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    window = _shown(qtbot, make_window)
    assert window.open_path(path)
    assert "row gone, which is no longer in the plan" in window.statusBar().currentMessage()
    window.scenarios_tab_action.trigger()
    assert "row gone" in window.scenario_panel.hint.text()
    window.switch_scenario(ARM_B)
    assert window.forget_stale_action.isEnabled()
    window.forget_stale_action.trigger()
    assert window.document.stale_changes() == ()


def test_save_writes_the_scenarios_and_the_one_on_show(qtbot, make_window, tmp_path):
    window = _shown(qtbot, make_window)
    window.switch_scenario(ARM_B)
    path = tmp_path / "saved.json"
    assert window.save_to(path)
    data = json.loads(path.read_text(encoding="utf-8"))
    # Version 4: a scenario of the sample uses a reach curve and a ramp-up.
    assert data["schema_version"] == 4 and data["active"] == ARM_B
    assert len(data["scenarios"]) == 4
    assert ARM_B in window.windowTitle() and "saved.json" in window.windowTitle()


def test_export_from_the_window_reports_the_scenario_on_show(qtbot, make_window, tmp_path,
                                                             monkeypatch):
    window = _shown(qtbot, make_window)
    window.switch_scenario(ARM_B)
    target = tmp_path / "out.csv"
    monkeypatch.setattr("fourfold.ui.window_files.QFileDialog.getSaveFileName",
                        lambda *args, **kwargs: (str(target), ""))
    window.csv_action.trigger()
    text = (tmp_path / "out-settings.csv").read_text(encoding="utf-8-sig")
    assert f"scenario,{ARM_B},text" in text
    assert (tmp_path / "out-scenarios.csv").is_file()


@pytest.mark.parametrize("tab", ["plots", "scenarios"])
def test_shot_renders_a_scenario(tmp_path, tab):
    from fourfold import cli

    out = tmp_path / "shot.png"
    assert cli.main(["shot", "-o", str(out), "--scenario", ARM_B, "--tab", tab]) == 0
    assert out.stat().st_size > 10_000


def test_the_inputs_a_scenario_changes_are_marked_with_the_base_value(qtbot, make_window):
    window = _shown(qtbot, make_window)
    lift, effect = "Accept +7 % conversion lift", window.model.index(0, column_index("effect"))
    assert window.model.data(effect, Qt.ItemDataRole.BackgroundRole) is None
    window.switch_scenario(lift)
    _settle(qtbot, window)
    assert window.model.data(effect, Qt.ItemDataRole.BackgroundRole) is not None
    assert window.model.data(effect, Qt.ItemDataRole.ToolTipRole) == (
        f"Changed in scenario {lift} (base: +5.0 %)")
    other = window.model.index(0, column_index("baseline"))
    assert window.model.data(other, Qt.ItemDataRole.BackgroundRole) is None
    window.switch_scenario(ARM_B)
    arms = window.settings_panel.fields["arms"]
    assert arms.property("changed") is True
    assert arms.toolTip().endswith(f"Changed in scenario {ARM_B} (base: 2)")
    assert not window.settings_panel.fields["share"].property("changed")


def test_the_scenario_put_on_show_is_scrolled_into_the_comparisons_view(qtbot, make_window):
    window = _shown(qtbot, make_window)
    qtbot.keyClick(window.table, Qt.Key.Key_2, Qt.KeyboardModifier.ControlModifier)
    view = window.scenario_panel.comparison
    modifiers = Qt.KeyboardModifier.ControlModifier | Qt.KeyboardModifier.AltModifier
    qtbot.keyClick(window.table, Qt.Key.Key_PageUp, modifiers)  # round to the last one
    _settle(qtbot, window)
    assert window.document.scenario == RETURNING

    def visible(name) -> bool:
        left = view.columnViewportPosition(view.column_of(name))
        return left >= 0 and left + view.columnWidth(view.column_of(name)) <= (
            view.viewport().width())

    qtbot.waitUntil(lambda: visible(RETURNING))
    qtbot.keyClick(window.table, Qt.Key.Key_0, modifiers)  # back to the base
    _settle(qtbot, window)
    qtbot.waitUntil(lambda: visible(None))


def test_switching_back_to_a_scenario_redraws_its_curves_without_solving_them_again(
        qtbot, make_window, monkeypatch):
    import fourfold.plan.tradeoffs as tradeoffs_module

    calls = []
    real = tradeoffs_module.tradeoffs
    monkeypatch.setattr(tradeoffs_module, "tradeoffs",
                        lambda *args, **kwargs: calls.append(args[1]) or real(*args, **kwargs))
    window = _shown(qtbot, make_window)
    modifiers = Qt.KeyboardModifier.ControlModifier | Qt.KeyboardModifier.AltModifier
    names = [None, *(s.name for s in window.document.whole.scenarios)]

    def next_scenario():
        qtbot.keyClick(window.table, Qt.Key.Key_PageDown, modifiers)
        _settle(qtbot, window)
        qtbot.waitUntil(lambda: not window.plots._redraw_timer.isActive()
                        and window.plots.tradeoffs is not None)

    for _ in names:  # once round: each scenario's curves are solved
        next_scenario()
    solved = len(calls)
    for name in [*names[1:], names[0]]:  # and again: drawn from the kept curves
        next_scenario()
        shown = window.document.scenario
        assert shown == name
        row = window.table.currentIndex().row()
        _, units = window.plots.grid.plots["effect"].points("point")
        result = compute(effective(window.document.whole, shown))
        assert units[0] == result.rows[row].units_control  # the scenario's own numbers
    assert len(calls) == solved
