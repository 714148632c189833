"""What the window redraws for scenarios after a switch or an edit, counted, not timed: the
scenarios evaluated again, the sensitivity bars solved again, the comparison's lines made
again and the cells it announces. Driven the user's way (the Next scenario action and its
key, key presses into cells, clicks on the tabs); the figures shown are compared with the plan
layer's own evaluation of the document as it is (``outcomes``, ``comparison_lines``,
``sensitivity``; tested in tests/plan and tests/export). No outside source."""

from __future__ import annotations

from PySide6.QtCore import Qt
from user_steps import press, show, type_into_cell

import fourfold.export.comparison as comparison_lines_module
import fourfold.plan.comparison as comparison_module
import fourfold.ui.scenario_panel as panel_module
from fourfold.export.comparison import comparison_lines
from fourfold.plan import effective
from fourfold.plan.comparison import outcomes
from fourfold.plan.sensitivity import sensitivity

ARM_B = "Without arm B"
PLOTS, SCENARIOS = 0, 1


def _counted(monkeypatch, module, name: str) -> list:
    """Count the calls of ``module.name`` (each call's arguments are recorded)."""
    calls = []
    real = getattr(module, name)

    def counting(*args, **kwargs):
        calls.append(args)
        return real(*args, **kwargs)

    monkeypatch.setattr(module, name, counting)
    return calls


def _settle(qtbot, window) -> None:
    """Wait for the recompute, the scenarios tab's refresh and the plots' redraw."""
    qtbot.waitUntil(lambda: not window.document.pending()
                    and not window.scenario_panel.pending()
                    and not window.plots._redraw_timer.isActive())


def _click_tab(qtbot, window, index: int) -> None:
    bar = window.lower_tabs.tabBar()
    qtbot.mouseClick(bar, Qt.MouseButton.LeftButton, pos=bar.tabRect(index).center())
    assert window.lower_tabs.currentIndex() == index
    _settle(qtbot, window)


def _fresh_lines(window) -> list:
    return comparison_lines(outcomes(window.document.whole))


def _fresh_bars(window):
    whole = window.document.whole
    return sensitivity(effective(whole, whole.active), 0.2)


def test_the_bars_are_solved_again_only_when_what_decides_the_duration_changes(
        qtbot, make_window, monkeypatch):
    window = make_window()
    show(qtbot, window)
    _click_tab(qtbot, window, SCENARIOS)
    panel = window.scenario_panel
    solves = _counted(monkeypatch, panel_module, "sensitivity")
    type_into_cell(qtbot, window, 1, "sd", "15.5")  # revenue per visitor: a secondary row
    _settle(qtbot, window)
    assert window.document.plan.metrics[1].sd == 15.5
    assert solves == []
    assert panel.bars.found == _fresh_bars(window)
    type_into_cell(qtbot, window, 0, "effect", "6%")  # checkout conversion: the primary row
    _settle(qtbot, window)
    assert len(solves) == 1
    assert panel.bars.found == _fresh_bars(window)
    # hidden, the tab solves nothing; clicked, it shows the plan as it is now
    _click_tab(qtbot, window, PLOTS)
    type_into_cell(qtbot, window, 0, "effect", "7%")
    _settle(qtbot, window)
    assert len(solves) == 1
    _click_tab(qtbot, window, SCENARIOS)
    assert len(solves) == 2
    assert panel.bars.found == _fresh_bars(window)
    assert panel.comparison.comparison.lines == _fresh_lines(window)


def test_an_edit_of_a_base_row_remakes_and_announces_only_what_it_changed(
        qtbot, make_window, monkeypatch):
    window = make_window()
    show(qtbot, window)
    _click_tab(qtbot, window, SCENARIOS)
    model = window.scenario_panel.comparison.comparison
    before = list(model.lines)
    made = _counted(monkeypatch, comparison_lines_module, "_row_lines")
    announced = []
    model.dataChanged.connect(lambda first, last, _roles=(): announced.append(
        (first.row(), first.column(), last.row(), last.column())))
    type_into_cell(qtbot, window, 0, "effect", "4.5%")  # every scenario shows the base's row 0
    _settle(qtbot, window)
    assert [label for _found, _positions, _id, label in made] == ["Checkout conversion"]
    assert model.lines == _fresh_lines(window)
    changed = {(row, column) for row, (old, new) in enumerate(zip(before, model.lines,
                                                                   strict=True))
               for column in range(len(new.cells))
               if (old.cells[column], old.deltas[column]) != (new.cells[column],
                                                              new.deltas[column])}
    assert changed
    assert {(row, column) for row, column, *_ in announced} == changed
    assert all((row, column) == (last_row, last_column)
               for row, column, last_row, last_column in announced)  # each cell alone


def test_an_edit_in_a_scenario_evaluates_that_scenario_alone(qtbot, make_window, monkeypatch):
    window = make_window()
    show(qtbot, window)
    _click_tab(qtbot, window, SCENARIOS)
    window.table.setFocus()
    press(qtbot, "Ctrl+Alt+PgDown")  # Next scenario: the first one
    _settle(qtbot, window)
    assert window.document.scenario == ARM_B
    evaluated = _counted(monkeypatch, comparison_module, "compute")
    type_into_cell(qtbot, window, 0, "effect", "6%")
    _settle(qtbot, window)
    assert len(evaluated) == 1  # the scenario edited; the base and the others are as they were
    assert window.scenario_panel.comparison.comparison.lines == _fresh_lines(window)


def test_a_switch_evaluates_only_the_scenario_put_on_show(qtbot, make_window, monkeypatch):
    window = make_window()
    show(qtbot, window)  # the plots' tab, drawing the other scenarios' curves faintly
    assert window.overlay_action.isChecked()
    _settle(qtbot, window)
    evaluated = _counted(monkeypatch, comparison_module, "compute")
    names = [None, *(scenario.name for scenario in window.document.whole.scenarios)]
    for step in range(len(names)):
        window.next_scenario_action.trigger()
        _settle(qtbot, window)
        assert window.document.scenario == names[(step + 1) % len(names)]
        assert len(evaluated) == 1  # the scenario put on show, no other
        shown = [(each.name, each.result.duration_days,
                  [row.units_control for row in each.result.rows])
                 for each in window.document.outcomes]
        assert shown == [(each.name, each.result.duration_days,
                          [row.units_control for row in each.result.rows])
                         for each in outcomes(window.document.whole)]
        evaluated.clear()  # the check's own evaluations
