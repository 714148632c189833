"""View and Help menus through the user's path: text size and the About box, from the menu
(``QAction.trigger()``) and from their shortcuts on the focused table.

The steps of 10 % and the remembered size are the project's own rule (README, "View"); no
outside source.
"""

from __future__ import annotations

import pytest
from PySide6.QtWidgets import QMessageBox
from user_steps import press_each_shortcut, show

import fourfold


@pytest.mark.triggers("bigger_action", "smaller_action", "reset_text_action")
@pytest.mark.presses("bigger_action", "smaller_action", "reset_text_action")
def test_text_size_steps_and_is_remembered(make_window, qtbot, qsettings):
    window = make_window()
    show(qtbot, window)
    normal = window.table.font().pointSizeF()
    scales = []

    def remembered():
        scales.append(float(qsettings.value("view/text_scale")))

    window.bigger_action.trigger()
    remembered()
    window.smaller_action.trigger()
    remembered()
    window.smaller_action.trigger()
    remembered()
    window.reset_text_action.trigger()
    remembered()
    press_each_shortcut(qtbot, window.bigger_action, remembered)  # Ctrl++ and Ctrl+=
    press_each_shortcut(qtbot, window.smaller_action, remembered)
    assert window.table.font().pointSizeF() == pytest.approx(normal * 1.1)
    assert window.statusBar().currentMessage() == "Text size 110 %"
    press_each_shortcut(qtbot, window.reset_text_action, remembered)
    assert scales == pytest.approx([1.1, 1.0, 0.9, 1.0, 1.1, 1.2, 1.1, 1.0])
    assert window.table.font().pointSizeF() == pytest.approx(normal)


@pytest.mark.triggers("about_action")
@pytest.mark.presses("about_action")
def test_about_shows_the_version_and_the_caution(make_window, qtbot, monkeypatch):
    window = make_window()
    show(qtbot, window)
    shown = []
    monkeypatch.setattr(QMessageBox, "about", lambda parent, title, text: shown.append(text))
    window.about_action.trigger()
    press_each_shortcut(qtbot, window.about_action)
    assert len(shown) == 2
    assert all(fourfold.__version__ in text and fourfold.CAUTION in text for text in shown)
