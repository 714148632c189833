"""Result columns widen after a recompute makes a number wider, and never shrink on their own.

The check is the table's own geometry (the column is at least as wide as the shown text's
horizontal advance in the cell's font); no outside source is involved.
"""

from __future__ import annotations

import dataclasses

from PySide6.QtCore import Qt
from PySide6.QtGui import QFontMetrics

from fourfold.plan import Plan, load, sample_path
from fourfold.ui.columns import column_index

WIDENED = ("units_control", "units_treatment", "units_total", "days")


def _advance(window, row: int, key: str) -> int:
    model = window.model
    index = model.index(row, column_index(key))
    font = model.data(index, Qt.ItemDataRole.FontRole)
    base = window.table.font()
    metrics = QFontMetrics(base if font is None else font.resolve(base))
    return metrics.horizontalAdvance(model.data(index, Qt.ItemDataRole.DisplayRole))


def _edit(qtbot, window, row: int, key: str, text: str) -> None:
    model = window.model
    assert model.setData(model.index(row, column_index(key)), text)
    qtbot.waitUntil(lambda: not window.document.pending())


def test_a_wider_result_widens_its_column(qtbot, make_window):
    window = make_window()
    window.show()
    qtbot.waitExposed(window)
    row = 1  # a mean row solving for sample size: units grow with sd²
    before = {key: window.table.columnWidth(column_index(key)) for key in WIDENED}
    narrow = _advance(window, row, "units_control")
    _edit(qtbot, window, row, "sd", "1480")
    assert _advance(window, row, "units_control") > narrow  # the text did get wider
    assert _advance(window, row, "units_control") > before["units_control"]  # and overflowed
    for key in WIDENED:
        width = window.table.columnWidth(column_index(key))
        assert width >= _advance(window, row, key), key
        assert width >= before[key], key


def test_a_narrower_result_leaves_the_column_as_wide(qtbot, make_window):
    window = make_window()
    window.show()
    qtbot.waitExposed(window)
    _edit(qtbot, window, 1, "sd", "1480")
    wide = window.table.columnWidth(column_index("units_control"))
    _edit(qtbot, window, 1, "sd", "14.8")
    assert window.table.columnWidth(column_index("units_control")) == wide


def test_a_row_scrolled_into_view_widens_its_column(qtbot, make_window):
    sample = load(sample_path())
    metrics = [dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}")
               for i in range(60)]
    window = make_window(Plan(sample.settings, metrics))
    window.show()
    qtbot.waitExposed(window)
    row = max(i for i, metric in enumerate(metrics)  # a "Revenue per visitor" row, below
              if metric.kind == "mean" and metric.method == "t")  # the rows on screen
    _edit(qtbot, window, row, "sd", "1480")
    window.table.scrollTo(window.model.index(row, column_index("units_control")))
    qtbot.waitUntil(lambda: window.table.columnWidth(column_index("units_control"))
                    >= _advance(window, row, "units_control"))


def test_a_kinds_columns_shown_by_an_edit_get_the_widths_a_fresh_fit_gives(qtbot, make_window):
    # Columns hidden at the fit (no ratio row yet) are sized when a row first needs them.
    sample = load(sample_path())
    plan = Plan(sample.settings, [m for m in sample.metrics if m.kind != "ratio"])
    window = make_window(plan)
    window.show()
    qtbot.waitExposed(window)
    ratio_columns = [column_index(key) for key in
                     ("denominator", "numerator_sd", "denominator_sd", "correlation")]
    assert all(window.table.isColumnHidden(position) for position in ratio_columns)
    _edit(qtbot, window, 1, "kind", "ratio")
    assert not any(window.table.isColumnHidden(position) for position in ratio_columns)
    shown = [window.table.columnWidth(position) for position in ratio_columns]
    window.table.fit_columns()
    assert shown == [window.table.columnWidth(position) for position in ratio_columns]
