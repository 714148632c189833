"""Cell editors of the plan table: a line edit for numbers and text, a drop-down for choices.

Numbers are read by the model (:meth:`PlanTableModel.parse`), so a refused value never reaches
the plan: the status line shows why and the cell keeps its old value. Check boxes (``relative``)
are toggled in place by the view and need no editor.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QComboBox, QLineEdit, QStyledItemDelegate

from fourfold.ui.columns import CHOICE, COLUMNS, NUMBER
from fourfold.ui.table_model import CHOICES_ROLE


class PlanDelegate(QStyledItemDelegate):
    """Editors for the plan table, chosen from the column's editor type."""

    def createEditor(self, parent, option, index):
        column = COLUMNS[index.column()]
        if column.editor == CHOICE:
            combo = QComboBox(parent)
            for shown, value in index.data(CHOICES_ROLE) or []:
                combo.addItem(shown, value)
            combo.activated.connect(lambda _=0, editor=combo: self._commit(editor))
            return combo
        editor = QLineEdit(parent)
        editor.setFrame(False)
        if column.editor == NUMBER:
            editor.setAlignment(Qt.AlignmentFlag.AlignRight)
            hint = "empty: not set" if column.optional else ""
            editor.setPlaceholderText(hint)
        return editor

    def _commit(self, editor) -> None:
        self.commitData.emit(editor)
        self.closeEditor.emit(editor, QStyledItemDelegate.EndEditHint.NoHint)

    def setEditorData(self, editor, index):
        if isinstance(editor, QComboBox):
            current = index.model().metric(index.row())
            value = getattr(current, COLUMNS[index.column()].key)
            position = editor.findData(value)
            editor.setCurrentIndex(max(position, 0))
            return
        editor.setText(index.data(Qt.ItemDataRole.EditRole) or "")
        editor.selectAll()

    def setModelData(self, editor, model, index):
        if isinstance(editor, QComboBox):
            value = editor.currentData()
            model.setData(index, editor.currentText() if value is None else value)
            return
        text = editor.text()
        if text != (index.data(Qt.ItemDataRole.EditRole) or ""):
            model.setData(index, text)

    def updateEditorGeometry(self, editor, option, index):
        editor.setGeometry(option.rect)
