"""Edit menu through the user's path: Undo, Redo, Copy cells and Paste cells, from the menu
(``QAction.trigger()``) and from their shortcuts on the focused table.

That one paste is one undo step and that copied cells paste back to the same values is common
practice of spreadsheets, no source.
"""

from __future__ import annotations

import pytest
from PySide6.QtGui import QGuiApplication
from user_steps import click_cell, press, press_each_shortcut, show, window_at

from fourfold.plan import dumps
from fourfold.ui.columns import column_index


@pytest.mark.triggers("paste_action")
def test_edit_paste_pastes_the_clipboard(make_window, qtbot):
    window = window_at(make_window, qtbot, 1, "baseline")
    QGuiApplication.clipboard().setText("2.5\t16.0\n")
    window.paste_action.trigger()
    metric = window.document.plan.metrics[1]
    assert (metric.baseline, metric.sd) == (2.5, 16.0)
    assert window.statusBar().currentMessage() == "Pasted 2 cells"
    assert window.document.stack.undo_text == "Paste 2 cells"


@pytest.mark.presses("paste_action")
def test_ctrl_v_on_the_table_pastes_the_clipboard(make_window, qtbot):
    window = window_at(make_window, qtbot, 0, "name")
    QGuiApplication.clipboard().setText("Checkout rate\tguardrail\n")
    press_each_shortcut(qtbot, window.paste_action)
    metric = window.document.plan.metrics[0]
    assert (metric.name, metric.role) == ("Checkout rate", "guardrail")


@pytest.mark.triggers("copy_action")
@pytest.mark.presses("copy_action")
def test_copy_cells_puts_the_selection_on_the_clipboard_and_pastes_back(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    table, model = window.table, window.model
    table.selectionModel().select(
        table._range(1, column_index("baseline"), 2, column_index("effect")),
        table.selectionModel().SelectionFlag.ClearAndSelect)
    clipboard = QGuiApplication.clipboard()
    clipboard.clear()
    window.copy_action.trigger()
    copied = clipboard.text()
    assert copied == "2.35\t14.8\t+4.0 %\n11.4 %\t\t+3.0 %\n"
    clipboard.clear()
    press_each_shortcut(qtbot, window.copy_action)
    assert clipboard.text() == copied
    before = dumps(window.document.plan)
    click_cell(qtbot, window, 1, "baseline")
    window.copy_action.trigger()  # the one cell: it fills the selection it is pasted on
    table.selectionModel().select(
        table._range(0, column_index("baseline"), 2, column_index("baseline")),
        table.selectionModel().SelectionFlag.ClearAndSelect)
    press(qtbot, "Ctrl+V")
    assert [model.metric(row).baseline for row in range(3)] == [0.0235, 2.35, 0.0235]
    window.undo_action.trigger()
    assert dumps(window.document.plan) == before


def _pasted_baseline(make_window, qtbot):
    """A window whose first row's baseline was pasted as 3.3 % (one undo step)."""
    window = window_at(make_window, qtbot, 0, "baseline")
    QGuiApplication.clipboard().setText("3.3\n")
    press(qtbot, "Ctrl+V")
    return window


@pytest.mark.triggers("undo_action", "redo_action")
def test_undo_and_redo_from_the_menu(make_window, qtbot):
    window = _pasted_baseline(make_window, qtbot)
    assert window.undo_action.text() == "&Undo Paste 1 cells"
    window.undo_action.trigger()
    assert window.document.plan.metrics[0].baseline == 0.031
    assert not window.undo_action.isEnabled() and window.redo_action.isEnabled()
    window.redo_action.trigger()
    assert window.document.plan.metrics[0].baseline == 0.033


@pytest.mark.presses("undo_action", "redo_action")
def test_undo_and_redo_from_the_keyboard(make_window, qtbot):
    window = _pasted_baseline(make_window, qtbot)
    baselines = []

    def baseline():
        baselines.append(window.document.plan.metrics[0].baseline)

    # Ctrl+Z, then each of redo's shortcuts (Ctrl+Y, Ctrl+Shift+Z) after an undo
    press_each_shortcut(qtbot, window.undo_action, baseline)
    for sequence in window.redo_action.shortcuts():
        press(qtbot, sequence)
        baseline()
        press(qtbot, "Ctrl+Z")
        baseline()
    assert baselines == [0.031] + [0.033, 0.031] * len(window.redo_action.shortcuts())
    assert len(window.redo_action.shortcuts()) == 2
