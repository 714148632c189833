"""Dragging the effect marker with the mouse stores what the marker, the slider and the table
show: no hidden digits, and the same units as typing the shown value.

The grid of round steps is the slider's (``fourfold.ui.plots.slider_step``); three significant
digits are what the table shows. No outside source.
"""

from __future__ import annotations

from user_steps import click_cell, drag_effect_marker, show, type_into_cell

from fourfold.figures.tradeoffs import HANDLE_ARROW
from fourfold.ui.columns import column_index
from fourfold.ui.plots import slider_step


def test_a_dragged_effect_is_stored_as_shown(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    click_cell(qtbot, window, 0, "effect")
    qtbot.waitUntil(lambda: window.plots.grid.handle.isVisible())
    drag_effect_marker(qtbot, window, 2.9953)
    qtbot.waitUntil(lambda: window.document.plan.metrics[0].effect != 0.05)
    effect = window.document.plan.metrics[0].effect
    step = slider_step(*window.plots.tradeoffs.effect_span)  # the slider's round steps
    assert abs(effect / step - round(effect / step)) < 1e-9
    assert abs(effect - 0.03) <= step and float(f"{effect:.3g}") == effect
    cell = window.model.data(window.model.index(0, column_index("effect")))
    label = window.plots.grid.handle.label.toPlainText()
    assert label == cell + HANDLE_ARROW and window.plots.slider_value.text() == cell
    assert window.document.stack.undo_text == "Set effect of Checkout conversion"
    units = window.document.result.rows[0].units_control
    type_into_cell(qtbot, window, 0, "effect", cell)  # typing what is shown changes nothing
    assert window.document.plan.metrics[0].effect == effect
    assert window.document.result.rows[0].units_control == units
