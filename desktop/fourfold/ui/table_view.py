"""The plan table's view: keyboard navigation, copy and paste of rectangular ranges.

Enter edits the current cell and, once typed, keeps it current (the plots stay on its row); Tab
moves right; Delete empties the selected optional cells (back to "not set" or the plan default).
Copy puts the selected rectangle on the clipboard as tab-separated text (what spreadsheets
exchange). Paste reads tab-separated text at the current cell as one undo step, all or nothing:
if any cell of the block cannot be read or is refused by the plan's rules, nothing changes and
the status line says which cells are at fault. Lines that run past the last row become new
metric rows (in the same undo step); cells on computed columns are skipped and cells right of
the last column are dropped (both counted in the status line). A single copied value pasted onto
a larger selection fills the selection.

A click on a column header sorts the rows by that column (ascending, a second click
descending) as one undo step; the header shows the sort only while the rows still hold that
order and that column's values are the ones sorted.
"""

from __future__ import annotations

import operator

from PySide6.QtCore import QItemSelection, QItemSelectionModel, Qt, Signal
from PySide6.QtGui import QFont, QFontMetrics, QGuiApplication, QKeySequence
from PySide6.QtWidgets import (
    QAbstractItemDelegate,
    QAbstractItemView,
    QHeaderView,
    QStyle,
    QTableView,
)

from fourfold.plan import Metric
from fourfold.plan.commands import SetFields
from fourfold.ui.columns import COLUMNS, NUMBER
from fourfold.ui.delegates import PlanDelegate
from fourfold.ui.table_model import PlanTableModel

MAX_ERRORS_SHOWN = 3
_KIND = operator.attrgetter("kind")
_WINDOWS = operator.attrgetter("windows")
_COLUMN_FIELDS = frozenset({"kind", "windows"})
"""The metric fields that decide which columns are shown (see :meth:`follow_looks`)."""
MAX_COLUMN_CHARS = 30
DISPLAY, FONT = int(Qt.ItemDataRole.DisplayRole), int(Qt.ItemDataRole.FontRole)
_MEASURED = tuple(column.computed or column.editor == NUMBER or column.key == "name"
                  for column in COLUMNS)
"""The columns :meth:`PlanTableView.widen_columns` widens: names, numbers and results."""
MAX_WIDTHS_KEPT = 20_000
"""Texts whose widths are kept per cell font before they are forgotten and measured anew."""


def parse_grid(text: str) -> list[list[str]]:
    """Split tab-separated clipboard text into rows of cells (a trailing newline is ignored).

    Examples
    --------
    >>> parse_grid("1\\t2\\n3\\t4\\n")
    [['1', '2'], ['3', '4']]
    """
    lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return [line.split("\t") for line in lines]


class PlanTableView(QTableView):
    """The plan table.

    Signals
    -------
    message(str)
        Something to show in the status line (a paste report).
    problem(str)
        Why nothing was done (a paste refused), for the status line until the next change.
    """

    message = Signal(str)
    problem = Signal(str)

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self._columns_stale = False
        self.setItemDelegate(PlanDelegate(self))
        self.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectItems)
        self.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.setEditTriggers(
            QAbstractItemView.EditTrigger.DoubleClicked
            | QAbstractItemView.EditTrigger.EditKeyPressed
            | QAbstractItemView.EditTrigger.AnyKeyPressed
        )
        self.setAlternatingRowColors(True)
        self.setWordWrap(False)
        self.setCornerButtonEnabled(True)
        self.setHorizontalScrollMode(QAbstractItemView.ScrollMode.ScrollPerPixel)
        self.setVerticalScrollMode(QAbstractItemView.ScrollMode.ScrollPerPixel)
        header = self.horizontalHeader()
        header.setHighlightSections(False)
        header.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        header.setDefaultAlignment(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter)
        header.setTextElideMode(Qt.TextElideMode.ElideNone)
        # Qt's sort hook: a header click flips the indicator and asks the model to sort; no
        # indicator (section -1) until the user sorts, so enabling it sorts nothing
        header.setSortIndicator(-1, Qt.SortOrder.AscendingOrder)
        self.setSortingEnabled(True)
        header.sortIndicatorChanged.connect(self._sorted)
        self._sort_state: tuple | None = None
        self._sort_checked = False  # the snapshot held after a recompute: check what it changed
        self._unfitted: set[int] = set()  # columns not sized since the last fit_columns
        # the widths of cell texts measured in the table's font, by cell font (widen_columns)
        self._widths_font = QFont()
        self._widths: dict[tuple[bool, bool], tuple] = {}
        # rows shown before the first fit, or while a fit sizes the rows, are measured by it
        self._measuring = True
        vertical = self.verticalHeader()
        vertical.setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        vertical.setDefaultAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        # rows brought into view by scrolling or a taller table are measured as they appear
        self.verticalScrollBar().valueChanged.connect(self._widen_shown)
        self.verticalScrollBar().rangeChanged.connect(self._widen_shown)

    def plan_model(self) -> PlanTableModel:
        """The model, typed."""
        return self.model()

    def setModel(self, model) -> None:  # noqa: N802 (Qt's name)
        super().setModel(model)
        model.document.changed.connect(self._note_change)
        model.document.computed.connect(self._follow_if_stale)
        model.document.computed.connect(self._check_sort)
        model.dataChanged.connect(self.widen_columns)
        for signal in (model.rowsAboutToBeRemoved, model.rowsAboutToBeMoved,
                       model.layoutAboutToBeChanged, model.modelAboutToBeReset):
            signal.connect(self._drop_editor)
        self.follow_looks()

    def _widen_shown(self, *_args) -> None:
        model = self.model()
        if not self._measuring and model is not None and model.rowCount():
            self.widen_columns(model.index(0, 0),
                               model.index(model.rowCount() - 1, model.columnCount() - 1), ())

    def _note_change(self, change) -> None:
        """The columns shown may change with the rows, the settings or a row's kind or
        windows; not with any other cell (a recompute of a large plan need not look)."""
        if change.kind != "cells" or _COLUMN_FIELDS.intersection(change.fields):
            self._columns_stale = True

    def _follow_if_stale(self) -> None:
        if self._columns_stale:
            self._columns_stale = False
            self.follow_looks()

    def follow_looks(self) -> None:
        """Show the interim-look columns only while the plan has more than one look, a kind's
        own columns only while the plan has a row of that kind, and "By window" only while a
        row has history windows."""
        plan = self.plan_model().document.plan
        hidden = plan.settings.looks <= 1
        present = set(map(_KIND, plan.metrics))  # C loops: a recompute of a large plan
        windows = any(map(_WINDOWS, plan.metrics))
        for position, column in enumerate(COLUMNS):
            if column.sequential:
                self._show_column(position, not hidden)
            elif column.kind is not None:
                self._show_column(position, column.kind in present)
            elif column.windows:
                self._show_column(position, windows)

    def _show_column(self, position: int, shown: bool) -> None:
        """Show or hide a column; one shown for the first time since the last fit is fitted."""
        self.setColumnHidden(position, not shown)
        if shown and position in self._unfitted:
            self._fit_column(position)

    # -- sorting ------------------------------------------------------------------------

    def sort_column(self, column: int | None = None) -> None:
        """Sort by ``column`` (the current cell's by default), as a header click would.

        Ascending first; descending when the header already shows an ascending sort of it.
        """
        if column is None:
            column = self.currentIndex().column()
        if column < 0:
            return
        header = self.horizontalHeader()
        ascending = Qt.SortOrder.AscendingOrder
        again = (self._sort_state is not None and header.sortIndicatorSection() == column
                 and header.sortIndicatorOrder() == ascending)
        header.setSortIndicator(column, Qt.SortOrder.DescendingOrder if again else ascending)

    def _sort_snapshot(self, column: int) -> tuple:
        """The row objects in order and the column's sort keys: what the indicator claims."""
        model = self.plan_model()
        rows = range(model.rowCount())
        return (tuple(id(model.metric(row)) for row in rows),
                tuple(model.sort_key(row, column) for row in rows))

    def _sorted(self, column: int, _order) -> None:
        """After the model sorted (or the indicator was cleared): remember what was sorted."""
        if column < 0 or self.model() is None:
            self._sort_state = None
            return
        self._sort_state = (column, self._sort_snapshot(column))
        self._sort_checked = False
        if self.currentIndex().isValid():
            self.scrollTo(self.currentIndex())

    def _check_sort(self) -> None:
        """Clear the indicator once the rows or the sorted column's values have changed.

        Once the rows held after a recompute, only the rows the next recompute changed are
        looked at (all of them after a change other than cells edited in place): an edit of a
        sorted large plan does not read every row.
        """
        if self._sort_state is None:
            return
        column, (ids, keys) = self._sort_state
        model = self.plan_model()
        rows = model.document.changed_rows()
        if rows is None or not self._sort_checked or len(ids) != model.rowCount():
            kept = self._sort_snapshot(column) == (ids, keys)
            self._sort_checked = True
        else:
            kept = all(id(model.metric(row)) == ids[row] and model.sort_key(row, column)
                       == keys[row] for row in rows)
        if not kept:
            self.horizontalHeader().setSortIndicator(-1, Qt.SortOrder.AscendingOrder)

    def fit_columns(self) -> None:
        """Size rows and columns to the current font and contents (after load or rescale)."""
        metrics = self.fontMetrics()
        bold = QFont(self.horizontalHeader().font())
        bold.setBold(True)
        header_metrics = QFontMetrics(bold)
        self._measuring = True
        self.verticalHeader().setDefaultSectionSize(int(metrics.height() * 1.7))
        self.horizontalHeader().setFixedHeight(int(header_metrics.height() * 2.0 + 10))
        self._unfitted = set(range(len(COLUMNS)))  # hidden ones are fitted when first shown
        for position in range(len(COLUMNS)):
            if not self.isColumnHidden(position):
                self._fit_column(position)
        self._measuring = False

    def _fit_column(self, position: int) -> None:
        """Size one column to its title, its contents and its least width."""
        self._unfitted.discard(position)
        column = COLUMNS[position]
        char = self.fontMetrics().averageCharWidth()
        bold = QFont(self.horizontalHeader().font())
        bold.setBold(True)
        header_metrics = QFontMetrics(bold)
        title = max(header_metrics.horizontalAdvance(line)
                    for line in column.header.split("\n")) + 16
        content = self.sizeHintForColumn(position) + 6
        wanted = max(title, min(content, MAX_COLUMN_CHARS * char), column.width * char)
        self.setColumnWidth(position, wanted)

    def widen_columns(self, top_left, bottom_right, roles) -> None:
        """Widen the name, number and result columns whose changed cells no longer fit (the
        name up to the width :meth:`fit_columns` allows it).

        Connected to the model's ``dataChanged``: only the announced cells in rows on screen
        are measured (scrolling measures the rows it brings into view), and a column only ever
        grows here (:meth:`fit_columns` sizes it afresh after a load).
        """
        if roles and Qt.ItemDataRole.DisplayRole not in roles:
            return
        model = self.model()
        top = self.rowAt(0)
        if top < 0:
            return
        bottom = self.rowAt(self.viewport().height() - 1)
        bottom = model.rowCount() - 1 if bottom < 0 else bottom
        rows = range(max(top, top_left.row()), min(bottom, bottom_right.row()) + 1)
        if not rows:
            return
        margin = 2 * (self.style().pixelMetric(QStyle.PixelMetric.PM_FocusFrameHMargin, None,
                                               self) + 1) + 6
        base = self.font()
        if self._widths_font != base:  # the widths measured in another font are of no use
            self._widths_font, self._widths = QFont(base), {}
        styles: dict[int, tuple] = {}  # id(font) → its metrics and measured texts (this call)
        widest_name = MAX_COLUMN_CHARS * self.fontMetrics().averageCharWidth()
        cell = model.cell
        for position in range(top_left.column(), bottom_right.column() + 1):
            if not _MEASURED[position] or self.isColumnHidden(position):
                continue
            widest = 0
            for row in rows:
                text = cell(row, position, DISPLAY)
                if not text:
                    continue
                font = cell(row, position, FONT)
                style = styles.get(id(font))
                if style is None:
                    style = styles[id(font)] = self._style_widths(base, font)
                width = style[1].get(text)
                if width is None:
                    width = style[1][text] = style[0].horizontalAdvance(text)
                if width > widest:
                    widest = width
            if COLUMNS[position].key == "name":
                widest = min(widest, widest_name)
            if widest + margin > self.columnWidth(position):
                self.setColumnWidth(position, widest + margin)

    def _style_widths(self, base: QFont, font: QFont | None) -> tuple:
        """The metrics of a cell font (None: the table's) and the widths of the texts measured
        in it so far (forgotten when the table's font changes or there are too many)."""
        key = (False, False) if font is None else (font.bold(), font.italic())
        style = self._widths.get(key)
        if style is None or len(style[1]) > MAX_WIDTHS_KEPT:
            style = self._widths[key] = (
                QFontMetrics(base if font is None else font.resolve(base)), {})
        return style

    def wanted_height(self, rows: int) -> int:
        """Height showing the header and ``rows`` rows without scrolling."""
        return (self.horizontalHeader().height() + rows * self.verticalHeader().defaultSectionSize()
                + self.horizontalScrollBar().sizeHint().height() + 2 * self.frameWidth() + 2)

    # -- editing and navigation -----------------------------------------------------------

    def finish_editing(self, commit: bool = True) -> bool:
        """Close the open cell editor, if any, before a command changes the plan.

        ``commit`` puts its text into the plan first; when the plan refuses it, the editor
        stays open (the status line says why) and False is returned: the command must wait.
        Without ``commit`` the text is dropped, as Escape does (before Undo, say).
        """
        delegate = self.itemDelegate()
        editor, _index = delegate.open_editor()
        if editor is None:
            return True
        if commit and not delegate.submit(editor):
            return False
        self.closeEditor(editor, QAbstractItemDelegate.EndEditHint.NoHint)
        return True

    def _drop_editor(self, *_args) -> None:
        """Rows are about to move or go: an editor left open would edit a stale cell."""
        self.finish_editing(commit=False)

    def keyPressEvent(self, event):
        if event.matches(QKeySequence.StandardKey.Copy):
            self.copy_selection()
            return
        if event.matches(QKeySequence.StandardKey.Paste):
            self.paste()
            return
        if (event.key() in (Qt.Key.Key_Delete, Qt.Key.Key_Backspace)
                and self.state() != QAbstractItemView.State.EditingState):
            self.clear_selection()
            return
        if (event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter)
                and self.state() != QAbstractItemView.State.EditingState
                and self.itemDelegate().open_editor()[0] is None):
            current = self.currentIndex()
            if current.isValid() and current.flags() & Qt.ItemFlag.ItemIsEditable:
                self.edit(current)
                return
        super().keyPressEvent(event)

    # -- clipboard ----------------------------------------------------------------------

    def _selected_rect(self) -> tuple[int, int, int, int] | None:
        indexes = self.selectedIndexes() or ([self.currentIndex()]
                                             if self.currentIndex().isValid() else [])
        if not indexes:
            return None
        rows = [index.row() for index in indexes]
        columns = [index.column() for index in indexes]
        return min(rows), min(columns), max(rows), max(columns)

    def selection_text(self) -> str:
        """The selected rectangle as tab-separated text."""
        rect = self._selected_rect()
        if rect is None:
            return ""
        top, left, bottom, right = rect
        model = self.plan_model()
        shown = [column for column in range(left, right + 1) if not self.isColumnHidden(column)]
        return "\n".join(
            "\t".join(model.copy_text(row, column) for column in shown)
            for row in range(top, bottom + 1)
        ) + "\n"

    def shown_columns(self, left: int) -> list[int]:
        """The positions of the columns on screen from ``left`` on (hidden ones skipped)."""
        return [column for column in range(left, len(COLUMNS))
                if not self.isColumnHidden(column)]

    def copy_selection(self) -> None:
        """Copy the selected rectangle to the clipboard."""
        text = self.selection_text()
        if text:
            QGuiApplication.clipboard().setText(text)

    def clear_selection(self) -> bool:
        """Empty the selected cells that may be empty (optional numbers, notes); one undo step."""
        rect = self._selected_rect()
        if rect is None:
            return False
        selected = self.selectedIndexes() or [self.currentIndex()]
        edits = []
        for index in selected:
            column = COLUMNS[index.column()]
            if column.optional:
                edits.append((index.row(), column.key, None))
            elif column.key == "notes":
                edits.append((index.row(), column.key, ""))
        if not edits:
            self.problem.emit("Only optional numbers and notes can be emptied")
            return False
        return self.plan_model().document.apply(
            SetFields(edits, text=f"Clear {len(edits)} cells"))

    def paste(self, text: str | None = None) -> bool:
        """Paste tab-separated text (the clipboard's by default) at the current cell.

        Returns whether anything was applied.
        """
        if text is None:
            text = QGuiApplication.clipboard().text()
        grid = parse_grid(text)
        rect = self._selected_rect()
        if not grid or rect is None:
            self.problem.emit("Nothing to paste")
            return False
        top, left, bottom, right = rect
        if len(grid) == 1 and len(grid[0]) == 1 and (bottom > top or right > left):
            grid = [[grid[0][0]] * (right - left + 1) for _ in range(bottom - top + 1)]
        model = self.plan_model()
        columns = self.shown_columns(left)
        block = model.paste_edits(top, left, grid, columns)
        errors = block.errors
        if errors:
            shown = "; ".join(errors[:MAX_ERRORS_SHOWN])
            extra = len(errors) - MAX_ERRORS_SHOWN
            more = f" (and {extra} more)" if extra > 0 else ""
            self.problem.emit(f"Nothing pasted — {len(errors)} cell(s) cannot be read: "
                              f"{shown}{more}")
            return False
        edits = block.edits
        if not edits:
            self.problem.emit("Nothing pasted: the block falls on computed columns only")
            return False
        added = f" ({block.new_rows} new row{'s' if block.new_rows != 1 else ''})" \
            if block.new_rows else ""
        applied = model.document.apply(SetFields(edits, text=f"Paste {len(edits)} cells{added}",
                                                 append=[Metric() for _ in range(block.new_rows)]))
        if applied:
            rows = max(row for row, _, _ in edits)
            last = columns[min(max(len(line) for line in grid), len(columns)) - 1]
            selection = self.selectionModel()
            selection.select(
                self._range(top, left, rows, last),
                QItemSelectionModel.SelectionFlag.ClearAndSelect,
            )
            notes = [f"{count} cell(s) {where}" for count, where in (
                (block.computed, "on computed columns skipped"),
                (block.dropped, "past the last column dropped")) if count]
            self.message.emit(f"Pasted {len(edits)} cells{added}"
                              + "".join(f"; {note}" for note in notes))
        return applied

    def _range(self, top: int, left: int, bottom: int, right: int):
        model = self.model()
        return QItemSelection(model.index(top, left), model.index(bottom, right))
