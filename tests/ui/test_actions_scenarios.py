"""Scenario menu and the lower tabs through the user's path: the actions that
tests/ui/test_scenarios_window.py reaches only one way (menu or shortcut) are gone through the
other here, each checked for its effect on the plan or the window.

Expected names and states follow from the bundled sample plan's four scenarios and the
actions' own documentation (README, "Scenarios"); no outside source.
"""

from __future__ import annotations

import json

import pytest
from user_steps import click_cell, press, press_each_shortcut, show

from fourfold.plan import sample_path

ARM_B, TRAFFIC = "Without arm B", "All eligible traffic"
RETURNING = "Returning visitors, ramp-up to all traffic"


def _window(make_window, qtbot, answers=()):
    window = make_window()
    show(qtbot, window)
    window.answers = list(answers)
    window.ask_text = lambda title, label, default: (window.answers.pop(0) if window.answers
                                                     else default)
    return window


def _names(window) -> list[str]:
    return [scenario.name for scenario in window.document.whole.scenarios]


def _settle(qtbot, window) -> None:
    qtbot.waitUntil(lambda: not window.document.pending())


@pytest.mark.triggers("next_scenario_action", "previous_scenario_action", "show_base_action")
def test_next_previous_and_base_from_the_menu(make_window, qtbot):
    window = _window(make_window, qtbot)
    shown = []
    for action in (window.next_scenario_action, window.next_scenario_action,
                   window.previous_scenario_action, window.show_base_action,
                   window.previous_scenario_action):
        action.trigger()
        shown.append(window.document.scenario)
    assert shown == [ARM_B, TRAFFIC, ARM_B, None, RETURNING]
    assert RETURNING in window.windowTitle()


@pytest.mark.presses("new_scenario_action", "duplicate_scenario_action",
                     "rename_scenario_action", "apply_scenario_action",
                     "delete_scenario_action")
def test_scenario_shortcuts_make_rename_apply_and_delete(make_window, qtbot):
    window = _window(make_window, qtbot, answers=["Lean", "Leaner"])
    press_each_shortcut(qtbot, window.new_scenario_action)
    assert _names(window)[-1] == "Lean" and window.document.scenario == "Lean"
    press_each_shortcut(qtbot, window.duplicate_scenario_action)
    assert window.document.scenario == "Lean (copy)"
    press_each_shortcut(qtbot, window.rename_scenario_action)
    assert _names(window)[-1] == "Leaner"
    press_each_shortcut(qtbot, window.delete_scenario_action)
    _settle(qtbot, window)
    assert "Leaner" not in _names(window) and window.document.scenario is None
    window.switch_scenario(ARM_B)
    _settle(qtbot, window)
    press_each_shortcut(qtbot, window.apply_scenario_action)
    _settle(qtbot, window)
    assert window.document.whole.settings.arms == 1 and window.document.scenario is None


@pytest.mark.presses("restore_rows_action", "forget_stale_action")
def test_bring_back_rows_and_forget_stale_changes_from_the_keyboard(make_window, qtbot,
                                                                      tmp_path):
    data = json.loads(sample_path().read_text(encoding="utf-8"))
    data["scenarios"][0]["rows"]["gone"] = {"effect": 0.1}  # a change of a row since removed
    path = tmp_path / "stale.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    window = _window(make_window, qtbot)
    assert window.open_path(path)
    window.switch_scenario(ARM_B)
    _settle(qtbot, window)
    rows = window.model.rowCount()
    click_cell(qtbot, window, rows - 2, "name")
    press(qtbot, "Ctrl+Del")  # in a scenario a row is left out, not deleted
    _settle(qtbot, window)
    assert window.model.rowCount() == rows - 1
    press_each_shortcut(qtbot, window.restore_rows_action)
    _settle(qtbot, window)
    assert window.model.rowCount() == rows
    assert window.document.whole.scenarios[0].omitted == []
    assert window.document.stale_changes() != ()
    press_each_shortcut(qtbot, window.forget_stale_action)
    assert window.document.stale_changes() == ()
    assert "gone" not in window.document.whole.scenarios[0].rows


@pytest.mark.triggers("plots_tab_action")
@pytest.mark.presses("plots_tab_action", "scenarios_tab_action")
def test_the_tab_actions_switch_the_lower_pane(make_window, qtbot):
    window = _window(make_window, qtbot)
    press_each_shortcut(qtbot, window.scenarios_tab_action)
    assert window.lower_tabs.currentWidget() is window.scenario_panel
    window.plots_tab_action.trigger()
    assert window.lower_tabs.currentIndex() == 0
    window.scenarios_tab_action.trigger()
    press_each_shortcut(qtbot, window.plots_tab_action)
    assert window.lower_tabs.currentIndex() == 0 and window.plots.isVisible()
