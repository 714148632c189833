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
DISPLAY, _EDIT, _TOOLTIP = int(ROLE.DisplayRole), int(ROLE.EditRole), int(ROLE.ToolTipRole)
_ALIGNMENT, _CHECK_STATE = int(ROLE.TextAlignmentRole), int(ROLE.CheckStateRole)
_FONT, _BACKGROUND, _FOREGROUND = int(ROLE.FontRole), int(ROLE.BackgroundRole), \
    int(ROLE.ForegroundRole)
_STYLE_ROLES = {_FONT: 0, _BACKGROUND: 1, _FOREGROUND: 2}
"""The roles :meth:`PlanTableModel._style` gives, and their place in what it returns."""
_UNCACHED_ROLES = frozenset({_EDIT, _TOOLTIP, SORT_ROLE, CHOICES_ROLE})
"""Roles worked out on each request (editors, tooltips, sorting); every other role a view asks
for is kept per cell until the row changes (None for the roles the table does not answer)."""
_SPAN = len(COLUMNS)
"""A cached role's key in its row's dict is ``role * _SPAN + column`` (one int, no tuple)."""
_MISSING = object()
_RIGHT = int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
_LEFT = int(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter)
_ALIGNMENTS = tuple(_RIGHT if column.editor == NUMBER or column.computed else _LEFT
                    for column in COLUMNS)
_COMPUTED = tuple(column.computed for column in COLUMNS)
_BLANK = {
    **{_ALIGNMENT * _SPAN + position: alignment for position, alignment in enumerate(_ALIGNMENTS)},
    **{int(ROLE.DecorationRole) * _SPAN + position: None for position in range(_SPAN)},
    **{_CHECK_STATE * _SPAN + position: None for position, column in enumerate(COLUMNS)
       if column.editor != CHECK},
}
"""The roles of a row's cells that its values do not decide (the alignment, no icon, no check
box), with which a row's kept roles start: the view's first paint of a cell finds them kept."""


def _column_flags(column) -> Qt.ItemFlag:
    base = Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable
    if column.computed:
        return base
    if column.editor == CHECK:
        return base | Qt.ItemFlag.ItemIsUserCheckable
    return base | Qt.ItemFlag.ItemIsEditable


_FLAGS = dict(enumerate(_column_flags(column) for column in COLUMNS))
"""Flags by column position (an invalid index, column -1, has none)."""
_NO_FLAGS = Qt.ItemFlag.NoItemFlags


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

    def data(self, index, role=DISPLAY):
        # the view asks for seven roles of every cell it paints: a kept role is two look-ups
        cells = self._cache.get(index.row())
        if cells is not None:
            value = cells.get(role * _SPAN + index.column(), _MISSING)
            if value is not _MISSING:
                return value
        if not index.isValid():
            return None
        role = int(role)
        if role in _UNCACHED_ROLES:
            return self._value(index.row(), index.column(), role)
        return self.cell(index.row(), index.column(), role)

    def cell(self, row: int, column: int, role: int):
        """One display role of one cell (text, alignment, colours, font, check state), as
        :meth:`data` gives it, without a model index: what the view measures with."""
        cells = self._cache.get(row)
        if cells is None:
            cells = self._cache[row] = _BLANK.copy()
        key = role * _SPAN + column
        value = cells.get(key, _MISSING)
        if value is _MISSING:
            if role in _STYLE_ROLES and role != _FONT:  # asked for together when painted
                font, background, foreground = self._style(row, column)
                cells[_FONT * _SPAN + column] = font
                cells[_BACKGROUND * _SPAN + column] = background
                cells[_FOREGROUND * _SPAN + column] = foreground
                return cells[key]
            value = cells[key] = self._value(row, column, role)
        return value

    def _style(self, row: int, column: int) -> tuple:
        """A cell's font, background and text colour (None where the view's own)."""
        key = COLUMNS[column].key
        solved = key in SOLVED_COLUMN.get(self._solved(row), ())
        if solved:
            background = self._tints.solved
        elif _COMPUTED[column]:
            background = self._tints.computed
        else:
            background = self._scenario_tint if self.changed_here(row, key) else None
        return self._font(row, column, solved), background, self._foreground(row, column)

    def _font(self, row: int, column: int, solved: bool) -> QFont | None:
        """A cell's font: bold where the row's solved quantity, italic for results, plan
        defaults and usual methods (None: the view's font)."""
        if solved:
            return self._bold
        if _COMPUTED[column]:
            return self._italic
        key = COLUMNS[column].key
        if key in ("alpha", "power") and getattr(self._rows[row], key) is None:
            return self._italic
        if key == "method" and self._rows[row].method is None:
            return self._italic
        return None

    def _value(self, row: int, column: int, role: int):
        """One role of one cell (the uncached work behind :meth:`data`)."""
        if role == DISPLAY:
            return self.display_text(row, column)
        if role == _ALIGNMENT:
            return _ALIGNMENTS[column]
        if role == _FONT:  # alone: what widen_columns measures off screen with
            return self._font(row, column, self.is_solved(row, column))
        if role in _STYLE_ROLES:
            return self._style(row, column)[_STYLE_ROLES[role]]
        col = COLUMNS[column]
        if role == _CHECK_STATE:
            if col.editor != CHECK:
                return None
            checked = bool(getattr(self._rows[row], col.key))
            return Qt.CheckState.Checked if checked else Qt.CheckState.Unchecked
        if role == _EDIT:
            return self.edit_text(row, column)
        if role == SORT_ROLE:
            return self.sort_value(row, column)
        if role == _TOOLTIP:
            return self._tooltip(row, column)
        if role == CHOICES_ROLE and col.editor == CHOICE:
            return self.choices(row, column)
        return None

    def flags(self, index):
        return _FLAGS.get(index.column(), _NO_FLAGS)
