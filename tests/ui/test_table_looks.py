"""A change of the number of interim looks, typed into the settings panel, leaves the table as a
window opened on the changed plan shows it: every cell's text, font, colours, alignment, check
state and tooltip, and every column's width.

The table keeps what it has worked out (each cell's roles until its row changes, each text's
width per cell font until the table's font changes); these checks hold it to a table that has
kept nothing. No outside source is involved: the reference is a freshly opened window.
"""

from __future__ import annotations

import dataclasses

from cell_typing import type_in_cell
from PySide6.QtCore import Qt
from PySide6.QtTest import QTest

from fourfold.plan import Plan, load, sample_path
from fourfold.ui.columns import COLUMNS, column_index

ROLE = Qt.ItemDataRole
ROLES = (ROLE.DisplayRole, ROLE.FontRole, ROLE.ForegroundRole, ROLE.BackgroundRole,
         ROLE.TextAlignmentRole, ROLE.CheckStateRole, ROLE.ToolTipRole, ROLE.DecorationRole)


def _plan(rows: int = 40) -> Plan:
    """The sample's rows repeated (renamed, so the names differ in width) to fill the view."""
    sample = load(sample_path())
    metrics = [dataclasses.replace(sample.metrics[i % len(sample.metrics)],
                                   name=f"{sample.metrics[i % len(sample.metrics)].name} {i}")
               for i in range(rows)]
    return Plan(sample.settings, metrics)


def _with_looks(plan: Plan, looks: int) -> Plan:
    return Plan(dataclasses.replace(plan.settings, looks=looks), plan.metrics)


def _open(qtbot, make_window, plan: Plan):
    window = make_window(plan)
    window.resize(1400, 900)
    window.show()
    qtbot.waitExposed(window)
    _settle(qtbot, window)
    return window


def _settle(qtbot, window) -> None:
    qtbot.waitUntil(lambda: not window.document.pending())
    qtbot.wait(20)


def _type_looks(qtbot, window, looks: int) -> None:
    field = window.settings_panel.fields["looks"]
    field.setFocus()
    QTest.keyClick(field, Qt.Key.Key_A, Qt.KeyboardModifier.ControlModifier)
    QTest.keyClicks(field, str(looks))
    QTest.keyClick(field, Qt.Key.Key_Return)
    _settle(qtbot, window)
    window.table.viewport().repaint()  # the cells on screen asked for as a paint asks
    assert window.document.plan.settings.looks == looks


def _shown(role, value):
    """A role's value in comparable form (fonts by their description, colours by name)."""
    if value is None:
        return None
    if role == ROLE.FontRole:
        return value.toString()
    if role in (ROLE.ForegroundRole, ROLE.BackgroundRole):
        return value.name(value.NameFormat.HexArgb)
    if role == ROLE.CheckStateRole:
        return int(value.value)
    return value


def _cells(window) -> list:
    model = window.model
    return [[_shown(role, model.data(model.index(row, column), role)) for role in ROLES]
            for row in range(model.rowCount()) for column in range(len(COLUMNS))]


def _widths(window) -> list[int]:
    table = window.table
    return [0 if table.isColumnHidden(column) else table.columnWidth(column)
            for column in range(len(COLUMNS))]


def test_typed_looks_give_the_cells_and_widths_of_a_fresh_window(qtbot, make_window):
    plan = _plan()
    window = _open(qtbot, make_window, plan)
    window.table.viewport().repaint()
    _type_looks(qtbot, window, 5)
    fresh = _open(qtbot, make_window, _with_looks(plan, 5))
    assert _widths(window) == _widths(fresh)
    assert _cells(window) == _cells(fresh)


def test_looks_typed_back_and_forth_keep_the_cells_of_a_fresh_window(qtbot, make_window):
    plan = _plan()
    window = _open(qtbot, make_window, plan)
    for looks in (3, 5, 1, 2):
        _type_looks(qtbot, window, looks)
    fresh = _open(qtbot, make_window, _with_looks(plan, 2))
    assert _cells(window) == _cells(fresh)


def test_widths_measured_in_a_larger_text_are_measured_again(qtbot, make_window):
    """Texts measured before the text size changed are measured again in the new font: after
    Larger text, the widths after the looks change are a fresh window's at that size."""
    plan = _plan()
    window = _open(qtbot, make_window, plan)
    _type_looks(qtbot, window, 5)  # the look days measured in the normal font
    _type_looks(qtbot, window, 1)
    for _ in range(3):
        window.bigger_action.trigger()
    _settle(qtbot, window)
    _type_looks(qtbot, window, 5)
    fresh = _open(qtbot, make_window, _with_looks(plan, 5))
    assert fresh.table.font() == window.table.font()
    assert _widths(window) == _widths(fresh)


def test_typed_inputs_of_a_derived_sd_and_density_show_in_them(qtbot, make_window):
    """A ratio's sd and a quantile's fitted density are kept per state of their row: typing
    one of the fields they are derived from shows the figure a fresh window shows."""
    window = _open(qtbot, make_window, _plan(7))
    model = window.model
    ratio = next(row for row in range(7) if model.metric(row).kind == "ratio")
    quantile = next(row for row in range(7) if model.metric(row).kind == "quantile")
    before = (model.data(model.index(ratio, column_index("sd"))),
              model.data(model.index(quantile, column_index("density"))))
    type_in_cell(qtbot, window, ratio, "numerator_sd", "9")
    type_in_cell(qtbot, window, quantile, "second_value", "2.5")
    _settle(qtbot, window)
    after = (model.data(model.index(ratio, column_index("sd"))),
             model.data(model.index(quantile, column_index("density"))))
    assert after[0] != before[0] and after[1] != before[1]
    plan = window.document.plan
    fresh = _open(qtbot, make_window, Plan(dataclasses.replace(plan.settings),
                                           [dataclasses.replace(row) for row in plan.metrics]))
    assert _cells(window) == _cells(fresh)
