"""The plan description in the settings panel: the whole text, a few lines tall, one undo step.

The sample plan's description (293 characters, invented) is the long text; that a text box
commits when focus leaves it and Escape abandons the typing is common practice, no source.
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import QEvent, Qt
from PySide6.QtGui import QFocusEvent
from PySide6.QtWidgets import QApplication

from fourfold.plan import Plan, Settings, dumps, load, loads, sample_path
from fourfold.ui.document import PlanDocument
from fourfold.ui.settings_panel import DescriptionEdit, SettingsPanel

LONG = load(sample_path()).settings.description


@pytest.fixture
def panel(qtbot):
    widget = SettingsPanel(PlanDocument(load(sample_path())))
    qtbot.addWidget(widget)
    widget.resize(1300, 140)
    widget.show()
    qtbot.waitExposed(widget)
    return widget


def _leave(editor):
    QApplication.sendEvent(editor, QFocusEvent(QEvent.Type.FocusOut,
                                               Qt.FocusReason.TabFocusReason))


def test_the_whole_description_is_shown_wrapped_on_at_most_three_lines(panel):
    editor = panel.description
    assert isinstance(editor, DescriptionEdit)
    assert len(LONG) > 250 and editor.text() == LONG
    assert editor.lineWrapMode() == editor.LineWrapMode.WidgetWidth
    assert 2 <= editor.lines() <= DescriptionEdit.MAX_LINES
    assert editor.verticalScrollBar().maximum() == 0  # every line fits: nothing hidden


def test_a_longer_text_scrolls_instead_of_growing(panel, qtbot):
    editor = panel.description
    three = editor.height()
    editor.setPlainText(LONG * 3)
    assert editor.lines() > DescriptionEdit.MAX_LINES
    assert editor.height() == three
    assert editor.verticalScrollBar().maximum() > 0
    editor.setPlainText("Short.")
    assert editor.lines() == 1 and editor.height() < three


def test_an_edit_commits_on_leaving_as_one_undoable_step_and_round_trips(panel):
    document = panel.document
    editor = panel.description
    text = LONG + "\nSecond paragraph: guardrails are one-sided, with margins."
    editor.setFocus()
    editor.setPlainText(text)
    assert document.plan.settings.description == LONG  # nothing sent while typing
    _leave(editor)
    assert document.plan.settings.description == text
    assert document.stack.undo_text == "Set description"
    assert loads(dumps(document.plan)).settings.description == text  # the file keeps it all
    document.undo()
    assert document.plan.settings.description == LONG and editor.text() == LONG
    document.redo()
    assert editor.text() == text
    _leave(editor)  # leaving again with the same text sends nothing
    document.undo()
    assert not document.stack.can_undo


def test_enter_commits_shift_enter_breaks_the_line_escape_restores(panel, qtbot):
    document = panel.document
    editor = panel.description
    editor.show_text("Checkout test")
    editor.moveCursor(editor.textCursor().MoveOperation.End)
    qtbot.keyClicks(editor, " A")
    qtbot.keyClick(editor, Qt.Key.Key_Return, Qt.KeyboardModifier.ShiftModifier)
    qtbot.keyClicks(editor, "B")
    assert editor.text() == "Checkout test A\nB"
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    assert document.plan.settings.description == "Checkout test A\nB"
    qtbot.keyClicks(editor, "typed by mistake")
    qtbot.keyClick(editor, Qt.Key.Key_Escape)
    assert editor.text() == "Checkout test A\nB"
    _leave(editor)
    assert document.stack.undo_text == "Set description" and document.stack.can_undo
    document.undo()
    assert document.plan.settings.description == LONG


def test_a_save_keeps_a_description_still_being_typed(make_window, tmp_path, qtbot):
    window = make_window(Plan(Settings(title="Invented"), load(sample_path()).metrics))
    window.show()
    qtbot.waitExposed(window)
    editor = window.settings_panel.description
    editor.setFocus()
    qtbot.waitUntil(editor.hasFocus)
    editor.setPlainText("Typed, not yet left")
    assert window.save_to(tmp_path / "plan.json")
    assert load(tmp_path / "plan.json").settings.description == "Typed, not yet left"
