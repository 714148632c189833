"""The plan table's model: a thin adapter over the open plan and its command stack.

Edits become :class:`fourfold.plan.commands.SetField` commands (refused values are reported on
the document's status message and change nothing); :meth:`PlanTableModel.sort` reorders the
plan's rows with one :class:`fourfold.plan.commands.ReorderMetrics` command. The model keeps
its own snapshot of the row list so that Qt's row-insert/remove/move notifications always
describe the change as it happens, and it emits one ranged ``dataChanged`` per recompute —
never one per cell, never a reset for an edit.
"""

from __future__ import annotations

import dataclasses
import math

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPointF, Qt
from PySide6.QtGui import QColor, QFont, QIcon, QPainter, QPixmap, QPolygonF

from fourfold.errors import FourfoldError
from fourfold.plan import CHOICES, Metric
from fourfold.plan.commands import ReorderMetrics, SetField
from fourfold.ui import cells, simulation_cells, theme
from fourfold.ui.columns import CHECK, CHOICE, COLUMNS, NUMBER, SOLVED_COLUMN, TEXT
from fourfold.ui.document import PlanDocument

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


@dataclasses.dataclass(frozen=True)
class PasteEdits:
    """A pasted block read by :meth:`PlanTableModel.paste_edits`.

    Attributes
    ----------
    edits : list of (row, field, value)
        One per writable cell, rows below the table included.
    new_rows : int
        Rows to add below the last one so that every pasted line has a row.
    computed : int
        Cells that fell on computed columns (ignored).
    dropped : int
        Cells right of the last column (dropped).
    errors : list of str
        One message per cell whose text could not be read.
    """

    edits: list
    new_rows: int
    computed: int
    dropped: int
    errors: list


class PlanTableModel(QAbstractTableModel):
    """One row per metric, one column per input and output (see :mod:`fourfold.ui.columns`).

    Parameters
    ----------
    document : PlanDocument
        The open plan; the model follows its changes and recomputes.
    """

    def __init__(self, document: PlanDocument, parent=None) -> None:
        super().__init__(parent)
        self.document = document
        self._rows = list(document.plan.metrics)
        self._results = self._result_rows()
        self._binding = self._binding_index()
        self._tints = theme.tints()
        self._marker = _marker_icon(self._tints.binding)
        self._italic = QFont()
        self._italic.setItalic(True)
        self._bold = QFont()
        self._bold.setBold(True)
        self._cache: dict[int, dict[tuple[int, int], object]] = {}  # row → (column, role)
        self._touched: set[int] | None = set()
        document.changed.connect(self._on_change)
        document.computed.connect(self._on_computed)

    # -- structure -----------------------------------------------------------------------

    def rowCount(self, parent=QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        return 0 if parent.isValid() else len(self._rows)

    def columnCount(self, parent=QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        return 0 if parent.isValid() else len(COLUMNS)

    def _result_rows(self) -> list:
        result = self.document.result
        rows = list(result.rows) if result is not None else []
        rows += [None] * (len(self._rows) - len(rows))
        return rows[: len(self._rows)]

    def _binding_index(self) -> int | None:
        result = self.document.result
        return None if result is None else result.binding_index

    def _reset_rows(self) -> None:
        self.beginResetModel()
        self._rows = list(self.document.plan.metrics)
        self._results = self._result_rows()
        self._binding = self._binding_index()
        self._cache.clear()
        self.endResetModel()

    def _on_change(self, change) -> None:
        kind = change.kind
        if kind == "cells" and self._touched is not None:
            self._touched.update(change.rows)
            self._forget(change.rows)
        else:
            self._touched = None
            self._cache.clear()
        metrics = self.document.plan.metrics
        if kind == "rows_inserted":
            for first, last in change.blocks():
                self.beginInsertRows(QModelIndex(), first, last)
                self._rows[first:first] = metrics[first:last + 1]
                self._results[first:first] = [None] * (last - first + 1)
                self._cache.clear()
                self.endInsertRows()
        elif kind == "rows_removed":
            for first, last in reversed(change.blocks()):
                self.beginRemoveRows(QModelIndex(), first, last)
                del self._rows[first:last + 1]
                del self._results[first:last + 1]
                self._cache.clear()
                self.endRemoveRows()
        elif kind == "rows_moved":
            source, target = change.rows
            if source != target:
                after = target + 1 if target > source else target
                self.beginMoveRows(QModelIndex(), source, source, QModelIndex(), after)
                self._rows.insert(target, self._rows.pop(source))
                self._results.insert(target, self._results.pop(source))
                self._cache.clear()
                self.endMoveRows()
        elif kind == "rows_reordered":
            self._reorder(change.rows)
        elif kind == "reset" or len(metrics) != len(self._rows):
            self._reset_rows()
            return
        self._rows = list(metrics)

    def _reorder(self, order) -> None:
        """Follow a permutation of the rows; persistent indexes (selection, current) follow."""
        self.layoutAboutToBeChanged.emit()
        position = {row: new for new, row in enumerate(order)}
        old = self.persistentIndexList()
        new = [self.index(position[index.row()], index.column()) for index in old]
        self._rows = [self._rows[row] for row in order]
        self._results = [self._results[row] for row in order]
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
        old = self._results
        self._rows = list(self.document.plan.metrics)
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
            # the document's row cache hands back the same RowResult for an unchanged row
            touched.update(i for i, (a, b) in enumerate(zip(old, self._results, strict=True))
                           if a is not b)
            if not touched:
                return
            first, last = min(touched), max(touched)
            self._forget(range(first, last + 1))
        self.dataChanged.emit(self.index(first, 0), self.index(last, len(COLUMNS) - 1))
        if binding != self._binding:
            self.headerDataChanged.emit(Qt.Orientation.Vertical, 0, len(self._rows) - 1)
        self._binding = binding

    def set_dark(self, dark: bool) -> None:
        """Follow a change of the colour scheme."""
        self._tints = theme.tints(dark)
        self._marker = _marker_icon(self._tints.binding)
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
        if key == "n":
            return (metric.solve == "sample_size"
                    or self.document.plan.settings.runtime_days is not None)
        return key == "sd" and metric.kind == "proportion"

    def _default_text(self, key: str) -> str:
        settings = self.document.plan.settings
        return cells.format_number(getattr(settings, key), sig=3)

    def display_text(self, row: int, column: int) -> str:
        """The text shown in a cell."""
        metric = self._rows[row]
        col = COLUMNS[column]
        key = col.key
        if key == simulation_cells.KEY:
            return simulation_cells.text(metric, self.document.plan.settings, self._results[row])
        if col.computed:
            if self._reason(row):
                return cells.DASH
            return cells.output_text(metric, self.document.plan.settings, self._results[row],
                                     key)
        value = getattr(metric, key)
        if col.editor == TEXT:
            return value
        if col.editor == CHECK:
            return ""
        if col.editor == CHOICE:
            if key == "method" and value is None:
                return CHOICES["method"][metric.kind][0]
            return cells.label(value)
        if value is None and key in ("alpha", "power"):
            return self._default_text(key)
        if value is None and key == "sd" and metric.kind == "rate":
            return "= mean"
        return cells.show_value(metric, key, value)

    def edit_text(self, row: int, column: int) -> str:
        """The text an editor starts with (empty for unset optional values)."""
        metric = self._rows[row]
        col = COLUMNS[column]
        value = getattr(metric, col.key)
        if value is None:
            return ""
        if col.editor == NUMBER:
            return cells.show_value(metric, col.key, value)
        return value if isinstance(value, str) else str(value)

    def sort_value(self, row: int, column: int):
        """The raw value of a cell: numbers as floats (nan when missing), text as text."""
        metric = self._rows[row]
        col = COLUMNS[column]
        if col.key == simulation_cells.KEY:
            return simulation_cells.number(metric)
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

    def choices(self, row: int, column: int,
                metric: Metric | None = None) -> list[tuple[str, object]]:
        """Allowed values of a choice cell as ``(label, value)`` pairs (of ``metric``'s row)."""
        key = COLUMNS[column].key
        if key == "method":
            metric = self._rows[row] if metric is None else metric
            methods = CHOICES["method"][metric.kind]
            return [(f"{methods[0]} (default)", None)] + [(name, name) for name in methods]
        return [(cells.label(value), value) for value in CHOICES[key]]

    def _tooltip(self, row: int, column: int) -> str | None:
        col = COLUMNS[column]
        if col.key == simulation_cells.KEY:
            return simulation_cells.tooltip(self._rows[row], self.document.plan.settings,
                                            self._results[row])
        reason = self._reason(row)
        if col.computed and reason:
            return f"Cannot compute this row: {reason}"
        metric = self._rows[row]
        if col.key == "solve" and self._solved(row) != metric.solve:
            return (f"The plan has a fixed runtime, so this row reports the "
                    f"{cells.label(self._solved(row))} those days allow")
        if col.key == "effect" and self._is_unused(row, "effect"):
            return "Not used: this row computes the effect it can detect"
        if col.key in ("alpha", "power") and getattr(metric, col.key) is None:
            return "Plan default (type a value to override it for this row)"
        if col.key == "notes" and metric.notes:
            return metric.notes
        if col.key == "method" and metric.method is None:
            return f"The usual method for a {metric.kind} (choose another to override it)"
        if self.is_solved(row, column):
            return "The quantity this row solves for"
        if col.key == "name" and reason:
            return f"Cannot compute this row: {reason}"
        return None

    def data(self, index, role=ROLE.DisplayRole):
        role = int(role)
        if role not in _ANSWERED_ROLES or not index.isValid():
            return None
        row, column = index.row(), index.column()
        if role not in _CACHED_ROLES:
            return self._value(row, column, role)
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

    def _foreground(self, row: int, column: int):
        col = COLUMNS[column]
        metric = self._rows[row]
        if col.key == simulation_cells.KEY:
            return simulation_cells.colour(self._tints, metric, self.document.plan.settings,
                                           self._results[row])
        if col.computed and self._reason(row):
            return self._tints.problem
        if self.is_solved(row, column):
            return self._tints.solved_text
        if col.key == "name" and self._reason(row):
            return self._tints.problem
        if col.key in ("alpha", "power") and getattr(metric, col.key) is None:
            return self._tints.muted
        if col.key == "method" and metric.method is None:
            return self._tints.muted
        if col.key == "sd" and metric.sd is None:
            return self._tints.muted
        if self._is_unused(row, col.key):
            return self._tints.muted
        return None

    def headerData(self, section, orientation, role=ROLE.DisplayRole):
        if orientation == Qt.Orientation.Horizontal:
            if not 0 <= section < len(COLUMNS):
                return None
            col = COLUMNS[section]
            if role == ROLE.DisplayRole:
                return col.header
            if role == ROLE.ToolTipRole:
                kind = "Computed. " if col.computed else ""
                return f"<p>{kind}{col.tooltip}</p>"
            return None
        if not 0 <= section < len(self._rows):
            return None
        binding = section == self._binding
        if role == ROLE.DisplayRole:
            return str(section + 1)
        if role == ROLE.DecorationRole and binding:
            return self._marker
        if role == ROLE.ToolTipRole:
            if binding:
                return "Binding metric: this row needs the most days and sets the plan's duration"
            return f"Row {section + 1}"
        return None

    def flags(self, index):
        if not index.isValid():
            return Qt.ItemFlag.NoItemFlags
        return _FLAGS[index.column()]

    # -- editing ------------------------------------------------------------------------

    def parse(self, row: int, column: int, value, metric: Metric | None = None):
        """Turn an editor's value into a field value; raises FourfoldError for bad text.

        ``metric`` is the row the value is read for (default: the one shown in ``row``; a
        paste passes the row as its earlier cells make it, or a new row).
        """
        metric = self._rows[row] if metric is None else metric
        col = COLUMNS[column]
        if col.computed:
            raise FourfoldError(f"{col.label} is computed and cannot be edited")
        if col.editor == CHECK:
            if isinstance(value, str):
                lowered = value.strip().lower()
                truth = {"true": True, "yes": True, "1": True, "✓": True,
                         "false": False, "no": False, "0": False, "": False}
                if lowered not in truth:
                    raise FourfoldError(f"{col.label}: type yes or no, not {value!r}")
                return truth[lowered]
            return bool(value)
        if col.editor == CHOICE:
            if not isinstance(value, str):
                return value
            text = value.strip()
            if col.key == "method":
                return self._parse_method(metric, text)
            options = self.choices(row, column, metric)
            for shown, choice in options:
                if text in (shown, choice) or (choice is not None and text == cells.label(choice)):
                    return choice
            allowed = ", ".join(shown for shown, _ in options)
            raise FourfoldError(f"{col.label}: choose one of {allowed}; got {text!r}")
        if col.editor == TEXT:
            return str(value)
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return float(value)
        text = str(value).strip()
        if not text or text == cells.DASH:
            if col.optional:
                return None
            raise FourfoldError(f"{col.label}: enter a number")
        return cells.read_value(metric, col.key, text, col.label)

    def _parse_method(self, metric, text: str) -> str | None:
        methods = CHOICES["method"]
        if not text or text == f"{methods[metric.kind][0]} (default)" or text == "default":
            return None
        if any(text in names for names in methods.values()):
            return text
        raise FourfoldError(
            f"Method: choose one of {', '.join(methods[metric.kind])} for a {metric.kind} "
            f"(or leave it empty for the default); got {text!r}"
        )

    def copy_text(self, row: int, column: int) -> str:
        """A cell as text for the clipboard; pasting it back gives the same value."""
        col = COLUMNS[column]
        if col.computed:
            return self.display_text(row, column)
        value = getattr(self._rows[row], col.key)
        if col.editor == CHECK:
            return "yes" if value else "no"
        if col.editor == CHOICE:
            return "" if value is None else value
        return self.edit_text(row, column)

    def paste_edits(self, top: int, left: int, grid: list[list[str]]) -> PasteEdits:
        """Read a block of pasted text at ``(top, left)`` into field edits.

        Lines below the last row become new rows (as Plan → Add metric makes them), to be
        appended in the same step. Each line's kind and "Relative" cells are read first, so
        that its other cells are read in the units that row will have.
        """
        edits, errors, computed, dropped = [], [], 0, 0
        order = {key: rank for rank, key in enumerate(("kind", "relative"))}
        for r, line in enumerate(grid):
            row = top + r
            metric = dataclasses.replace(self._rows[row]) if row < len(self._rows) else Metric()
            inside = [(left + c, text) for c, text in enumerate(line) if left + c < len(COLUMNS)]
            dropped += len(line) - len(inside)
            inside.sort(key=lambda cell: order.get(COLUMNS[cell[0]].key, len(order)))
            for column, text in inside:
                col = COLUMNS[column]
                if col.computed:
                    computed += 1
                    continue
                try:
                    value = self.parse(row, column, text, metric)
                except FourfoldError as error:
                    errors.append(f"row {row + 1}: {error}")
                    continue
                if col.key in order:
                    setattr(metric, col.key, value)
                edits.append((row, col.key, value))
        new_rows = max(top + len(grid) - len(self._rows), 0)
        return PasteEdits(edits, new_rows, computed, dropped, errors)

    def setData(self, index, value, role=ROLE.EditRole) -> bool:
        if not index.isValid():
            return False
        row, column = index.row(), index.column()
        col = COLUMNS[column]
        if role == ROLE.CheckStateRole and col.editor == CHECK:
            value = Qt.CheckState(value) == Qt.CheckState.Checked
        elif role != ROLE.EditRole:
            return False
        try:
            parsed = self.parse(row, column, value)
        except FourfoldError as error:
            self.document.message.emit(str(error))
            return False
        if parsed == getattr(self._rows[row], col.key) and type(parsed) is type(
            getattr(self._rows[row], col.key)
        ):
            return True
        return self.document.apply(SetField(row, col.key, parsed))
