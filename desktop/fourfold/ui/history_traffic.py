"""The history dialog's units over time: the unit and time columns, the reach line, the
choice of figures — the whole history, or each unit's first 7, 14, 21, 28 days — and what of
the traffic goes into the plan.

With a unit and a time column, the import (file, DuckDB or warehouse) also finds the reach
curve and the metrics over each unit's first days (:mod:`fourfold.history.exposure`); the
window chosen here is what the results table shows and what is applied to the rows' own
figures. Applied, every row also keeps its figures over each window
(:attr:`fourfold.plan.Metric.windows`), and two choices take the traffic into the plan in the
same undo step: **use the reach curve as the plan's traffic** (scaled when the history holds a
sample of the units) and **rows follow the window that matches the plan's duration**
(:mod:`fourfold.plan.windows`). Both read the import's result as its JSON
(:meth:`~fourfold.history.HistorySummary.to_dict`) through :mod:`fourfold.plan.traffic_files`,
as the traffic dialog reads a file that ``fourfold history … --json`` wrote.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtWidgets import QCheckBox, QComboBox, QHBoxLayout, QLabel, QLineEdit, QWidget

from fourfold.errors import FourfoldError
from fourfold.formatting import parse_number
from fourfold.history import HistoryError
from fourfold.history.text import reach_line
from fourfold.plan.traffic_files import history_reach, history_windows
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

    def _plan_traffic_row(self) -> QWidget:
        row = QWidget()
        layout = QHBoxLayout(row)
        layout.setContentsMargins(0, 0, 0, 0)
        self.use_reach_box = QCheckBox("Use this reach curve as the plan's traffic, units ×")
        self.use_reach_box.setToolTip("Applied with the figures (one undo step): the plan's "
                                      "traffic model becomes this reach curve, its points "
                                      "multiplied by the factor")
        layout.addWidget(self.use_reach_box)
        self.reach_scale = QLineEdit("1")
        self.reach_scale.setMaximumWidth(80)
        self.reach_scale.setToolTip("A history of 1 in 20 units needs × 20; to match the "
                                    "plan's daily units, their number over the history's "
                                    "distinct units on an average day")
        layout.addWidget(self.reach_scale)
        self.reach_scale.setEnabled(False)
        self.use_reach_box.toggled.connect(lambda on: self.reach_scale.setEnabled(on))
        self.follow_box = QCheckBox("Rows follow the window that matches the plan's duration")
        self.follow_box.setToolTip("Each row keeps its figures over each window; ticked, it "
                                   "takes its baseline and sd from the window as long as the "
                                   "plan's duration (the table's By window column)")
        layout.addWidget(self.follow_box)
        layout.addStretch(1)
        self.plan_traffic_row = row
        row.setVisible(False)
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
        self.plan_traffic_row.setVisible(summary.reach is not None)
        self.follow_box.setEnabled(bool(summary.windows))

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

    def row_windows(self) -> dict[str, tuple[dict, ...]] | None:
        """Each metric's windows as a row keeps them (None: the import has no windows)."""
        if self.summary is None or self.summary.reach is None:
            return None
        data = self.summary.to_dict()
        return {metric.name: history_windows(data, metric.name)
                for metric in self.summary.metrics}

    def plan_traffic(self) -> dict | None:
        """The traffic settings the import brings (None: the plan's traffic stays);
        FourfoldError for a scale that is not a number above 0."""
        summary = self.summary
        if summary is None or summary.reach is None or not self.use_reach_box.isChecked():
            return None
        source = Path(summary.source).name
        try:
            scale = parse_number(self.reach_scale.text(), label="reach curve's units ×")
        except FourfoldError as error:
            raise HistoryError(str(error)) from None
        if not scale > 0:
            raise HistoryError(f"reach curve's units × must be above 0; got {scale:g}")
        reach = history_reach(summary.to_dict(), source)
        how = "" if summary.reach.exact else (
            f", HyperLogLog ±{100 * summary.reach.relative_error:.2g} %")
        times = "" if scale == 1 else f" × {scale:g}"
        return {"traffic": "reach",
                "reach": tuple((day, units * scale) for day, units in reach),
                "reach_source": f"{source}, distinct units by first day{how}{times}"[:200]}
