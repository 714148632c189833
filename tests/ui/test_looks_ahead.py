"""A change of the number of looks after the window was idle finds its designs and rows made.

The user steps the looks with the spin box's arrow keys or types a number; the window, idle a
moment after each recompute, has prepared the plan at every other number of looks
(:mod:`fourfold.plan.prepare`). These checks count the grid work (designs, boundaries) and the
rows solved between the key press and the recompute's end, and hold the window's result and
table texts to a window opened on the changed plan with every cache emptied (a consistency
check, no outside source).
"""

from __future__ import annotations

import dataclasses

import pytest
from cell_typing import type_in_cell
from PySide6.QtCore import Qt
from PySide6.QtTest import QTest

from fourfold.engine import sequential as engine_sequential
from fourfold.plan import Plan, evaluation, load, sample_path, sequential, tradeoffs
from fourfold.plan.commands import SetSetting
from fourfold.ui.columns import COLUMNS


def _forget():
    for cached in (engine_sequential._boundaries, sequential.shared_design,
                   sequential.shared_boundaries, sequential._power_of, tradeoffs._inflation,
                   tradeoffs._node_inflations):
        cached.cache_clear()


def _plan(looks: int, rows: int = 30) -> Plan:
    sample = load(sample_path())
    metrics = [dataclasses.replace(sample.metrics[i % len(sample.metrics)],
                                   name=f"{sample.metrics[i % len(sample.metrics)].name} {i}")
               for i in range(rows)]
    return Plan(dataclasses.replace(sample.settings, looks=looks), metrics)


class _Counted:
    """The designs and boundaries made and the rows solved until the document's recompute
    ends (the plots' curves, redrawn after it, make designs of their own)."""

    def __init__(self, monkeypatch, document):
        self.designs, self.rows, self.done = 0, 0, False
        design, bounds, solve = (engine_sequential.design, engine_sequential.boundaries,
                                 evaluation.solve_rows)

        def counted_design(*args, **kwargs):
            self.designs += not self.done
            return design(*args, **kwargs)

        def counted_bounds(*args, **kwargs):
            self.designs += not self.done
            return bounds(*args, **kwargs)

        def counted_solve(plan, designs, alphas, missing, *rest, **kwargs):
            self.rows += 0 if self.done else len(missing)
            return solve(plan, designs, alphas, missing, *rest, **kwargs)

        monkeypatch.setattr(engine_sequential, "design", counted_design)
        monkeypatch.setattr(engine_sequential, "boundaries", counted_bounds)
        monkeypatch.setattr(evaluation, "solve_rows", counted_solve)
        document.computed.connect(self._finished)

    def _finished(self):
        self.done = True


def _open(qtbot, make_window, plan):
    window = make_window(plan)
    window.resize(1280, 800)
    window.show()
    qtbot.waitExposed(window)
    qtbot.waitUntil(lambda: not window.document.pending())
    return window


def _idle(qtbot, window):
    qtbot.waitUntil(lambda: not window.work_ahead.preparing(), timeout=10_000)


def _step(qtbot, window, key):
    field = window.settings_panel.fields["looks"]
    field.setFocus()
    QTest.keyClick(field, key)
    qtbot.waitUntil(lambda: not window.document.pending())


def _texts(window):
    model = window.model
    return [model.data(model.index(row, column), Qt.ItemDataRole.DisplayRole)
            for row in range(model.rowCount()) for column in range(len(COLUMNS))]


def _type(qtbot, window, text, end=Qt.Key.Key_Return):
    field = window.settings_panel.fields["looks"]
    field.setFocus()
    QTest.keyClick(field, Qt.Key.Key_A, Qt.KeyboardModifier.ControlModifier)
    QTest.keyClicks(field, text)
    if end is None:
        window.table.setFocus()  # leaving the field ends the number
    else:
        QTest.keyClick(field, end)
    qtbot.waitUntil(lambda: not window.document.pending())


@pytest.mark.parametrize(("keys", "looks"), [
    (Qt.Key.Key_Up, 4), (Qt.Key.Key_Down, 2),  # a step with the arrow keys
    ("12", 12), ("1", 1), ("20", 20),  # a number typed, ended with Enter
])
def test_a_change_after_the_window_was_idle_makes_no_design_and_solves_no_row(
        qtbot, make_window, monkeypatch, keys, looks):
    _forget()
    window = _open(qtbot, make_window, _plan(3))
    _idle(qtbot, window)
    counted = _Counted(monkeypatch, window.document)
    if isinstance(keys, str):
        _type(qtbot, window, keys)
    else:
        _step(qtbot, window, keys)
    assert window.document.plan.settings.looks == looks
    assert (counted.designs, counted.rows) == (0, 0)
    monkeypatch.undo()
    _forget()
    fresh = _open(qtbot, make_window, _plan(looks))
    assert window.document.result == fresh.document.result
    assert _texts(window) == _texts(fresh)


@pytest.mark.parametrize("end", [Qt.Key.Key_Return, Qt.Key.Key_Enter, None])
def test_a_number_typed_is_one_change_made_when_it_is_ended(qtbot, make_window, end):
    # "12" typed is not a change to 1 look and another to 12: nothing changes while typing,
    # Enter (either key) or leaving the field makes one change, and one undo returns to 3
    window = _open(qtbot, make_window, _plan(3))
    field = window.settings_panel.fields["looks"]
    field.setFocus()
    QTest.keyClick(field, Qt.Key.Key_A, Qt.KeyboardModifier.ControlModifier)
    QTest.keyClicks(field, "12")
    qtbot.wait(10)
    assert window.document.plan.settings.looks == 3
    assert not window.document.stack.can_undo
    _type(qtbot, window, "12", end)
    assert window.document.plan.settings.looks == 12
    window.undo_action.trigger()
    qtbot.waitUntil(lambda: not window.document.pending())
    assert window.document.plan.settings.looks == 3
    assert field.value() == 3
    assert not window.document.stack.can_undo


def test_a_step_before_the_window_was_idle_does_the_work_itself(
        qtbot, make_window, monkeypatch):
    # the counts above can fail: straight after opening, nothing has been prepared yet
    _forget()
    window = _open(qtbot, make_window, _plan(3))
    assert window.work_ahead.preparing()
    counted = _Counted(monkeypatch, window.document)
    _step(qtbot, window, Qt.Key.Key_Up)
    assert counted.designs > 0 and counted.rows == 30


def test_after_an_edit_the_work_ahead_is_that_of_the_edited_plan(
        qtbot, make_window, monkeypatch):
    _forget()
    window = _open(qtbot, make_window, _plan(3))
    _idle(qtbot, window)
    type_in_cell(qtbot, window, 1, "effect", "2.5")
    qtbot.waitUntil(lambda: not window.document.pending())
    assert window.work_ahead.preparing()
    _idle(qtbot, window)
    counted = _Counted(monkeypatch, window.document)
    _step(qtbot, window, Qt.Key.Key_Up)
    assert window.document.plan.metrics[1].effect == 0.025  # a relative effect, typed in %
    assert (counted.designs, counted.rows) == (0, 0)


def test_an_idle_document_runs_no_timer(qtbot):
    # a document without a window (a dialog's, a test's) may be freed by Python's cycle
    # collector in whichever thread triggers it, a worker's included; a Qt timer still
    # running then is stopped from the wrong thread, which Qt warns about or crashes on
    # (seen with a simulation worker). The work ahead's timer belongs to the window.
    from PySide6.QtCore import QTimer

    from fourfold.ui.document import PlanDocument

    document = PlanDocument(_plan(3))
    document.stack.do(SetSetting("looks", 4))
    qtbot.waitUntil(lambda: not document.pending())
    assert [timer for timer in document.findChildren(QTimer) if timer.isActive()] == []



def test_a_closed_window_drops_its_work_ahead(qtbot, make_window, monkeypatch):
    # a window closed but not yet deleted must not go on preparing a plan no one sees (it
    # would take the processor from the window in use)
    window = _open(qtbot, make_window, _plan(3))
    assert window.work_ahead.preparing()
    window.document.stack.mark_clean()
    window.close()
    counted = _Counted(monkeypatch, window.document)
    qtbot.waitUntil(lambda: not window.work_ahead.preparing(), timeout=5_000)
    assert (counted.designs, counted.rows) == (0, 0)
