"""Typing into the plan table's cells: refused text stays for correction, messages name the
cell, the status line clears after a good edit, clicks select the whole value, and an editor
never outlives its row.

What the table must do here is the project's own rule (README, "Metric table"); the plan's
allowed ranges come from ``fourfold.plan.fields``. No outside source.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication, QComboBox, QLineEdit
from user_steps import cell_editor, click_cell, press, show, type_into_cell, window_at

from fourfold.plan import dumps
from fourfold.ui.columns import column_index


def _type_and_enter(qtbot, window, row, key, text):
    click_cell(qtbot, window, row, key)
    press(qtbot, "Return")
    editor = cell_editor(window.table)
    qtbot.keyClicks(editor, text)
    press(qtbot, "Return", editor)
    return editor


def test_refused_text_stays_in_the_editor_and_the_message_names_the_cell(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    before = dumps(window.document.plan)
    editor = _type_and_enter(qtbot, window, 1, "baseline", "2,35")
    assert cell_editor(window.table) is editor and editor.text() == "2,35"
    assert editor.selectedText() == "2,35"  # typing replaces it
    message = window.statusBar().currentMessage()
    assert message.startswith("row 2 (Revenue per visitor), Baseline: '2,35' is not a number")
    assert dumps(window.document.plan) == before
    qtbot.keyClicks(editor, "2.4")
    press(qtbot, "Return", editor)
    assert cell_editor(window.table) is None
    assert window.document.plan.metrics[1].baseline == 2.4
    assert window.statusBar().currentMessage() == ""  # the old complaint is gone


def test_a_value_the_plan_refuses_names_row_column_and_range(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    editor = _type_and_enter(qtbot, window, 0, "power", "90")
    message = window.statusBar().currentMessage()
    assert message.startswith("row 1 (Checkout conversion), Power: ")
    assert "0 < power < 1" in message and message.endswith("for 90 percent, type 90 %")
    assert cell_editor(window.table) is editor and editor.text() == "90"
    qtbot.keyClicks(editor, "90 %")
    press(qtbot, "Return", editor)
    assert window.document.plan.metrics[0].power == 0.9
    assert window.statusBar().currentMessage() == ""


def test_tab_on_refused_text_stays_too_and_escape_gives_up(make_window, qtbot):
    window = window_at(make_window, qtbot, 1, "sd")
    press(qtbot, "Return")
    editor = cell_editor(window.table)
    qtbot.keyClicks(editor, "-3")
    press(qtbot, "Tab", editor)
    assert cell_editor(window.table) is editor and editor.text() == "-3"
    assert window.statusBar().currentMessage().startswith("row 2 (Revenue per visitor), SD")
    press(qtbot, "Escape", editor)
    assert cell_editor(window.table) is None
    assert window.document.plan.metrics[1].sd == 14.8


def test_a_click_into_a_fresh_editor_keeps_the_value_selected(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    table = window.table
    index = window.model.index(1, column_index("baseline"))
    click_cell(qtbot, window, 1, "baseline")
    qtbot.mouseDClick(table.viewport(), Qt.MouseButton.LeftButton,
                      pos=table.visualRect(index).center())
    editor = cell_editor(table)
    assert isinstance(editor, QLineEdit) and editor.selectedText() == "2.35"
    qtbot.mouseClick(editor, Qt.MouseButton.LeftButton, pos=editor.rect().center())
    assert editor.selectedText() == "2.35"
    qtbot.keyClicks(editor, "3")
    press(qtbot, "Return", editor)
    assert window.document.plan.metrics[1].baseline == 3.0
    press(qtbot, "Return")  # once typed into, a click places the caret as usual
    editor = cell_editor(table)
    qtbot.keyClick(editor, Qt.Key.Key_End)
    qtbot.mouseClick(editor, Qt.MouseButton.LeftButton, pos=editor.rect().center())
    qtbot.mouseClick(editor, Qt.MouseButton.LeftButton, pos=editor.rect().topRight())
    assert editor.selectedText() == ""


def test_undo_with_a_drop_down_open_leaves_no_editor_behind(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    rows = window.model.rowCount()
    click_cell(qtbot, window, 1, "role")
    press(qtbot, "Ctrl+D")
    assert window.model.rowCount() == rows + 1
    click_cell(qtbot, window, 1, "role")
    press(qtbot, "F2")
    assert isinstance(cell_editor(window.table), QComboBox)
    press(qtbot, "Ctrl+Z")  # the duplicate goes; the drop-down closes unchanged
    assert window.model.rowCount() == rows and cell_editor(window.table) is None
    assert QApplication.focusWidget() is window.table
    press(qtbot, "Return")  # Enter edits the current cell again (no "edit: editing failed")
    assert isinstance(cell_editor(window.table), QComboBox)
    press(qtbot, "Escape")


def test_a_row_action_while_typing_keeps_the_typed_value(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    click_cell(qtbot, window, 0, "name")
    press(qtbot, "Return")
    qtbot.keyClicks(cell_editor(window.table), "Orders")
    press(qtbot, "Ctrl+Shift+N")
    metrics = window.document.plan.metrics
    assert [metrics[0].name, metrics[1].name] == ["Orders", "New metric"]
    assert window.document.stack.undo_text == "Insert metric"
    type_into_cell(qtbot, window, 1, "name", "Refunds")
    assert window.document.plan.metrics[1].name == "Refunds"
