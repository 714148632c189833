"""The window's scenarios tab: the comparison of base and scenarios, and what moves the duration.

:class:`ComparisonView` shows the lines of :func:`fourfold.export.comparison.comparison_lines`
— one column per scenario, base first, signed differences from the base beside each value —
and emits :attr:`ComparisonView.chosen` with a scenario's name when the user clicks its column
(header or cell): the window makes that scenario the one shown and edited.
:class:`SensitivityView` paints :func:`fourfold.figures.sensitivity.paint_sensitivity` of the
plan shown. :class:`ScenarioPanel` holds both, the scenario actions' tool bar, the amount of
the sensitivity bars and a line naming stale scenario changes. Both views recompute only while
the tab is visible (and once when it is shown again); the comparison's lines and the bars'
painter are imported when first needed, not before the window's first paint.
"""

from __future__ import annotations

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QRectF, QSize, Qt, QTimer, Signal
from PySide6.QtGui import QColor, QFont, QFontMetrics, QPainter
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QLabel,
    QLayout,
    QSpinBox,
    QSplitter,
    QStyle,
    QStyledItemDelegate,
    QStyleOptionViewItem,
    QTableView,
    QToolBar,
    QVBoxLayout,
    QWidget,
)

from fourfold.plan import scenarios
from fourfold.plan.comparison import Outcome, complete
from fourfold.plan.evaluation import RowCache
from fourfold.plan.sensitivity import DEFAULT_AMOUNT, Sensitivity, sensitivity
from fourfold.plan.sensitivity import inputs as sensitivity_inputs
from fourfold.ui import theme
from fourfold.ui.document import PlanDocument

DELTA_ROLE = Qt.ItemDataRole.UserRole + 1
CELL_PAD = 6
GAP = "  "
NO_SCENARIOS = ("No scenarios yet. Scenario → New scenario (Ctrl+Alt+N) makes one from the "
                "plan on show; its edits then change only it.")


def shown_outcomes(document: PlanDocument) -> list[Outcome]:
    """The document's evaluated scenarios, or the base alone for a plan without any."""
    if document.outcomes:
        return document.outcomes
    plan, result = document.plan, document.result
    if result is None:
        return []
    return [Outcome(None, scenarios.BASE, plan, result, (), complete(plan, result))]


class DeltaDelegate(QStyledItemDelegate):
    """Paints a cell's value with its difference from the base after it, in the accent."""

    def paint(self, painter: QPainter, option, index) -> None:
        view = QStyleOptionViewItem(option)
        self.initStyleOption(view, index)
        text, view.text = view.text, ""
        widget = view.widget
        widget.style().drawControl(QStyle.ControlElement.CE_ItemViewItem, view, painter, widget)
        delta = index.data(DELTA_ROLE) or ""
        rect = view.rect.adjusted(CELL_PAD, 0, -CELL_PAD, 0)
        painter.save()
        painter.setFont(view.font)
        painter.setPen(view.palette.text().color())
        centre = Qt.AlignmentFlag.AlignVCenter
        painter.drawText(rect, Qt.AlignmentFlag.AlignLeft | centre, text)
        if delta:
            painter.setPen(theme.tints().accent)
            shift = painter.fontMetrics().horizontalAdvance(text + GAP)
            painter.drawText(rect.adjusted(shift, 0, 0, 0), Qt.AlignmentFlag.AlignLeft | centre,
                             delta)
        painter.restore()


class ComparisonModel(QAbstractTableModel):
    """The comparison's lines as a table: one column per scenario, one row per line."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.found: list[Outcome] = []
        self.lines: list = []
        self.active: str | None = None
        self.whole = None
        self._kept: dict = {}  # the metric rows' lines, made again when a row changes
        self.bold = QFont()
        self.bold.setBold(True)
        self.shade = QColor()

    def rowCount(self, parent=QModelIndex()) -> int:  # noqa: B008, N802 - Qt's signature
        return 0 if parent.isValid() else len(self.lines)

    def columnCount(self, parent=QModelIndex()) -> int:  # noqa: B008, N802 - Qt's signature
        return 0 if parent.isValid() else len(self.found)

    def set_outcomes(self, found: list[Outcome], active: str | None, whole) -> None:
        """Show ``found``; another shape resets the table, the same one announces the cells
        whose texts changed (all of them for a new colour scheme; the columns of the scenario
        that was and is on show for a switch) and the header when its texts changed."""
        from fourfold.export.comparison import comparison_lines

        lines = comparison_lines(found, self._kept) if found else []
        names = [each.name for each in found]
        shape = (names, [line.label for line in lines])
        same = shape == ([each.name for each in self.found], [line.label for line in self.lines])
        shade = QColor(theme.tints().accent)
        shade.setAlpha(28)
        every = shade != self.shade
        self.shade = shade
        if not same:
            self.beginResetModel()
        old_lines, old_active, old_labels = self.lines, self.active, self._labels()
        self.found, self.lines, self.active, self.whole = found, lines, active, whole
        if not same:
            self.endResetModel()
            return
        if not lines:
            return
        last = len(found) - 1
        if every:
            self.dataChanged.emit(self.index(0, 0), self.index(len(lines) - 1, last))
        else:
            for row, (old, new) in enumerate(zip(old_lines, lines, strict=True)):
                if old is not new:
                    self._announce(row, old, new)
            if active != old_active:
                for column in {names.index(old_active), names.index(active)} \
                        if old_active in names else {names.index(active)}:
                    self.dataChanged.emit(self.index(0, column),
                                          self.index(len(lines) - 1, column))
        if self._labels() != old_labels:
            self.headerDataChanged.emit(Qt.Orientation.Horizontal, 0, last)

    def _announce(self, row: int, old, new) -> None:
        """Announce the cells of line ``row`` whose text or difference changed, each alone:
        the view repaints those cells, not the whole table."""
        for column, (cell, delta, old_cell, old_delta) in enumerate(zip(
                new.cells, new.deltas, old.cells, old.deltas, strict=True)):
            if cell != old_cell or delta != old_delta:
                index = self.index(row, column)
                self.dataChanged.emit(index, index)

    def _labels(self) -> list:
        """The column headers' texts."""
        return [self.headerData(column, Qt.Orientation.Horizontal)
                for column in range(len(self.found))]

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        line, each = self.lines[index.row()], self.found[index.column()]
        if role == Qt.ItemDataRole.DisplayRole:
            return line.cells[index.column()]
        if role == DELTA_ROLE:
            return line.deltas[index.column()]
        if role == Qt.ItemDataRole.FontRole and each.name == self.active:
            return self.bold
        if role == Qt.ItemDataRole.BackgroundRole and each.name == self.active:
            return self.shade
        if role == Qt.ItemDataRole.ToolTipRole and not each.complete:
            return _column_tip(each, self.whole)
        return None

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if orientation == Qt.Orientation.Horizontal:
            each = self.found[section]
            if role == Qt.ItemDataRole.DisplayRole:
                return ("▶ " if each.name == self.active else "") + each.label
            if role == Qt.ItemDataRole.FontRole and each.name == self.active:
                return self.bold
            if role == Qt.ItemDataRole.ToolTipRole:
                return _column_tip(each, self.whole)
            return None
        line = self.lines[section]
        if role == Qt.ItemDataRole.DisplayRole:
            return line.label if line.heading or not line.row else f"   {line.label}"
        if role == Qt.ItemDataRole.FontRole and line.heading:
            return self.bold
        return None


class ComparisonView(QTableView):
    """The comparison table; a click on a column emits :attr:`chosen` (``None``: the base).

    Columns are sized from their texts once per refresh (measured here, not by the header's
    resize-to-contents, which asks every cell for its size on every change).
    """

    chosen = Signal(object)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self._measured: tuple[QFont, dict] = (QFont(), {})  # text widths, for one font
        self._line_widths: dict = {}  # id(line): (line, its cells' widths in plain text)
        self.comparison = ComparisonModel(self)
        self.setModel(self.comparison)
        self.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        self.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        self.setItemDelegate(DeltaDelegate(self))
        self.setWordWrap(False)
        header = self.horizontalHeader()
        header.setSectionsClickable(True)
        header.sectionClicked.connect(self._clicked)
        self.verticalHeader().setDefaultAlignment(Qt.AlignmentFlag.AlignLeft
                                                  | Qt.AlignmentFlag.AlignVCenter)
        self.clicked.connect(lambda index: self._clicked(index.column()))

    @property
    def names(self) -> list[str | None]:
        """The scenarios of the columns (``None``: the base)."""
        return [each.name for each in self.comparison.found]

    def _clicked(self, column: int) -> None:
        names = self.names
        if 0 <= column < len(names) and names[column] != self.comparison.active:
            self.chosen.emit(names[column])

    def show_outcomes(self, found: list[Outcome], active: str | None, whole) -> None:
        """Fill the table with the comparison of ``found`` (``active``: the one on show);
        when another scenario comes on show, its column is scrolled into view."""
        moved = active != self.comparison.active
        self.comparison.set_outcomes(found, active, whole)
        self._fit()
        if moved and active in self.names:
            top = max(self.rowAt(0), 0)  # the visible top row: only the columns scroll
            self.scrollTo(self.comparison.index(top, self.column_of(active)))

    def _fit(self) -> None:
        model = self.comparison
        font = self.font()
        if self._measured[0] != font or len(self._measured[1]) > 4096:
            self._measured = (QFont(font), {})
            self._line_widths = {}
        plain = QFontMetrics(font)
        bold = QFontMetrics(_bolder(font))
        known = self._measured[1]

        def width(text: str, strong: bool) -> int:
            found = known.get((text, strong))
            if found is None:
                found = known[(text, strong)] = (bold if strong else plain).horizontalAdvance(
                    text)
            return found

        def shown(line, column: int) -> str:
            delta = line.deltas[column]
            return line.cells[column] + (GAP + delta if delta else "")

        # each line's widths in plain text, kept while the line is the same object
        kept, widths = self._line_widths, {}
        for line in model.lines:
            found = kept.get(id(line))
            if found is None or found[0] is not line:
                found = (line, [width(shown(line, column), False)
                                for column in range(len(line.cells))])
            widths[id(line)] = found
        self._line_widths = widths
        columns = zip(*(found[1] for found in widths.values()), strict=True) if widths else ()
        widest_plain = [max(column) for column in columns] or [0] * len(model.found)
        for column, each in enumerate(model.found):
            header = model.headerData(column, Qt.Orientation.Horizontal)
            widest = max(width(header, True), widest_plain[column])
            if each.name == model.active:
                widest = max([width(header, True)]
                             + [width(shown(line, column), True) for line in model.lines])
            if self.columnWidth(column) != widest + 2 * CELL_PAD + 8:
                self.setColumnWidth(column, widest + 2 * CELL_PAD + 8)

    def column_of(self, name: str | None) -> int:
        """The column of scenario ``name`` (``None``: the base)."""
        return self.names.index(name)


def _bolder(font: QFont) -> QFont:
    bold = QFont(font)
    bold.setBold(True)
    return bold


def _column_tip(each: Outcome, whole) -> str:
    lines = ["The plan as entered." if each.name is None
             else scenarios.describe(whole, each.name)]
    lines += list(each.problems)
    if not each.complete:
        lines.append("Incomplete: a primary or guardrail row cannot be computed, so no "
                     "duration is shown.")
    return "\n".join(lines)


class SensitivityView(QWidget):
    """The bars of what moves the duration, for the plan on show."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.found: Sensitivity | None = None
        self.title = ""
        self.setMinimumSize(160, 80)

    def sizeHint(self) -> QSize:  # noqa: N802 (Qt's name)
        return QSize(420, 280)

    def show_sensitivity(self, found: Sensitivity | None, title: str) -> None:
        """Show ``found`` under ``title``; the same bars and title again repaint nothing."""
        if found is self.found and title == self.title:
            return
        self.found, self.title = found, title
        self.update()

    def paintEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        if self.found is None:
            return
        from fourfold.figures.sensitivity import SensitivityStyle, paint_sensitivity

        palette = self.palette()
        tints = theme.tints()
        style = SensitivityStyle(palette.windowText().color(), tints.muted,
                                 QColor(palette.mid().color()), tints.accent, tints.binding,
                                 max(7.0, self.font().pointSizeF()))
        painter = QPainter(self)
        paint_sensitivity(painter, QRectF(self.rect()).adjusted(10, 8, -10, -6), self.found,
                          style, self.title)
        painter.end()


class ScenarioPanel(QWidget):
    """The scenarios tab: tool bar, stale changes, comparison and sensitivity side by side.

    Parameters
    ----------
    document : PlanDocument
        The open plan.
    actions : list of QAction
        The window's scenario actions, shown in the tool bar.
    """

    def __init__(self, document: PlanDocument, actions, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self._scratch = RowCache()
        self._bars: tuple | None = None  # (what the bars were made of, the bars)
        self._stale = True
        self.tools = QToolBar(self)
        self.tools.addActions(actions)
        self.amount = QSpinBox(self)
        self.amount.setRange(5, 50)
        self.amount.setSingleStep(5)
        self.amount.setValue(round(DEFAULT_AMOUNT * 100))
        self.amount.setPrefix("± ")
        self.amount.setSuffix(" %")
        self.amount.setAccessibleName("How far each assumption is off")
        self.amount.valueChanged.connect(self.refresh_sensitivity)
        amount_label = QLabel("What moves the duration: each assumption off by", self)
        amount_label.setBuddy(self.amount)
        self.hint = QLabel(self)
        self.hint.setWordWrap(True)
        self.hint.setObjectName("scenarioHint")
        self.comparison = ComparisonView(self)
        self.bars = SensitivityView(self)
        self.split = split = QSplitter(Qt.Orientation.Horizontal, self)
        split.addWidget(self.comparison)
        split.addWidget(self.bars)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 2)
        split.setChildrenCollapsible(False)
        top = QHBoxLayout()
        top.setContentsMargins(0, 0, 0, 0)
        top.addWidget(self.tools)
        top.addStretch(1)
        top.addWidget(amount_label)
        top.addWidget(self.amount)
        layout = QVBoxLayout(self)
        # a small window squeezes the tab rather than the plan table above it
        layout.setSizeConstraint(QLayout.SizeConstraint.SetNoConstraint)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.setSpacing(4)
        layout.addLayout(top)
        layout.addWidget(self.hint)
        layout.addWidget(split, 1)
        # after a recompute, the plan table is painted first; the scenarios follow
        self._refresh_timer = QTimer(self)
        self._refresh_timer.setSingleShot(True)
        self._refresh_timer.setInterval(0)
        self._refresh_timer.timeout.connect(self.refresh)
        document.computed.connect(self._refresh_timer.start)

    def showEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().showEvent(event)
        if self._stale:
            self.refresh()

    def minimumSizeHint(self) -> QSize:  # noqa: N802 (Qt's name)
        return QSize(160, 60)  # no taller than the plots' tab: the plan table keeps its rows

    def set_text_font(self, font: QFont) -> None:
        """The table's text size (View → Larger text) for the comparison and the bars."""
        for widget in (self.comparison, self.comparison.horizontalHeader(),
                       self.comparison.verticalHeader(), self.bars):
            widget.setFont(font)

    def pending(self) -> bool:
        """Whether a refresh after the latest recompute has not run yet."""
        return self._refresh_timer.isActive()

    def refresh(self) -> None:
        """Show the document's latest evaluation (later, when the tab is hidden)."""
        self._refresh_timer.stop()
        if not self.isVisible():
            self._stale = True
            return
        self._stale = False
        whole = self.document.whole
        self.comparison.show_outcomes(shown_outcomes(self.document), self.document.scenario,
                                      whole)
        problems = scenarios.problems(whole)
        hint = " ".join(problems) if problems else ("" if whole.scenarios else NO_SCENARIOS)
        self.hint.setText(hint)
        self.hint.setVisible(bool(hint))
        self._fit()
        self.refresh_sensitivity()

    def _fit(self) -> None:
        """Give the comparison the width of its columns (up to two thirds), the bars the rest."""
        table = self.comparison
        wanted = (table.verticalHeader().width() + table.horizontalHeader().length()
                  + 2 * table.frameWidth() + 4)
        total = sum(self.split.sizes()) or self.width()
        left = min(wanted, int(total * 2 / 3))
        if abs(self.split.sizes()[0] - left) > 2:
            self.split.setSizes([left, max(total - left, 1)])

    def refresh_sensitivity(self) -> None:
        """Recompute the bars for the plan on show at the chosen amount."""
        result = self.document.result
        if result is None:
            self.bars.show_sensitivity(None, "")
            return
        plan, amount = self.document.plan, self.amount.value() / 100.0
        made_of = sensitivity_inputs(plan, amount, result)
        if self._bars is not None and self._bars[0] == made_of:
            found = self._bars[1]
        else:
            found = sensitivity(plan, amount, result=result, cache=self._scratch)
            self._bars = (made_of, found)
        label = self.document.scenario or scenarios.BASE
        binding = f" · binding: {found.binding}" if found.binding else ""
        self.bars.show_sensitivity(found, f"{label}{binding}")
