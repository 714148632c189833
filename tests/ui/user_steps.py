"""Steps a user takes in the window, for the tests that go the user's way.

Keys go to the widget that has the keyboard focus (as the keyboard sends them), cells are edited
through their editors, file dialogs are answered with a path. Helpers only; no tests here.
"""

from __future__ import annotations

import shiboken6
from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QApplication, QComboBox, QFileDialog, QLineEdit, QWidget

from fourfold.ui.columns import column_index


def show(qtbot, window) -> None:
    """Show ``window``, make it the active window and give the table the keyboard focus."""
    window.resize(1300, 860)
    window.show()
    window.activateWindow()
    qtbot.waitExposed(window)
    window.table.setFocus()
    qtbot.waitUntil(lambda: QApplication.focusWidget() is window.table)


def focused() -> QWidget:
    """The widget with the keyboard focus (the test fails if none has it)."""
    widget = QApplication.focusWidget()
    assert widget is not None, "no widget has the keyboard focus"
    return widget


def press(qtbot, keys: str | QKeySequence, widget: QWidget | None = None) -> None:
    """Press one key chord ("Ctrl+Shift+N") on ``widget`` (default: the focused widget).

    Then the modifier keys are let go, as on a keyboard: QTest's release of the chord still
    carries them, and Qt would go on believing Ctrl is held (a later click then toggles the
    selection instead of setting it).
    """
    chord = QKeySequence(keys)[0]
    target = widget or focused()
    qtbot.keyClick(target, chord.key(), chord.keyboardModifiers())
    if chord.keyboardModifiers() != Qt.KeyboardModifier.NoModifier:
        let_go = QApplication.focusWidget() or (target if shiboken6.isValid(target) else None)
        if let_go is not None:
            QTest.keyRelease(let_go, Qt.Key.Key_Control)


def press_each_shortcut(qtbot, action: QAction, after=None) -> None:
    """Press every shortcut of ``action`` on the focused widget; ``after()`` runs after each."""
    for sequence in action.shortcuts():
        press(qtbot, sequence)
        if after is not None:
            after()


def cell_editor(table) -> QLineEdit | QComboBox | None:
    """The open cell editor of the table, if any."""
    editors = [child for child in table.viewport().findChildren(QWidget)
               if isinstance(child, (QLineEdit, QComboBox)) and child.isVisible()]
    return editors[0] if len(editors) == 1 else None


def click_cell(qtbot, window, row: int, key: str) -> None:
    """Click the cell of ``row`` in the column of ``key`` (scrolled into view first)."""
    table = window.table
    index = window.model.index(row, column_index(key))
    table.scrollTo(index)
    rect = table.visualRect(index)
    qtbot.mouseClick(table.viewport(), Qt.MouseButton.LeftButton, pos=rect.center())
    assert table.currentIndex() == index


def type_into_cell(qtbot, window, row: int, key: str, text: str) -> None:
    """Click a cell, press Enter to edit it, type ``text`` over its content, press Enter."""
    click_cell(qtbot, window, row, key)
    table = window.table
    qtbot.keyClick(table, Qt.Key.Key_Return)
    editor = cell_editor(table)
    assert isinstance(editor, QLineEdit) and QApplication.focusWidget() is editor
    press(qtbot, "Ctrl+A", editor)
    qtbot.keyClicks(editor, text)
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: cell_editor(table) is None or cell_editor(table) is not editor)


def choose_in_cell(qtbot, window, row: int, key: str, shown: str) -> None:
    """Click a choice cell, Enter for its drop-down, Alt+Down for the list, then the arrow keys
    to ``shown`` and Enter."""
    click_cell(qtbot, window, row, key)
    table = window.table
    qtbot.keyClick(table, Qt.Key.Key_Return)
    combo = cell_editor(table)
    assert isinstance(combo, QComboBox)
    target = combo.findText(shown)
    assert target >= 0, f"{shown!r} is not among the choices"
    start = combo.currentIndex()
    press(qtbot, "Alt+Down", combo)
    qtbot.waitUntil(lambda: combo.view().isVisible())
    step = Qt.Key.Key_Down if target > start else Qt.Key.Key_Up
    for _ in range(abs(target - start)):
        qtbot.keyClick(combo.view(), step)
    qtbot.keyClick(combo.view(), Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: cell_editor(table) is None)


def answer_file_dialogs(monkeypatch, *, open_path=None, save_paths=()) -> list[str]:
    """Answer Open with ``open_path`` and each Save dialog with the next of ``save_paths``.

    Returns the list of the file names the Save dialogs proposed.
    """
    proposed: list[str] = []
    answers = [str(path) for path in save_paths]

    def get_save(parent, caption="", start="", filters="", *args, **kwargs):
        proposed.append(start)
        return (answers.pop(0) if answers else "", filters)

    monkeypatch.setattr(QFileDialog, "getSaveFileName", staticmethod(get_save))
    monkeypatch.setattr(QFileDialog, "getOpenFileName", staticmethod(
        lambda *args, **kwargs: (str(open_path) if open_path else "", "")))
    return proposed


def drag(qtbot, widget: QWidget, start: QPoint, end: QPoint, steps: int = 8) -> None:
    """Press the left button at ``start``, move in steps to ``end`` and release there."""
    qtbot.mousePress(widget, Qt.MouseButton.LeftButton, pos=start)
    for step in range(1, steps + 1):
        point = start + (end - start) * step / steps
        qtbot.mouseMove(widget, point)
    qtbot.mouseRelease(widget, Qt.MouseButton.LeftButton, pos=end)


def drag_effect_marker(qtbot, window, to: float) -> None:
    """Drag the effect marker of the plots with the mouse to ``to`` (in the axis's units)."""
    grid = window.plots.grid
    box = grid.plots["effect"].item.vb
    (_left, _right), (bottom, top) = box.viewRange()
    height = bottom + 0.4 * (top - bottom)

    def point(x: float) -> QPoint:
        return grid.mapFromScene(box.mapViewToScene(QPointF(x, height)))

    drag(qtbot, grid.viewport(), point(grid.handle.value()), point(to))


def window_at(make_window, qtbot, row: int, key: str, plan=None):
    """A shown window (on the sample plan by default) with the cell of ``row``, ``key`` clicked."""
    window = make_window(plan)
    show(qtbot, window)
    click_cell(qtbot, window, row, key)
    return window
