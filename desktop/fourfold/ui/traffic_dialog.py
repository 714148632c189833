"""Plan → Traffic model…: constant daily units or a reach curve, a ramp-up and a burn-in.

The dialog edits the plan's traffic settings (:mod:`fourfold.plan.traffic`) as one undo step
(:class:`fourfold.plan.settings_commands.SetSettings`; in a scenario, that scenario's change).
The reach curve is a table of days and distinct units: typed, pasted from a spreadsheet or
loaded from a file (a day/units table, or the JSON ``fourfold history … --json`` writes, read
by :mod:`fourfold.plan.traffic_files`), and scaled when the history holds a sample of the
units (Plan → Import history… can set the curve too, with the figures it applies). A
figure shows the eligible and analysed units by day with the duration the plan would get, and
a line the fitted extrapolation with its error; a cell that is not a number, or a curve that
falls, is named under the tables and OK keeps the dialog open.
"""

from __future__ import annotations

import dataclasses

from PySide6.QtCore import QRectF, Qt, QTimer
from PySide6.QtGui import QGuiApplication, QPainter
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QFileDialog,
    QGridLayout,
    QGroupBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPushButton,
    QSpinBox,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from fourfold.errors import FourfoldError
from fourfold.formatting import format_count, format_percent, parse_number
from fourfold.plan import traffic
from fourfold.plan.fields import MAX_DAYS, TRAFFIC_LABELS, TRAFFIC_MODELS, PlanError
from fourfold.plan.settings_commands import SetSettings, checked_settings
from fourfold.plan.traffic_files import read_reach
from fourfold.ui import theme

CURVE_FILTER = "Reach curves (*.json *.csv *.tsv *.txt);;All files (*)"


class TrafficFigure(QWidget):
    """The traffic model's figure (:func:`fourfold.figures.traffic.paint_traffic`)."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.curve: dict = {}
        self.setMinimumHeight(200)

    def show_curve(self, curve: dict) -> None:
        self.curve = curve
        self.update()

    def paintEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        if not self.curve:
            return
        from fourfold.figures.traffic import TrafficStyle, paint_traffic

        palette = self.palette()
        tints = theme.tints()
        style = TrafficStyle(palette.text().color(), tints.muted, palette.mid().color(),
                             tints.accent, tints.binding, points=8.5)
        painter = QPainter(self)
        paint_traffic(painter, QRectF(self.rect()).adjusted(6, 4, -6, -4), self.curve, style)
        painter.end()


def _table(headers: tuple[str, str]) -> QTableWidget:
    table = QTableWidget(0, 2)
    table.setHorizontalHeaderLabels(list(headers))
    table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
    table.verticalHeader().setVisible(False)
    table.verticalHeader().setDefaultSectionSize(table.fontMetrics().height() + 8)
    table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
    return table


def _cell(table: QTableWidget, row: int, column: int) -> str:
    item = table.item(row, column)
    return "" if item is None else item.text().strip()


def _pairs(table: QTableWidget, what: str, second: str, percent: bool) -> list[list[float]]:
    """The table's rows as numbers (empty rows skipped); PlanError naming a bad cell."""
    pairs = []
    for row in range(table.rowCount()):
        day, value = _cell(table, row, 0), _cell(table, row, 1)
        if not day and not value:
            continue
        try:
            pairs.append([parse_number(day, label=f"{what}, row {row + 1}, day"),
                          parse_number(value, percent, label=f"{what}, row {row + 1}, {second}")])
        except FourfoldError as error:
            raise PlanError(str(error), what) from None
    return pairs


class TrafficDialog(QDialog):
    """Edit the traffic model of the plan on show (see the module notes).

    Parameters
    ----------
    document : fourfold.ui.document.PlanDocument
        The open plan; OK applies the values with ``document.apply`` (one undo step).
    """

    def __init__(self, document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.setObjectName("trafficDialog")
        self.setWindowTitle("Traffic model")
        self.resize(760, 720)
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.preview)
        self._build()
        settings = document.plan.settings
        self._fill(settings.traffic, settings.reach, settings.reach_source, settings.ramp,
                   settings.burn_in)
        self.preview()

    # -- layout ------------------------------------------------------------------------------

    def _build(self) -> None:
        layout = QVBoxLayout(self)
        intro = QLabel(
            "How units become days. Constant: the plan's daily units are new units every day. "
            "Reach curve: the distinct units seen in the first d days, from a history with unit "
            "and time columns (people come back, so it grows more slowly than days); beyond its "
            "last day a fitted model extrapolates it, and a duration there is flagged with the "
            "model's stated error. The ramp-up's shares only rise; the burn-in's units are not "
            "analysed.")
        intro.setWordWrap(True)
        layout.addWidget(intro)
        top = QHBoxLayout()
        top.addWidget(QLabel("Model:"))
        self.model_box = QComboBox()
        for value in TRAFFIC_MODELS:
            self.model_box.addItem(TRAFFIC_LABELS[value].capitalize(), value)
        self.model_box.currentIndexChanged.connect(self._model_changed)
        top.addWidget(self.model_box)
        top.addStretch(1)
        top.addWidget(QLabel("Burn-in:"))
        self.burn_in = QSpinBox()
        self.burn_in.setRange(0, MAX_DAYS - 1)
        self.burn_in.setSuffix(" days")
        self.burn_in.setToolTip("Days at the start whose units are not analysed")
        self.burn_in.valueChanged.connect(self._schedule)
        top.addWidget(self.burn_in)
        layout.addLayout(top)

        tables = QHBoxLayout()
        self.reach_group = QGroupBox("Reach curve: distinct eligible units after each day")
        grid = QGridLayout(self.reach_group)
        self.reach_table = _table(("Day", "Distinct units"))
        self.reach_table.itemChanged.connect(self._schedule)
        grid.addWidget(self.reach_table, 0, 0, 1, 4)
        self.add_day = self._button("Add day", lambda: self._add_row(self.reach_table), grid,
                                    1, 0)
        self.remove_days = self._button("Remove", lambda: self._remove(self.reach_table),
                                        grid, 1, 1)
        self.paste_curve = self._button("Paste", self._paste, grid, 1, 2)
        self.load_curve = self._button("Load file…", self._load, grid, 1, 3)
        grid.addWidget(QLabel("Scale ×"), 2, 0)
        self.scale = QLineEdit()
        self.scale.setPlaceholderText("e.g. 20 for a 5 % sample")
        self.scale.setToolTip("Multiply every point: a history of 1 in 20 units needs × 20")
        grid.addWidget(self.scale, 2, 1, 1, 2)
        self.scale_button = self._button("Scale", self._scale, grid, 2, 3)
        grid.addWidget(QLabel("Source"), 3, 0)
        self.source = QLineEdit()
        self.source.setToolTip("Where the curve comes from (shown in the report)")
        grid.addWidget(self.source, 3, 1, 1, 3)
        tables.addWidget(self.reach_group, 3)

        ramp = QGroupBox("Ramp-up: share of traffic up to each day")
        grid = QGridLayout(ramp)
        self.ramp_table = _table(("Up to day", "Share (%)"))
        self.ramp_table.itemChanged.connect(self._schedule)
        grid.addWidget(self.ramp_table, 0, 0, 1, 2)
        self.add_step = self._button("Add step", lambda: self._add_row(self.ramp_table), grid,
                                     1, 0)
        self.remove_steps = self._button("Remove", lambda: self._remove(self.ramp_table),
                                         grid, 1, 1)
        self.after_ramp = QLabel()
        self.after_ramp.setWordWrap(True)
        grid.addWidget(self.after_ramp, 2, 0, 1, 2)
        tables.addWidget(ramp, 2)
        layout.addLayout(tables, 2)

        self.figure = TrafficFigure()
        layout.addWidget(self.figure, 3)
        self.fit_text = QLabel()
        self.fit_text.setWordWrap(True)
        self.fit_text.setObjectName("trafficFit")
        layout.addWidget(self.fit_text)
        self.status = QLabel()
        self.status.setWordWrap(True)
        self.status.setObjectName("trafficStatus")
        layout.addWidget(self.status)
        self.buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok
                                        | QDialogButtonBox.StandardButton.Cancel)
        self.buttons.accepted.connect(self.apply_to_plan)
        self.buttons.rejected.connect(self.reject)
        layout.addWidget(self.buttons)

    def _button(self, text: str, slot, grid: QGridLayout, row: int, column: int) -> QPushButton:
        button = QPushButton(text)
        button.clicked.connect(lambda _checked=False: slot())
        grid.addWidget(button, row, column)
        return button

    # -- contents ----------------------------------------------------------------------------

    def _fill(self, model: str, reach, source: str, ramp, burn_in: int) -> None:
        self.model_box.setCurrentIndex(max(self.model_box.findData(model), 0))
        self._set_rows(self.reach_table, [(f"{day:g}", format_count(units))
                                          for day, units in reach])
        self.source.setText(source)
        self._set_rows(self.ramp_table, [(f"{day:g}", format_percent(share, suffix=""))
                                         for day, share in ramp])
        self.burn_in.setValue(int(burn_in))
        self._model_changed()

    def _set_rows(self, table: QTableWidget, rows) -> None:
        table.blockSignals(True)
        table.setRowCount(0)
        table.setRowCount(len(rows))
        for row, cells in enumerate(rows):
            for column, text in enumerate(cells):
                item = QTableWidgetItem(text)
                item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
                table.setItem(row, column, item)
        table.blockSignals(False)
        self._schedule()

    def set_reach(self, reach, source: str = "") -> None:
        """Show ``reach`` (pairs of day and units) as the curve, and choose the reach model."""
        self._set_rows(self.reach_table, [(f"{day:g}", format_count(units))
                                          for day, units in reach])
        if source:
            self.source.setText(source)
        self.model_box.setCurrentIndex(self.model_box.findData("reach"))

    def values(self) -> dict:
        """The settings the dialog holds, checked; PlanError naming what is wrong."""
        reach = _pairs(self.reach_table, "reach curve", "units", percent=False)
        ramp = _pairs(self.ramp_table, "ramp-up", "share", percent=True)
        model = self.model_box.currentData()
        if model == "reach" and not reach:
            raise PlanError("reach curve: enter at least one day and its distinct units (or "
                            "choose constant daily units)", "reach")
        return checked_settings({"traffic": model, "reach": reach,
                                 "reach_source": self.source.text().strip(), "ramp": ramp,
                                 "burn_in": self.burn_in.value()})

    def _model_changed(self, *_args) -> None:
        used = self.model_box.currentData() == "reach"
        self.reach_group.setTitle("Reach curve: distinct eligible units after each day"
                                  + ("" if used else " (not used by constant traffic; loading "
                                     "or pasting one chooses it)"))
        self._schedule()

    def _schedule(self, *_args) -> None:
        self._timer.start()

    def show_status(self, text: str, error: bool = False) -> None:
        colour = theme.tints().problem.name() if error else ""
        self.status.setStyleSheet(f"color: {colour}" if colour else "")
        self.status.setText(text)

    def preview(self) -> None:
        """Redraw the figure and the lines under it from the dialog's values."""
        from fourfold.export.traffic import curve
        from fourfold.plan.evaluation import compute

        self._timer.stop()
        plan = self.document.plan
        self.after_ramp.setText(f"then the plan's share, {format_percent(plan.settings.share)}")
        try:
            settings = dataclasses.replace(plan.settings, **self.values())
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            self.figure.show_curve({})
            self.fit_text.setText("")
            return
        shown = dataclasses.replace(plan, settings=settings)
        result = compute(shown)
        self.figure.show_curve(curve(shown, result))
        self.fit_text.setText(self._fit_line(settings, result))
        self.show_status(traffic.describe(settings))

    @staticmethod
    def _fit_line(settings, result) -> str:
        """The extrapolation and the duration the plan would get, in words."""
        parts = []
        found = traffic.model(settings)
        if found is not None and settings.traffic == "reach":
            if found.fit is not None:
                fit = found.fit
                parts.append(f"Beyond day {fit.last_day:g}: {fit.describe()}; fit error "
                             f"{fit.rms * 100:.2g} %, stated error {3 * fit.growth * 100:.2g} % "
                             "per day past the curve.")
            else:
                parts.append(f"Not extrapolated: {found.why}.")
        if result.duration_days is not None:
            days = result.duration_days
            flag = " (extrapolated)" if traffic.extrapolated(settings, days) else ""
            parts.append(f"With this traffic the plan runs {days:g} days{flag}.")
        elif result.incomplete:
            parts.append("With this traffic the plan is incomplete: "
                         + result.incomplete_text() + ".")
        return " ".join(parts)

    # -- buttons -----------------------------------------------------------------------------

    def _add_row(self, table: QTableWidget) -> None:
        """A row after the last, its day one more than the last day."""
        last = _cell(table, table.rowCount() - 1, 0) if table.rowCount() else "0"
        try:
            day = f"{parse_number(last) + 1:g}"
        except FourfoldError:
            day = ""
        row = table.rowCount()
        table.insertRow(row)
        table.setItem(row, 0, QTableWidgetItem(day))
        table.setCurrentCell(row, 1)

    def _remove(self, table: QTableWidget) -> None:
        rows = sorted({index.row() for index in table.selectedIndexes()}, reverse=True)
        if not rows and table.currentRow() >= 0:
            rows = [table.currentRow()]
        for row in rows:
            table.removeRow(row)
        self._schedule()

    def _paste(self) -> None:
        """Rows of day and units from the clipboard (a spreadsheet's copy)."""
        from fourfold.plan.traffic_files import parse_reach

        try:
            reach = parse_reach(QGuiApplication.clipboard().text(), "the clipboard")
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        self.set_reach(reach)

    def _load(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Load a reach curve", "", CURVE_FILTER)
        if not path:
            return
        try:
            reach = read_reach(path)
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        from pathlib import Path

        self.set_reach(reach, Path(path).name)

    def _scale(self) -> None:
        try:
            factor = parse_number(self.scale.text(), label="scale")
            if not factor > 0:
                raise PlanError(f"scale must be above 0; got {factor:g}", "scale")
            reach = checked_settings({"reach": _pairs(self.reach_table, "reach curve", "units",
                                                      percent=False)})["reach"]
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        self.set_reach(tuple((day, units * factor) for day, units in reach))
        source = self.source.text().strip()
        self.source.setText(f"{source} × {factor:g}" if source else f"× {factor:g}")
        self.scale.clear()

    def apply_to_plan(self) -> None:
        """OK: the values as one undo step; a refused value keeps the dialog open."""
        try:
            values = self.values()
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        settings = self.document.plan.settings
        changed = {field: value for field, value in values.items()
                   if getattr(settings, field) != value}
        if not changed:
            self.accept()
            return
        if self.document.apply(SetSettings(changed, "Set the traffic model")):
            self.accept()
        else:
            self.show_status("The plan refused the traffic model; nothing was changed.",
                             error=True)
