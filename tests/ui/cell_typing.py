"""Typing into the plan table the way a user does, shared by the window tests: Enter opens the
cell's editor, each character arrives as a key event, Enter commits."""

from __future__ import annotations

from PySide6.QtCore import QEvent, Qt
from PySide6.QtGui import QKeyEvent
from PySide6.QtWidgets import QApplication, QLineEdit

from fourfold.ui.columns import column_index


def editor_of(table):
    """The table's one open text editor, or None."""
    editors = [child for child in table.viewport().findChildren(QLineEdit) if child.isVisible()]
    return editors[0] if len(editors) == 1 else None


def type_in_cell(qtbot, window, row: int, key: str, text: str, refused: bool = False) -> None:
    """Open the cell's editor with Enter, type ``text`` key by key and commit with Enter.

    Refused text stays in the editor for correction (``refused=True`` checks that it did); the
    user then gives up with Escape.

    Each character is sent as the key event a keyboard layout or input method sends for it
    (``QTest.keyClicks`` takes Latin-1 only), so full-width or Arabic-Indic digits arrive as
    typed.
    """
    table = window.table
    table.setCurrentIndex(window.model.index(row, column_index(key)))
    table.setFocus()
    qtbot.keyClick(table, Qt.Key.Key_Return)
    editor = editor_of(table)
    assert editor is not None
    editor.selectAll()
    for character in text:
        for kind in (QEvent.Type.KeyPress, QEvent.Type.KeyRelease):
            QApplication.sendEvent(editor, QKeyEvent(kind, Qt.Key.Key_unknown,
                                                     Qt.KeyboardModifier.NoModifier, character))
    assert editor.text() == text
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    if refused:
        assert editor_of(table) is editor and editor.text() == text
        qtbot.keyClick(editor, Qt.Key.Key_Escape)
    qtbot.waitUntil(lambda: editor_of(table) is None)
