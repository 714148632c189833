"""A settings field still being typed in when the user reaches for an action.

A number typed into Looks or Treatment arms is one change, made on Enter or on leaving the
field; a number typed into α, power or the traffic fields is made on the same. An action taken
meanwhile (Ctrl+S, an export, a scenario switch) acts on what the field shows: the window
commits the field first, as it closes an open cell editor. Undo and Redo leave the typed text
and show the plan they leave. Checked through the keys the user presses; no outside source.
"""

from __future__ import annotations

import csv

import pytest
from PySide6.QtCore import Qt
from PySide6.QtTest import QTest
from user_steps import answer_file_dialogs, press, show

from fourfold.plan import load, sample_path, save
from fourfold.plan.commands import SetField


def _type(window, field: str, text: str) -> None:
    """Select the field's text and type ``text`` over it, without Enter."""
    widget = window.settings_panel.fields[field]
    widget.setFocus()
    QTest.keyClick(widget, Qt.Key.Key_A, Qt.KeyboardModifier.ControlModifier)
    QTest.keyClicks(widget, text)


@pytest.mark.parametrize(("field", "text", "value"), [
    ("looks", "4", 4), ("arms", "3", 3), ("alpha", "0.01", 0.01), ("daily_units", "50000", 5e4),
])
def test_ctrl_s_saves_the_number_the_field_shows(make_window, qtbot, tmp_path, field, text,
                                                 value):
    path = tmp_path / "plan.json"
    save(load(sample_path()), path)
    window = make_window(load(path), path)
    show(qtbot, window)
    _type(window, field, text)
    press(qtbot, "Ctrl+S")
    assert getattr(load(path).settings, field) == value
    assert getattr(window.document.plan.settings, field) == value
    assert not window.document.dirty


def test_an_export_writes_the_looks_the_field_shows(make_window, qtbot, monkeypatch, tmp_path):
    window = make_window()
    show(qtbot, window)
    answer_file_dialogs(monkeypatch, save_paths=[tmp_path / "plan.csv"])
    _type(window, "looks", "3")
    press(qtbot, "Ctrl+E")
    assert window.document.plan.settings.looks == 3
    with open(tmp_path / "plan.csv", encoding="utf-8-sig", newline="") as written:
        first = next(csv.DictReader(written))
    assert len(first["look_days"].split(";")) == 3


def test_a_scenario_switch_keeps_the_alpha_typed_in_the_plan_it_was_typed_in(make_window,
                                                                            qtbot):
    window = make_window()
    show(qtbot, window)
    _type(window, "alpha", "0.01")
    press(qtbot, "Ctrl+Alt+PgDown")
    qtbot.waitUntil(lambda: not window.document.pending())
    whole = window.document.whole
    assert whole.active == whole.scenarios[0].name
    assert whole.settings.alpha == 0.01  # the base's, where it was typed
    assert window.settings_panel.fields["alpha"].text() == "0.01"  # the scenario inherits it


def test_undo_drops_the_number_being_typed_and_shows_the_plan(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    window.document.apply(SetField(1, "sd", 15.0))
    qtbot.waitUntil(lambda: not window.document.pending())
    _type(window, "looks", "4")
    window.undo_action.trigger()  # Edit → Undo (Ctrl+Z in the field is the field's own)
    qtbot.waitUntil(lambda: not window.document.pending())
    assert window.document.plan.metrics[1].sd != 15.0
    assert window.document.plan.settings.looks == 1
    field = window.settings_panel.fields["looks"]
    assert field.text() == "1"
    window.table.setFocus()  # leaving the field now changes nothing
    qtbot.waitUntil(lambda: not window.document.pending())
    assert window.document.plan.settings.looks == 1
    assert window.document.stack.can_redo  # the sd change, undone
