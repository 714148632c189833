"""Keyboard use of the window: Enter/Tab in the table, editors, shortcuts, light start-up.

Conventions checked here are common practice of desktop spreadsheets, no source; that Enter
keeps the edited cell current, so that the plots stay on its row, is the project's own rule.
"""

from __future__ import annotations

import subprocess
import sys

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QComboBox, QLineEdit, QMessageBox

import fourfold
from fourfold.plan.commands import SetField
from fourfold.ui.columns import column_index


def _editor(table):
    editors = [child for child in table.viewport().findChildren(QLineEdit) if child.isVisible()]
    return editors[0] if len(editors) == 1 else None


def test_enter_edits_and_stays_on_the_row_tab_moves_right(make_window, qtbot):
    window = make_window()
    window.show()
    table = window.table
    column = column_index("baseline")
    table.setCurrentIndex(window.model.index(0, column))
    table.setFocus()
    qtbot.keyClick(table, Qt.Key.Key_Return)
    editor = _editor(table)
    assert editor is not None and editor.text() == "3.1 %"
    editor.setText("3.3")
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: _editor(table) is None)
    assert window.document.plan.metrics[0].baseline == pytest.approx(0.033)
    # the cell stays current, so the plots stay on the row just edited
    assert (table.currentIndex().row(), table.currentIndex().column()) == (0, column)
    qtbot.waitUntil(lambda: window.plots.tradeoffs is not None)
    assert window.plots.tradeoffs.index == 0
    qtbot.keyClick(table, Qt.Key.Key_Down)
    qtbot.keyClick(table, Qt.Key.Key_Return)
    editor = _editor(table)
    editor.setText("14.9")
    qtbot.keyClick(editor, Qt.Key.Key_Tab)
    qtbot.waitUntil(lambda: window.document.stack.undo_text.startswith("Set baseline of Rev"))
    assert window.document.plan.metrics[1].baseline == pytest.approx(14.9)
    assert (table.currentIndex().row(), table.currentIndex().column()) == (1, column + 1)


def test_choice_cells_edit_with_a_drop_down_of_the_allowed_values(make_window):
    window = make_window()
    table, model = window.table, window.model
    index = model.index(0, column_index("alternative"))
    delegate = table.itemDelegate()
    editor = delegate.createEditor(table.viewport(), None, index)
    assert isinstance(editor, QComboBox)
    delegate.setEditorData(editor, index)
    assert editor.currentData() == "two-sided"
    editor.setCurrentIndex(editor.findData("greater"))
    delegate.setModelData(editor, model, index)
    assert window.document.plan.metrics[0].alternative == "greater"
    method = model.index(0, column_index("method"))
    editor = delegate.createEditor(table.viewport(), None, method)
    assert [editor.itemData(i) for i in range(editor.count())] == \
        [None, "pooled", "unpooled", "arcsine", "pooled-cc"]


def test_the_relative_check_box_toggles_through_a_command(make_window):
    window = make_window()
    index = window.model.index(0, column_index("relative"))
    unchecked = Qt.CheckState.Unchecked.value
    assert window.model.setData(index, unchecked, Qt.ItemDataRole.CheckStateRole)
    assert window.document.plan.metrics[0].relative is False
    assert "relative" in window.document.stack.undo_text


def test_every_menu_action_has_a_shortcut(make_window):
    window = make_window()
    missing = []
    for menu in (window.file_menu, window.edit_menu, window.plan_menu, window.scenario_menu,
                 window.view_menu, window.help_menu, window.export_menu):
        for action in menu.actions():
            if action.isSeparator() or action.menu() is not None:
                continue
            if action.shortcut().isEmpty():
                missing.append(action.text())
    assert missing == []


def test_about_box_shows_the_version_and_the_caution(make_window, monkeypatch):
    window = make_window()
    shown = []
    monkeypatch.setattr(QMessageBox, "about", lambda parent, title, text: shown.append(text))
    window.about_action.trigger()
    assert fourfold.__version__ in shown[0] and fourfold.CAUTION in shown[0]


def test_opening_the_window_imports_neither_pandas_nor_scipy_stats():
    code = (
        "import os, sys, tempfile\n"
        "os.environ['QT_QPA_PLATFORM'] = 'offscreen'\n"
        "from PySide6.QtCore import QSettings\n"
        "from fourfold.plan import load, sample_path\n"
        "from fourfold.ui.app import application\n"
        "from fourfold.ui.main_window import MainWindow\n"
        "app = application()\n"
        "d = tempfile.mkdtemp()\n"
        "s = QSettings(os.path.join(d, 's.ini'), QSettings.Format.IniFormat)\n"
        "w = MainWindow(load(sample_path()), None, s, data_dir=d)\n"
        "w.show(); app.processEvents()\n"
        "print(sorted(m for m in ('pandas', 'scipy.stats', 'statsmodels') if m in sys.modules))\n"
        "w.close(); w.deleteLater(); app.processEvents()\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=120, check=True)
    assert done.stdout.strip().splitlines()[-1] == "[]"


def test_delete_empties_optional_cells_in_one_step(make_window, qtbot):
    window = make_window()
    table, model = window.table, window.model
    window.document.apply(SetField(0, "alpha", 0.01))
    table.setCurrentIndex(model.index(0, column_index("alpha")))
    qtbot.keyClick(table, Qt.Key.Key_Delete)
    assert window.document.plan.metrics[0].alpha is None
    table.setCurrentIndex(model.index(0, column_index("baseline")))
    qtbot.keyClick(table, Qt.Key.Key_Delete)  # a baseline cannot be empty
    assert window.document.plan.metrics[0].baseline == 0.031
    assert "optional" in window.statusBar().currentMessage()
