"""The settings and the summary line keep every item whole on a laptop-sized window.

A clipped item shows a cut number ("Total units 728,52" for 728,520): the summary's items that
do not fit beside the notes go to a second line, and the settings' four groups go to two rows
when the window is narrower than they need side by side. Driven as a user goes: the looks
typed into the settings and the scenario switched with its key. (Common practice, no source.)
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QAbstractButton, QLabel

pytestmark = pytest.mark.qt


def _settle(qtbot, window) -> None:
    qtbot.waitUntil(lambda: not window.document.pending())
    qtbot.wait(20)


def _clipped(window) -> list[str]:
    bar = window.summary
    items = [bar.scenario, bar.duration, bar.units, bar.binding, bar.notes]
    return [item.currentText() if item is bar.scenario else item.text() for item in items
            if item.isVisible() and item.width() < item.sizeHint().width()]


@pytest.mark.parametrize("size", [(1280, 800), (1400, 900), (1024, 768)])
def test_the_summary_keeps_its_items_whole_with_looks_and_a_scenario(make_window, qtbot, size):
    window = make_window()
    window.resize(*size)
    window.show()
    qtbot.waitExposed(window)
    _settle(qtbot, window)
    looks = window.settings_panel.fields["looks"]
    looks.setFocus()
    QTest.keyClick(looks, Qt.Key.Key_A, Qt.KeyboardModifier.ControlModifier)
    QTest.keyClicks(looks, "3")
    QTest.keyClick(looks, Qt.Key.Key_Return)
    _settle(qtbot, window)
    assert window.document.plan.settings.looks == 3
    assert "at most" in window.summary.texts()[0]
    assert _clipped(window) == [] and _cut_settings(window) == []
    window.table.setFocus()
    for _ in range(4):  # through every scenario, the longest durations and names among them
        QTest.keyClick(window.table, Qt.Key.Key_PageDown,
                       Qt.KeyboardModifier.ControlModifier | Qt.KeyboardModifier.AltModifier)
        _settle(qtbot, window)
        assert window.document.scenario is not None
        assert _clipped(window) == [], window.document.scenario
        assert _cut_settings(window) == [], window.document.scenario


def _cut_settings(window) -> list[str]:
    """The settings' labels, buttons and fields narrower than they need."""
    cut = []
    panel = window.settings_panel
    for widget in [*panel.findChildren(QLabel), *panel.findChildren(QAbstractButton)]:
        if widget.isVisible() and widget.width() < widget.sizeHint().width():
            cut.append(widget.text())
    for name, field in window.settings_panel.fields.items():
        if field.isVisible() and field.width() < field.minimumSizeHint().width():
            cut.append(name)
    return cut


@pytest.mark.parametrize("width,two_rows", [(1024, True), (1280, False), (1400, False)])
def test_the_window_fits_a_laptop_screen_with_the_settings_whole(make_window, qtbot, width,
                                                                   two_rows):
    window = make_window()
    window.resize(width, 760)
    window.show()
    qtbot.waitExposed(window)
    _settle(qtbot, window)
    assert window.width() == width  # not held wider than the screen by its minimum size
    assert window.settings_panel._two_rows is two_rows
    assert _cut_settings(window) == []


def test_the_sample_plan_keeps_one_summary_line_through_its_scenarios(make_window, qtbot):
    # at 1,400 px the summary does not change its height on a switch (the window's layout
    # would move with it); a long scenario name is cut short in the drop-down, whole in its list
    window = make_window()
    window.resize(1400, 900)
    window.show()
    qtbot.waitExposed(window)
    _settle(qtbot, window)
    for _ in range(len(window.document.whole.scenarios) + 1):
        window.next_scenario_action.trigger()
        _settle(qtbot, window)
        assert set(window.summary._places) == {0}, window.document.scenario
        assert _clipped(window) == []
    names = [window.summary.scenario.itemText(i) for i in range(window.summary.scenario.count())]
    view = window.summary.scenario.view()
    assert view.minimumWidth() > max(view.fontMetrics().horizontalAdvance(n) for n in names)
