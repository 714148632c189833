"""Plan menu and the table's context menu through the user's path: add, duplicate, delete,
move and sort rows, import history, check by simulation — from the menu (``QAction.trigger()``)
and from their shortcuts on the focused table.

What a row action does to the plan is the project's own rule (README, "Rows"); the simulated
powers are checked against outside references in tests/simulation, here only that the dialog
the action opens stores them in the rows chosen.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from PySide6.QtWidgets import QComboBox
from user_steps import (
    answer_file_dialogs,
    cell_editor,
    click_cell,
    press,
    press_each_shortcut,
    show,
    window_at,
)

from fourfold.plan import Metric, load, sample_path
from fourfold.ui.history_dialog import HistoryDialog
from fourfold.ui.simulation_dialog import SimulationDialog

SAMPLE_HISTORY = Path(__file__).resolve().parents[2] / "samples" / "quillmoss-history.csv"


def _names(window) -> list[str]:
    return [metric.name for metric in window.document.plan.metrics]


ORIGINAL = [metric.name for metric in load(sample_path()).metrics]


@pytest.mark.triggers("add_action", "duplicate_action", "delete_action")
def test_add_duplicate_and_delete_from_the_menu(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    click_cell(qtbot, window, 1, "name")
    window.add_action.trigger()
    assert window.document.plan.metrics[2] == Metric()
    assert cell_editor(window.table) is not None  # the new row's name is being edited
    press(qtbot, "Escape")
    window.duplicate_action.trigger()
    assert _names(window)[3] == f"{Metric().name} (copy)"
    assert window.selected_rows() == [3]  # the copy alone, so Delete removes only it
    window.delete_action.trigger()
    assert window.selected_rows() == [3]  # the row that moved up into its place
    click_cell(qtbot, window, 2, "name")
    window.delete_action.trigger()
    assert _names(window) == ORIGINAL
    assert window.statusBar().currentMessage() == "Removed 1 row(s); Undo brings them back"


@pytest.mark.presses("add_action", "duplicate_action", "delete_action")
def test_add_duplicate_and_delete_from_the_keyboard(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    click_cell(qtbot, window, 0, "baseline")
    press_each_shortcut(qtbot, window.add_action)
    press(qtbot, "Escape")
    assert window.document.plan.metrics[1] == Metric()
    click_cell(qtbot, window, 0, "baseline")
    press_each_shortcut(qtbot, window.duplicate_action)
    assert _names(window)[:3] == [ORIGINAL[0], f"{ORIGINAL[0]} (copy)", Metric().name]
    press_each_shortcut(qtbot, window.delete_action)  # the copy, then the new row below it
    press_each_shortcut(qtbot, window.delete_action)
    assert _names(window) == ORIGINAL


@pytest.mark.triggers("up_action", "down_action")
@pytest.mark.presses("up_action", "down_action")
def test_move_rows_up_and_down(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    click_cell(qtbot, window, 1, "baseline")
    window.down_action.trigger()
    assert _names(window)[1:3] == [ORIGINAL[2], ORIGINAL[1]]
    window.up_action.trigger()
    assert _names(window) == ORIGINAL
    press_each_shortcut(qtbot, window.up_action)
    assert _names(window)[:2] == [ORIGINAL[1], ORIGINAL[0]]
    press_each_shortcut(qtbot, window.down_action)
    assert _names(window) == ORIGINAL
    assert window.table.currentIndex().row() == 1  # the moved row stays current


def test_alt_down_in_an_open_drop_down_opens_its_list_and_moves_no_row(make_window, qtbot):
    window = window_at(make_window, qtbot, 1, "role")
    press(qtbot, "F2")
    combo = cell_editor(window.table)
    assert isinstance(combo, QComboBox)
    press(qtbot, "Alt+Down")
    assert _names(window) == ORIGINAL
    assert combo.view().isVisible()  # Alt+Down is the key that opens a drop-down's list
    press(qtbot, "Escape", combo.view())
    press(qtbot, "Escape", combo)
    assert _names(window) == ORIGINAL and window.table.currentIndex().row() == 1


@pytest.mark.triggers("sort_action")
@pytest.mark.presses("sort_action")
def test_sort_rows_by_the_current_column(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    click_cell(qtbot, window, 0, "name")
    window.sort_action.trigger()
    assert _names(window) == sorted(ORIGINAL, key=str.lower)
    press_each_shortcut(qtbot, window.sort_action)
    assert _names(window) == sorted(ORIGINAL, key=str.lower, reverse=True)
    assert window.undo_action.text() == "&Undo Sort rows by Metric, descending"


def _import_converted(dialog, qtbot, monkeypatch, window):
    """What a user does in the history dialog: choose the file, keep one column, read, apply,
    close."""
    dialog.show()
    answer_file_dialogs(monkeypatch, open_path=SAMPLE_HISTORY)
    dialog.choose_button.click()
    for row in reversed(range(dialog.map_table.rowCount())):
        if dialog._cell_text(row, 0) != "converted":
            dialog.map_table.removeRow(row)
    dialog.read_button.click()
    qtbot.waitUntil(lambda: not dialog.reading, timeout=20_000)
    dialog.apply_button.click()
    dialog.close()
    show(qtbot, window)
    return 0


@pytest.mark.triggers("history_action")
@pytest.mark.presses("history_action")
def test_import_history_adds_the_rows_read(make_window, qtbot, monkeypatch):
    window = make_window()
    show(qtbot, window)
    monkeypatch.setattr(HistoryDialog, "exec",
                        lambda dialog: _import_converted(dialog, qtbot, monkeypatch, window))
    window.history_action.trigger()
    assert len(_names(window)) == len(ORIGINAL) + 1
    added = window.document.plan.metrics[-1]
    assert added.kind == "proportion" and 0 < added.baseline < 1
    window.undo_action.trigger()
    press_each_shortcut(qtbot, window.history_action)
    assert window.document.plan.metrics[-1] == added


def _simulate(dialog, qtbot, window):
    """Run the dialog's check with few repetitions, as a user would set, start and close it."""
    dialog.show()
    dialog.reps_box.setValue(200)
    with qtbot.waitSignal(dialog.ended, timeout=30_000):
        dialog.run_button.click()
    assert dialog.wait()
    dialog.close()
    show(qtbot, window)  # the window manager hands the focus back (offscreen Qt does not)
    return 0


@pytest.mark.triggers("simulate_action", "simulate_plan_action")
@pytest.mark.presses("simulate_action", "simulate_plan_action")
def test_check_by_simulation_stores_the_check_in_the_rows_chosen(make_window, qtbot,
                                                                  monkeypatch):
    window = make_window()
    show(qtbot, window)
    monkeypatch.setattr(SimulationDialog, "exec",
                        lambda dialog: _simulate(dialog, qtbot, window))
    click_cell(qtbot, window, 1, "baseline")
    window.simulate_action.trigger()
    checked = [metric.simulation is not None for metric in window.document.plan.metrics]
    assert checked == [row == 1 for row in range(len(ORIGINAL))]
    window.simulate_plan_action.trigger()
    assert all(metric.simulation for metric in window.document.plan.metrics)
    for _ in range(2):
        window.undo_action.trigger()
    click_cell(qtbot, window, 2, "baseline")
    press_each_shortcut(qtbot, window.simulate_action)
    checked = [metric.simulation is not None for metric in window.document.plan.metrics]
    assert checked == [row == 2 for row in range(len(ORIGINAL))]
    press_each_shortcut(qtbot, window.simulate_plan_action)
    assert all(metric.simulation for metric in window.document.plan.metrics)
