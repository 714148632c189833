"""The history dialog's units over time: the unit and time columns, the reach line and the
choice of figures — the whole history, or each unit's first 7, 14, 21, 28 days.

With a unit and a time column, the import (file, DuckDB or warehouse) also finds the reach
curve and the metrics over each unit's first days (:mod:`fourfold.history.exposure`); the
window chosen here is what the results table shows and what is applied to the plan.
"""

from __future__ import annotations

from PySide6.QtWidgets import QComboBox, QHBoxLayout, QLabel, QWidget

from fourfold.history import HistoryError
from fourfold.history.text import reach_line
from fourfold.ui.history_mapping import NONE, combo

WHOLE = "the whole history (per row)"


def window_label(days: int) -> str:
    """The figures-for choice of a window."""
    return f"each unit's first {days} days"


class HistoryTraffic:
    """Unit and time columns, reach and windows of :class:`fourfold.ui.history_dialog
    .HistoryDialog`."""

    def _units_row(self) -> QWidget:
        row = QWidget()
        layout = QHBoxLayout(row)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(QLabel("Unit column:"))
        self.unit_box = combo([NONE], editable=True)
        self.unit_box.setMinimumWidth(160)
        self.unit_box.setToolTip("The id of the unit (visitor, user) when rows are visits or "
                                 "days of units")
        layout.addWidget(self.unit_box)
        layout.addWidget(QLabel("Time column:"))
        self.time_box = combo([NONE], editable=True)
        self.time_box.setMinimumWidth(160)
        self.time_box.setToolTip("A date or timestamp column (YYYY-MM-DD…) or whole day numbers")
        layout.addWidget(self.time_box)
        hint = QLabel("optional: adds the reach curve and each unit's first 7–28 days")
        hint.setEnabled(False)
        layout.addWidget(hint, 1)
        return row

    def _fill_unit_choices(self, columns: list[str], unit: str | None,
                           time: str | None) -> None:
        for box, current in ((self.unit_box, unit), (self.time_box, time)):
            box.clear()
            box.addItems([NONE, *columns])
            box.setCurrentText(current or NONE)

    def units(self) -> tuple[str | None, str | None]:
        """The unit and time columns (both or neither); HistoryError otherwise."""
        unit = self.unit_box.currentText().strip()
        time = self.time_box.currentText().strip()
        unit = None if unit in ("", NONE) else unit
        time = None if time in ("", NONE) else time
        if (unit is None) != (time is None):
            raise HistoryError("choose both a unit column and a time column (or neither)")
        return unit, time

    def _results_header(self) -> QWidget:
        row = QWidget()
        layout = QHBoxLayout(row)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(QLabel("What the history says (check before applying) — figures for"))
        self.window_box = QComboBox()
        self.window_box.addItem(WHOLE)
        self.window_box.setEnabled(False)
        self.window_box.setToolTip("Per row over the whole history, or per unit over its "
                                   "first days (units whose whole window is in the history)")
        self.window_box.currentIndexChanged.connect(self._window_changed)
        layout.addWidget(self.window_box)
        layout.addStretch(1)
        return row

    def _fill_windows(self, summary) -> None:
        self.window_box.blockSignals(True)
        self.window_box.clear()
        self.window_box.addItem(WHOLE)
        for window in summary.windows:
            self.window_box.addItem(window_label(window.days))
        self.window_box.setCurrentIndex(0)
        self.window_box.setEnabled(bool(summary.windows))
        self.window_box.blockSignals(False)
        self.reach_label.setText(reach_line(summary) if summary.reach is not None else "")
        self.reach_label.setVisible(summary.reach is not None)

    def window(self):
        """The window whose figures are shown (None: the whole history)."""
        index = self.window_box.currentIndex()
        if self.summary is None or index <= 0:
            return None
        return self.summary.windows[index - 1]

    def shown(self) -> list[tuple[str, object, str]]:
        """``(name, summary or None, why none)`` per metric, for the chosen figures."""
        window = self.window()
        if window is None:
            return [(m.name, m, "") for m in self.summary.metrics]
        return [(m.name, window.get(m.name), window.problems.get(m.name, "no figures"))
                for m in self.summary.metrics]

    def _window_changed(self, *_args) -> None:
        if self.summary is not None:
            self._fill_results(self.summary, keep_targets=True)
