"""Sorting the plan table: what a sort by a column compares, and the one undoable reorder.

Numbers compare as raw values, choices by the label shown, text without regard to case, ticks
as unticked before ticked; blank and "—" cells go last either way. A sort reorders the plan's
rows with one :class:`fourfold.plan.commands.ReorderMetrics` command.
"""

from __future__ import annotations

import math

from PySide6.QtCore import Qt

from fourfold.plan.commands import ReorderMetrics
from fourfold.ui import cells, simulation_cells
from fourfold.ui.columns import CHECK, CHOICE, COLUMNS, NUMBER, TEXT


class TableSorting:
    """Sort keys and the sort of :class:`fourfold.ui.table_model.PlanTableModel`."""

    def sort_value(self, row: int, column: int):
        """The raw value of a cell: numbers as floats (nan when missing), text as text."""
        metric = self._rows[row]
        col = COLUMNS[column]
        if col.key == simulation_cells.KEY:
            return simulation_cells.number(metric)
        if col.key == "power_at_duration":
            return self.duration_power(row) if not self._reason(row) else math.nan
        if col.computed:
            return cells.output_number(metric, self._results[row], col.key)
        value = getattr(metric, col.key)
        if value is None and col.key in ("alpha", "power"):
            value = getattr(self.document.plan.settings, col.key)  # the default it shows
        if col.editor == NUMBER:
            return math.nan if value is None else float(value)
        if col.editor == CHECK:
            return bool(value)
        return "" if value is None else value

    def sort_key(self, row: int, column: int):
        """What a sort by ``column`` compares for ``row``; None for a blank or "—" cell.

        Numbers compare as raw values (:meth:`sort_value`), choices by the label shown, text
        without regard to case, ticks as unticked before ticked.
        """
        col = COLUMNS[column]
        if col.editor == CHECK and not col.computed:
            return bool(getattr(self._rows[row], col.key))
        shown = self.display_text(row, column)
        if not shown.strip() or shown == cells.DASH:
            return None
        if col.editor in (TEXT, CHOICE) and not col.computed:
            return shown.casefold()
        value = self.sort_value(row, column)
        return None if math.isnan(value) else value

    def sort_order(self, column: int, descending: bool = False) -> list[int]:
        """The rows sorted by ``column``: a stable sort, blank and "—" cells last either way.

        Returns the permutation: entry ``i`` is the row that goes to position ``i``.
        """
        keys = [self.sort_key(row, column) for row in range(len(self._rows))]
        filled = [row for row, key in enumerate(keys) if key is not None]
        filled.sort(key=keys.__getitem__, reverse=descending)
        return filled + [row for row, key in enumerate(keys) if key is None]

    def sort(self, column: int, order=Qt.SortOrder.AscendingOrder) -> None:
        """Reorder the plan's rows by ``column`` as one undoable command (Qt's sort hook).

        A column of -1 (Qt clearing its sort indicator) does nothing; so does a sort that would
        leave every row where it is.
        """
        if not 0 <= column < len(COLUMNS) or not self._rows:
            return
        if self.document.pending():
            self.document.recompute_now()  # sort on the results of the latest edit
        descending = Qt.SortOrder(order) == Qt.SortOrder.DescendingOrder
        permutation = self.sort_order(column, descending)
        direction = ", descending" if descending else ""
        if permutation == list(range(len(self._rows))):
            self.document.message.emit(
                f"The rows are already sorted by {COLUMNS[column].label}{direction}")
            return
        self.document.apply(ReorderMetrics(
            permutation, text=f"Sort rows by {COLUMNS[column].label}{direction}"))
