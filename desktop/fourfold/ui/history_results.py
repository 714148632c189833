"""What the history import found, per metric, and the one command that applies it to the plan.

Each result goes to a plan row or to a new row; all to new rows or all to existing rows, so
that one Undo takes the import back.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QTableWidgetItem

from fourfold.errors import FourfoldError
from fourfold.history import HistoryError, HistorySummary
from fourfold.history.text import number
from fourfold.plan import Metric
from fourfold.plan.commands import InsertMetrics, SetFields
from fourfold.plan.settings_commands import SetSettings, WithSettings
from fourfold.ui.history_mapping import combo
from fourfold.ui.history_traffic import WHOLE

NEW_ROW = "new row"
RESULT_COLUMNS = ("Metric", "n", "Missing", "Mean", "sd", "ρ", "Cap value", "Capped",
                  "Variance ×", "Plan row")


def display_name(name: str) -> str:
    return name.replace(":", " / ")


class HistoryResults:
    """The results table and applying of :class:`fourfold.ui.history_dialog.HistoryDialog`."""

    def _clear_results(self) -> None:
        self.summary = None
        self.result_table.setRowCount(0)
        self.window_box.clear()
        self.window_box.addItem(WHOLE)
        self.window_box.setEnabled(False)
        self.reach_label.setVisible(False)
        self.plan_traffic_row.setVisible(False)
        self._update_buttons()

    def _fill_results(self, summary: HistorySummary, keep_targets: bool = False) -> None:
        names = [metric.name for metric in self.document.plan.metrics]
        targets = self.targets() if keep_targets else []
        shown = self.shown()
        self.result_table.setRowCount(0)  # drops the old rows' plan-row boxes
        self.result_table.setRowCount(len(shown))
        for row, (name, metric, why) in enumerate(shown):
            kind = summary[name].kind
            if metric is None:
                cells = [f"{display_name(name)} ({kind})", "–", "–", "–", "–", "–", "–", "–",
                         "–"]
            else:
                cap = metric.cap
                cells = [
                    f"{display_name(name)} ({kind})",
                    f"{metric.n:,}",
                    f"{metric.missing:,}",
                    number(metric.mean),
                    "–" if metric.kind == "proportion" else number(metric.sd),
                    number(metric.rho, 3),
                    "–" if cap is None else number(cap.threshold) + ("" if cap.exact else " ≈"),
                    "–" if cap is None else f"{cap.capped:,}",
                    "–" if cap is None else number(cap.variance_ratio(metric.sd), 3),
                ]
            for column, text in enumerate(cells):
                item = QTableWidgetItem(text)
                if column:
                    item.setTextAlignment(Qt.AlignmentFlag.AlignRight
                                          | Qt.AlignmentFlag.AlignVCenter)
                if metric is None:
                    item.setToolTip(why)
                elif metric.cap is not None and column >= 6:
                    item.setToolTip(
                        f"sd {number(metric.cap.sd_uncapped)} → {number(metric.sd)}; mean "
                        f"{number(metric.cap.mean_uncapped)} → {number(metric.mean)}"
                    )
                self.result_table.setItem(row, column, item)
            target = combo([NEW_ROW, *names])
            if row < len(targets) and targets[row] is not None:
                target.setCurrentIndex(targets[row] + 1)
            target.currentTextChanged.connect(self._update_buttons)
            self.result_table.setCellWidget(row, len(RESULT_COLUMNS) - 1, target)
        self._update_buttons()

    def targets(self) -> list[int | None]:
        """The plan row each result goes to (None: a new row), in result order."""
        out: list[int | None] = []
        for row in range(self.result_table.rowCount()):
            box = self.result_table.cellWidget(row, len(RESULT_COLUMNS) - 1)
            index = box.currentIndex()
            out.append(None if index <= 0 else index - 1)
        return out

    def set_target(self, result_row: int, plan_row: int | None) -> None:
        """Send one result to a plan row (None: a new row)."""
        box = self.result_table.cellWidget(result_row, len(RESULT_COLUMNS) - 1)
        box.setCurrentIndex(0 if plan_row is None else plan_row + 1)

    def command(self):
        """The one command that applies the shown figures (with the rows' windows, and the
        reach curve as the plan's traffic when asked); HistoryError when targets are mixed
        or a metric has no figures for the chosen window."""
        if self.summary is None:
            raise HistoryError("read the history file first")
        targets = self.targets()
        source = Path(self.summary.source).name
        chosen = self.window()
        where = "" if chosen is None else f", over each unit's first {chosen.days} days"
        metrics = []
        for name, metric, why in self.shown():
            if metric is None:
                raise HistoryError(f"{display_name(name)} has no figures for "
                                   f"{self.window_box.currentText()}: {why}")
            metrics.append(metric)
        traffic = self.plan_traffic()
        windows = self.row_windows()
        fields = [{**metric.plan_fields(), **self._window_fields(windows, metric.name)}
                  for metric in metrics]
        if all(target is None for target in targets):
            rows = []
            for metric, values in zip(metrics, fields, strict=True):
                notes = f"{metric.describe()[:-1]}{where}. ({source})"
                rows.append(Metric(name=display_name(metric.name)[:200], notes=notes, **values))
            command = InsertMetrics(len(self.document.plan.metrics), rows)
            command.text = f"Import history into {len(rows)} new rows"
            return self._with_traffic(command, traffic)
        if any(target is None for target in targets):
            raise HistoryError(
                "send every metric to an existing row, or every metric to a new row, so that "
                "one Undo takes the import back"
            )
        if len(set(targets)) != len(targets):
            raise HistoryError("two metrics are sent to the same plan row")
        plan = self.document.plan
        edits = [
            (target, field, value)
            for values, target in zip(fields, targets, strict=True)
            for field, value in values.items()
            if field not in ("windows", "windowed") or value or plan.metrics[target].windows
        ]
        command = SetFields(edits, text=f"Import history into {len(targets)} rows")
        return self._with_traffic(command, traffic)

    def _window_fields(self, windows: dict | None, name: str) -> dict:
        """A row's windows and whether it follows them: this import's (none without a unit
        and time column: a row's windows from another history would not match its figures)."""
        found = (windows or {}).get(name, ())
        follow = bool(found) and self.follow_box.isEnabled() and self.follow_box.isChecked()
        return {"windows": found, "windowed": follow}

    @staticmethod
    def _with_traffic(command, traffic: dict | None):
        if traffic is None:
            return command
        text = f"{command.text} and use its reach curve"
        return WithSettings(command, SetSettings(traffic, "Use the reach curve"), text)

    def apply_to_plan(self) -> None:
        try:
            command = self.command()
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        if self.document.apply(command):
            self.accept()
        else:
            self.show_status("The plan refused the values; nothing was changed.", error=True)
