"""Cell editors of the plan table: a line edit for numbers and text, a drop-down for choices.

Numbers are read by the model (:meth:`PlanTableModel.parse`), so a refused value never reaches
the plan: the status line says why, naming the row and the column. Enter or Tab on refused text
keeps the editor open with the text selected, for correction; Enter on accepted text closes the
editor on the same cell (the plots stay on its row), Tab moves to the next cell. Check boxes
(``relative``) are toggled in place by the view and need no editor.
"""

from __future__ import annotations

import shiboken6
from PySide6.QtCore import QEvent, QPersistentModelIndex, Qt
from PySide6.QtWidgets import QComboBox, QLineEdit, QStyledItemDelegate

from fourfold.ui.columns import CHOICE, COLUMNS, NUMBER
from fourfold.ui.table_model import CHOICES_ROLE

_SUBMIT_KEYS = {Qt.Key.Key_Return: QStyledItemDelegate.EndEditHint.NoHint,
                Qt.Key.Key_Enter: QStyledItemDelegate.EndEditHint.NoHint,
                Qt.Key.Key_Tab: QStyledItemDelegate.EndEditHint.EditNextItem,
                Qt.Key.Key_Backtab: QStyledItemDelegate.EndEditHint.EditPreviousItem}


class CellEditor(QLineEdit):
    """A cell's line edit: its text is all selected when it opens, and the first click into it
    keeps it so (typing replaces the value, however the editor was opened); later clicks place
    the caret."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.fresh = True

    def select_for_typing(self) -> None:
        """Select the whole text, and keep it selected through the next click."""
        self.selectAll()
        self.fresh = True

    def mousePressEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        if self.fresh and event.button() == Qt.MouseButton.LeftButton:
            self.fresh = False
            self.selectAll()
            event.accept()
            return
        super().mousePressEvent(event)

    def mouseReleaseEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        if self.hasSelectedText() and self.selectedText() == self.text():
            event.accept()  # the release of the click that selected everything
            return
        super().mouseReleaseEvent(event)

    def keyPressEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        self.fresh = False
        super().keyPressEvent(event)


class ChoiceEditor(QComboBox):
    """A cell's drop-down. Alt+Down and Alt+Up are its own keys (Alt+Down opens the list), not
    the window's Move row down/up."""

    def event(self, event) -> bool:
        if (event.type() == QEvent.Type.ShortcutOverride
                and event.modifiers() == Qt.KeyboardModifier.AltModifier
                and event.key() in (Qt.Key.Key_Down, Qt.Key.Key_Up)):
            event.accept()
            return True
        return super().event(event)


class PlanDelegate(QStyledItemDelegate):
    """Editors for the plan table, chosen from the column's editor type."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self._editor = None
        self._index = QPersistentModelIndex()

    def createEditor(self, parent, option, index):  # noqa: N802 (Qt's name)
        column = COLUMNS[index.column()]
        if column.editor == CHOICE:
            editor = ChoiceEditor(parent)
            for shown, value in index.data(CHOICES_ROLE) or []:
                editor.addItem(shown, value)
            editor.activated.connect(lambda _=0, combo=editor: self._commit(combo))
        else:
            editor = CellEditor(parent)
            editor.setFrame(False)
            if column.editor == NUMBER:
                editor.setAlignment(Qt.AlignmentFlag.AlignRight)
                editor.setPlaceholderText("empty: not set" if column.optional else "")
        self._editor, self._index = editor, QPersistentModelIndex(index)
        return editor

    def open_editor(self):
        """The editor open in the table, if any (with the index it edits)."""
        editor = self._editor
        if editor is None or not shiboken6.isValid(editor) or not editor.isVisible() \
                or not self._index.isValid():
            return None, None
        return editor, self._index

    def _commit(self, editor) -> None:
        self.commitData.emit(editor)
        self.closeEditor.emit(editor, QStyledItemDelegate.EndEditHint.NoHint)

    def submit(self, editor) -> bool:
        """Put the editor's value into the plan; False (and the editor keeps its text, all
        selected) when the plan refuses it."""
        if editor is not self._editor or not self._index.isValid():
            return True
        model = self._index.model()
        index = model.index(self._index.row(), self._index.column())
        if isinstance(editor, QComboBox):
            self.setModelData(editor, model, index)
            return True
        if editor.text() == (index.data(Qt.ItemDataRole.EditRole) or ""):
            return True
        if model.setData(index, editor.text()):
            return True
        editor.select_for_typing()
        return False

    def eventFilter(self, editor, event) -> bool:  # noqa: N802 (Qt's name)
        if (event.type() == QEvent.Type.KeyPress and isinstance(editor, ChoiceEditor)
                and event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter)):
            # taken here: passed on, it would reach the table, which opens an editor on Enter
            self._commit(editor)
            return True
        if (event.type() == QEvent.Type.KeyPress and isinstance(editor, CellEditor)
                and event.key() in _SUBMIT_KEYS
                and not event.modifiers() & ~Qt.KeyboardModifier.ShiftModifier
                & ~Qt.KeyboardModifier.KeypadModifier):
            if self.submit(editor):
                self.closeEditor.emit(editor, _SUBMIT_KEYS[event.key()])
            return True
        return super().eventFilter(editor, event)

    def setEditorData(self, editor, index):  # noqa: N802 (Qt's name)
        if isinstance(editor, QComboBox):
            current = index.model().metric(index.row())
            value = getattr(current, COLUMNS[index.column()].key)
            position = editor.findData(value)
            editor.setCurrentIndex(max(position, 0))
            return
        if editor.fresh:  # an editor reopened on refused text keeps that text
            editor.setText(index.data(Qt.ItemDataRole.EditRole) or "")
            editor.select_for_typing()

    def setModelData(self, editor, model, index):  # noqa: N802 (Qt's name)
        if isinstance(editor, QComboBox):
            value = editor.currentData()
            model.setData(index, editor.currentText() if value is None else value)
            return
        text = editor.text()
        if text != (index.data(Qt.ItemDataRole.EditRole) or ""):
            model.setData(index, text)

    def updateEditorGeometry(self, editor, option, index):  # noqa: N802 (Qt's name)
        editor.setGeometry(option.rect)
