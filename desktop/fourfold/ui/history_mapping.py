"""The history dialog's table of columns to read: one line per metric, with kind, ratio
denominator, pre-period column and cap (a quantile's percentile in the same cell), read back as
:class:`fourfold.history.ColumnMap`.
"""

from __future__ import annotations

from PySide6.QtWidgets import QComboBox

from fourfold.history import HISTORY_KINDS, ColumnMap, HistoryError

NONE = "—"
CAP_CHOICES = ("no cap", "99", "99.5", "99.9", "99.99")
MAP_COLUMNS = ("Column", "Kind", "Denominator", "Pre-period", "Cap / quantile (percentile)")


def combo(items, current: str | None = None, editable: bool = False) -> QComboBox:
    box = QComboBox()
    box.addItems(list(items))
    box.setEditable(editable)
    if current is not None:
        box.setCurrentText(current)
    return box


class HistoryMapping:
    """The mapping table of :class:`fourfold.ui.history_dialog.HistoryDialog`."""

    def add_mapping_row(self, spec: ColumnMap | None) -> None:
        row = self.map_table.rowCount()
        self.map_table.insertRow(row)
        choices = self.columns or [""]
        column = combo(choices, spec.column if spec else None, editable=True)
        kind = combo(HISTORY_KINDS, spec.kind if spec else "mean")
        denominator = combo([NONE, *self.columns], spec.denominator if spec else NONE,
                             editable=True)
        pre = combo([NONE, *self.columns], spec.pre if spec and spec.pre else NONE,
                     editable=True)
        percentile = spec.cap if spec and spec.cap else None
        if spec and spec.level is not None:
            percentile = 100 * spec.level
        cap = combo(CAP_CHOICES, CAP_CHOICES[0] if percentile is None else f"{percentile:g}",
                    editable=True)
        cap.setToolTip("A cap: winsorise the column at this percentile. For a quantile: "
                       "which one (95 for the p95).")
        for index, widget in enumerate((column, kind, denominator, pre, cap)):
            self.map_table.setCellWidget(row, index, widget)
            if isinstance(widget, QComboBox):
                widget.currentTextChanged.connect(self._mapping_changed)
        self._mapping_changed()

    def remove_mapping_rows(self) -> None:
        rows = sorted({index.row() for index in self.map_table.selectedIndexes()}, reverse=True)
        if not rows and self.map_table.rowCount():
            rows = [self.map_table.rowCount() - 1]
        for row in rows:
            self.map_table.removeRow(row)
        self._mapping_changed()

    def _mapping_changed(self, *_args) -> None:
        for row in range(self.map_table.rowCount()):
            kind = self._cell_text(row, 1)
            self.map_table.cellWidget(row, 2).setEnabled(kind == "ratio")
            self.map_table.cellWidget(row, 3).setEnabled(kind not in ("ratio", "quantile"))
            self.map_table.cellWidget(row, 4).setEnabled(self._cell_text(row, 1) != "proportion")
        self._update_buttons()

    def _cell_text(self, row: int, column: int) -> str:
        widget = self.map_table.cellWidget(row, column)
        return widget.currentText().strip() if widget is not None else ""

    def mapping(self) -> list[ColumnMap]:
        """The mapping as the table shows it; HistoryError naming the line at fault."""
        specs = []
        for row in range(self.map_table.rowCount()):
            kind = self._cell_text(row, 1)
            denominator = self._cell_text(row, 2) if kind == "ratio" else NONE
            pre = self._cell_text(row, 3) if kind not in ("ratio", "quantile") else NONE
            cap_text = self._cell_text(row, 4) if kind != "proportion" else CAP_CHOICES[0]
            cap = None
            if cap_text and cap_text != CAP_CHOICES[0]:
                try:
                    cap = float(cap_text.rstrip("%").replace(",", "."))
                except ValueError:
                    raise HistoryError(
                        f"metric line {row + 1}: the cap must be a percentile such as 99.9, "
                        f"not {cap_text!r}"
                    ) from None
            if kind == "ratio" and denominator == NONE:
                raise HistoryError(f"metric line {row + 1}: choose the ratio's denominator")
            level = None
            if kind == "quantile":
                if cap is None:
                    raise HistoryError(f"metric line {row + 1}: type the quantile's percentile "
                                       "in the last cell (95 for the p95)")
                level, cap = cap / 100.0, None
            specs.append(ColumnMap(
                kind, self._cell_text(row, 0),
                denominator=None if denominator == NONE else denominator,
                pre=None if pre == NONE else pre, cap=cap, level=level,
            ))
        return specs
