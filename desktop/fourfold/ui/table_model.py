"""The plan table's model: a thin adapter over the open plan and its command stack.

Edits become :class:`fourfold.plan.commands.SetField` commands (refused values are reported on
the document's status message and change nothing); :meth:`PlanTableModel.sort` reorders the
plan's rows with one :class:`fourfold.plan.commands.ReorderMetrics` command. The model keeps
its own snapshot of the row list so that Qt's row-insert/remove/move notifications always
describe the change as it happens, and it emits one ranged ``dataChanged`` per recompute —
never one per cell, never a reset for an edit.

What the cells show is in :mod:`fourfold.ui.table_display`, sorting in
:mod:`fourfold.ui.table_sorting`, reading edits and pastes in :mod:`fourfold.ui.table_editing`.
"""

from __future__ import annotations

import math
import operator

import numpy as np
from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPointF, Qt
from PySide6.QtGui import QColor, QFont, QIcon, QPainter, QPixmap, QPolygonF

from fourfold.plan import kinds
from fourfold.ui import theme
from fourfold.ui.columns import CHECK, CHOICE, COLUMN_KINDS, COLUMNS, NUMBER, SOLVED_COLUMN
from fourfold.ui.document import PlanDocument
from fourfold.ui.table_display import TableDisplay
from fourfold.ui.table_editing import TableEditing
from fourfold.ui.table_sorting import TableSorting

SORT_ROLE = Qt.ItemDataRole.UserRole + 1
"""Role returning a cell's raw value (numbers as floats, nan when missing) for sorting."""

CHOICES_ROLE = Qt.ItemDataRole.UserRole + 2
"""Role returning a choice cell's allowed values as ``[(label, value), ...]``."""

ROLE = Qt.ItemDataRole
_CACHED_ROLES = frozenset(int(role) for role in (
    ROLE.DisplayRole, ROLE.TextAlignmentRole, ROLE.BackgroundRole, ROLE.ForegroundRole,
    ROLE.FontRole, ROLE.CheckStateRole))
_ANSWERED_ROLES = _CACHED_ROLES | {int(ROLE.EditRole), int(ROLE.ToolTipRole), SORT_ROLE,
                                   CHOICES_ROLE}


def _column_flags(column) -> Qt.ItemFlag:
    base = Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable
    if column.computed:
        return base
    if column.editor == CHECK:
        return base | Qt.ItemFlag.ItemIsUserCheckable
    return base | Qt.ItemFlag.ItemIsEditable


_FLAGS = tuple(_column_flags(column) for column in COLUMNS)


def _marker_icon(colour: QColor) -> QIcon:
    pixmap = QPixmap(16, 16)
    pixmap.fill(Qt.GlobalColor.transparent)
    painter = QPainter(pixmap)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    painter.setPen(Qt.PenStyle.NoPen)
    painter.setBrush(colour)
    painter.drawPolygon(QPolygonF([QPointF(3, 2), QPointF(13, 8), QPointF(3, 14)]))
    painter.end()
    return QIcon(pixmap)


class PlanTableModel(TableDisplay, TableSorting, TableEditing, QAbstractTableModel):
    """One row per metric, one column per input and output (see :mod:`fourfold.ui.columns`).

    Parameters
    ----------
    document : PlanDocument
        The open plan; the model follows its changes and recomputes.
    """

    def __init__(self, document: PlanDocument, parent=None) -> None:
        super().__init__(parent)
        self.document = document
        self._source = document.plan.metrics  # the plan's list of rows that _rows copies
        self._rows = list(self._source)
        self._results = self._result_rows()
        self._binding = self._binding_index()
        self._tints = theme.tints()
        self._marker = _marker_icon(self._tints.binding)
        self._italic = QFont()
        self._italic.setItalic(True)
        self._bold = QFont()
        self._bold.setBold(True)
        self._changes = self.scenario_changes()
        self._scenario_tint = QColor(self._tints.accent)
        self._scenario_tint.setAlpha(45)
        self._cache: dict[int, dict[tuple[int, int], object]] = {}  # row → (column, role)
        self._touched: set[int] | None = set()
        document.changed.connect(self._on_change)
        document.computed.connect(self._on_computed)

    # -- structure -----------------------------------------------------------------------

    def rowCount(self, parent=QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        return 0 if parent.isValid() else len(self._rows)

    def columnCount(self, parent=QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        return 0 if parent.isValid() else len(COLUMNS)

    def _result_rows(self):
        """The document's row results in table order; their powers at the plan's duration go
        to ``_row_powers``, in the same order (a row's power moves with its result when rows
        move before the next recompute). The result's own tuples when they fit the rows (a
        change of rows makes them lists, :meth:`_on_change`)."""
        result = self.document.result
        if result is not None and len(result.rows) == len(self._rows):
            self._row_powers = result.duration_powers
            return result.rows
        rows = list(result.rows) if result is not None else []
        powers = list(result.duration_powers) if result is not None else []
        missing = len(self._rows) - len(rows)
        rows += [None] * missing
        powers += [math.nan] * missing
        self._row_powers = powers[: len(self._rows)]
        return rows[: len(self._rows)]

    def duration_power(self, row: int) -> float:
        """The power of ``row`` at the plan's duration (nan when not known)."""
        return self._row_powers[row]

    def _binding_index(self) -> int | None:
        result = self.document.result
        return None if result is None else result.binding_index

    def _reset_rows(self) -> None:
        self.beginResetModel()
        self._follow_rows()
        self._results = self._result_rows()
        self._binding = self._binding_index()
        self._cache.clear()
        self.endResetModel()

    def _on_change(self, change) -> None:
        kind = change.kind
        self._changes = self.scenario_changes()
        if kind == "cells" and self._touched is not None and not change.settings:
            self._touched.update(change.rows)
            self._forget(change.rows)
        else:
            self._touched = None
            self._cache.clear()
        metrics = self.document.plan.metrics
        if kind in ("rows_inserted", "rows_removed", "rows_moved"):
            self._results, self._row_powers = list(self._results), list(self._row_powers)
        if kind == "rows_inserted":
            for first, last in change.blocks():
                self.beginInsertRows(QModelIndex(), first, last)
                self._rows[first:first] = metrics[first:last + 1]
                self._results[first:first] = [None] * (last - first + 1)
                self._row_powers[first:first] = [math.nan] * (last - first + 1)
                self._cache.clear()
                self.endInsertRows()
        elif kind == "rows_removed":
            for first, last in reversed(change.blocks()):
                self.beginRemoveRows(QModelIndex(), first, last)
                del self._rows[first:last + 1]
                del self._results[first:last + 1]
                del self._row_powers[first:last + 1]
                self._cache.clear()
                self.endRemoveRows()
        elif kind == "rows_moved":
            source, target = change.rows
            if source != target:
                after = target + 1 if target > source else target
                self.beginMoveRows(QModelIndex(), source, source, QModelIndex(), after)
                self._rows.insert(target, self._rows.pop(source))
                self._results.insert(target, self._results.pop(source))
                self._row_powers.insert(target, self._row_powers.pop(source))
                self._cache.clear()
                self.endMoveRows()
        elif kind == "rows_reordered":
            self._reorder(change.rows)
        elif kind == "reset" or len(metrics) != len(self._rows):
            self._reset_rows()
            return
        self._follow_rows(change.rows if kind == "cells" else None)

    def _follow_rows(self, edited=None) -> None:
        """Take the plan's rows: only those ``edited`` in place while the plan's list of rows
        is the one taken last (an edit of one row of a large plan copies no list), all of
        them otherwise."""
        metrics = self.document.plan.metrics
        if edited is not None and metrics is self._source:
            for row in edited:
                self._rows[row] = metrics[row]
        else:
            self._rows, self._source = list(metrics), metrics

    def _reorder(self, order) -> None:
        """Follow a permutation of the rows; persistent indexes (selection, current) follow."""
        self.layoutAboutToBeChanged.emit()
        position = {row: new for new, row in enumerate(order)}
        old = self.persistentIndexList()
        new = [self.index(position[index.row()], index.column()) for index in old]
        self._rows = [self._rows[row] for row in order]
        self._results = [self._results[row] for row in order]
        self._row_powers = [self._row_powers[row] for row in order]
        if self._binding is not None:
            self._binding = position[self._binding]
        self._cache.clear()
        self.changePersistentIndexList(old, new)
        self.layoutChanged.emit()

    def _forget(self, rows) -> None:
        """Drop the cached roles of ``rows``."""
        for row in rows:
            self._cache.pop(row, None)

    def _on_computed(self) -> None:
        touched, self._touched = self._touched, set()
        if len(self._rows) != len(self.document.plan.metrics):
            self._reset_rows()
            return
        old, old_powers = self._results, self._row_powers
        self._follow_rows(())
        self._results = self._result_rows()
        binding = self._binding_index()
        if not self._rows:
            self._cache.clear()
            self._binding = binding
            return
        last = len(self._rows) - 1
        if touched is None or binding != self._binding or self.document.result is None:
            first = 0
            self._cache.clear()
        else:
            moved = self.document.changed_rows()
            if moved is None:
                # the document's row cache hands back the same RowResult for an unchanged
                # row; a row is changed too when its power at the plan's duration is (nan
                # equal to nan)
                size = len(self._rows)
                found = np.fromiter(map(operator.is_not, old, self._results), bool, size)
                before, after = np.array(old_powers, dtype=float), np.array(self._row_powers,
                                                                          dtype=float)
                found |= (before != after) & ~(np.isnan(before) & np.isnan(after))
                moved = np.flatnonzero(found).tolist()
            touched.update(moved)
            if not touched:
                return
            first, last = min(touched), max(touched)
            self._forget(touched)
        self.dataChanged.emit(self.index(first, 0), self.index(last, len(COLUMNS) - 1))
        if binding != self._binding:
            self.headerDataChanged.emit(Qt.Orientation.Vertical, 0, len(self._rows) - 1)
        self._binding = binding

    def set_dark(self, dark: bool) -> None:
        """Follow a change of the colour scheme."""
        self._tints = theme.tints(dark)
        self._marker = _marker_icon(self._tints.binding)
        self._scenario_tint = QColor(self._tints.accent)
        self._scenario_tint.setAlpha(45)
        self._cache.clear()
        if self._rows:
            self.dataChanged.emit(self.index(0, 0), self.index(len(self._rows) - 1,
                                                               len(COLUMNS) - 1))

    # -- reading ------------------------------------------------------------------------

    def metric(self, row: int):
        """The metric shown in ``row``."""
        return self._rows[row]

    def row_result(self, row: int):
        """The computed result of ``row`` (None before the first recompute or on failure)."""
        return self._results[row]

    def is_solved(self, row: int, column: int) -> bool:
        """Whether the cell shows the quantity its row solves for."""
        return COLUMNS[column].key in SOLVED_COLUMN.get(self._solved(row), ())

    def _reason(self, row: int) -> str:
        result = self._results[row]
        if result is None:
            return self.document.compute_error or "not computed yet"
        return result.reason

    def _solved(self, row: int) -> str:
        """What the row computes (a fixed runtime turns sample-size rows into effect rows)."""
        result = self._results[row]
        return result.solved if result is not None else self._rows[row].solve

    def _is_unused(self, row: int, key: str) -> bool:
        metric = self._rows[row]
        if key == "effect":
            return self._solved(row) == "detectable_effect"
        if key == "margin":
            return self._solved(row) == "detectable_margin"
        if key == "n":
            return (metric.solve == "sample_size"
                    or self.document.plan.settings.runtime_days is not None)
        if key == "sd":
            return metric.kind in ("proportion", *kinds.DERIVED_SD)
        column = COLUMN_KINDS.get(key)
        return column is not None and column != metric.kind

    def data(self, index, role=ROLE.DisplayRole):
        role = int(role)
        if role not in _ANSWERED_ROLES or not index.isValid():
            return None
        row, column = index.row(), index.column()
        if role not in _CACHED_ROLES:
            return self._value(row, column, role)
        return self.cell(row, column, role)

    def cell(self, row: int, column: int, role: int):
        """One display role of one cell (text, alignment, colours, font, check state), as
        :meth:`data` gives it, without a model index: what the view measures with."""
        cells = self._cache.get(row)
        if cells is None:
            cells = self._cache[row] = {}
        key = (column, role)
        try:
            return cells[key]
        except KeyError:
            value = cells[key] = self._value(row, column, role)
            return value

    def _value(self, row: int, column: int, role: int):
        """One role of one cell (the uncached work behind :meth:`data`)."""
        col = COLUMNS[column]
        if role == ROLE.DisplayRole:
            return self.display_text(row, column)
        if role == ROLE.EditRole:
            return self.edit_text(row, column)
        if role == SORT_ROLE:
            return self.sort_value(row, column)
        if role == ROLE.CheckStateRole and col.editor == CHECK:
            checked = bool(getattr(self._rows[row], col.key))
            return Qt.CheckState.Checked if checked else Qt.CheckState.Unchecked
        if role == ROLE.ToolTipRole:
            return self._tooltip(row, column)
        if role == ROLE.TextAlignmentRole:
            if col.editor == NUMBER or col.computed:
                return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            return int(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter)
        if role == ROLE.BackgroundRole:
            if self.is_solved(row, column):
                return self._tints.solved
            if col.computed:
                return self._tints.computed
            if self.changed_here(row, col.key):
                return self._scenario_tint
            return None
        if role == ROLE.ForegroundRole:
            return self._foreground(row, column)
        if role == ROLE.FontRole:
            if self.is_solved(row, column):
                return self._bold
            if col.computed:
                return self._italic
            if col.key in ("alpha", "power") and getattr(self._rows[row], col.key) is None:
                return self._italic
            if col.key == "method" and self._rows[row].method is None:
                return self._italic
            return None
        if role == CHOICES_ROLE and col.editor == CHOICE:
            return self.choices(row, column)
        return None

    def flags(self, index):
        if not index.isValid():
            return Qt.ItemFlag.NoItemFlags
        return _FLAGS[index.column()]
