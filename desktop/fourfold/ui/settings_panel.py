"""The plan settings panel: the defaults and the traffic every metric row shares.

Each field becomes a :class:`fourfold.plan.commands.SetSetting` command when the user finishes
editing it (Enter, Tab or leaving the field); a refused value is reported on the status line and
the field shows the plan's value again. The panel redraws itself from the plan after every
change, so undo and redo show up here too. The description is a small word-wrapped editor, one
to three lines tall (it scrolls beyond), committed when the user leaves it or presses Enter
(Shift+Enter starts a new line; Escape brings back the plan's text).
"""

from __future__ import annotations

from PySide6.QtCore import QRect, QSize, Qt, Signal
from PySide6.QtWidgets import (
    QApplication,
    QCheckBox,
    QComboBox,
    QFrame,
    QGridLayout,
    QHBoxLayout,
    QLabel,
    QLayout,
    QLineEdit,
    QPlainTextEdit,
    QPushButton,
    QSizePolicy,
    QSpinBox,
    QVBoxLayout,
    QWidget,
)

from fourfold.errors import FourfoldError
from fourfold.formatting import format_count, format_number, format_percent, parse_number
from fourfold.plan import CHOICES, traffic
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.commands import SetSetting
from fourfold.plan.fields import ALLOCATION_LABELS, CORRECTION_LABELS, MAX_ARMS, MAX_LOOKS
from fourfold.plan.scenarios import find
from fourfold.ui.document import PlanDocument

SPENDING_LABELS = {
    "ld-obrien-fleming": "LD O'Brien–Fleming",
    "ld-pocock": "LD Pocock",
    "hsd": "Hwang–Shih–DeCani",
    "obrien-fleming": "O'Brien–Fleming",
    "pocock": "Pocock",
}
SPENDING_TIP = ("How α is spent over the looks. LD: Lan–DeMets spending functions of the "
                "O'Brien–Fleming or Pocock type; Hwang–Shih–DeCani; or the classical "
                "O'Brien–Fleming and Pocock boundaries.")

# field: (label, tooltip, shown in percent, optional)
NUMBER_FIELDS = {
    "alpha": ("α", "Default significance level of every row (before correction).", False,
              False),
    "power": ("Power", "Default power of every row: the chance of detecting a real effect.",
              False, False),
    "ratio": ("Allocation", "Units in each treatment arm per unit in control (1 = equal split).",
              False, False),
    "daily_units": ("Daily units", "Eligible units (visitors, users) per day; empty: no "
                    "durations.", False, True),
    "share": ("Traffic share", "Share of the eligible traffic that enters the test, in "
              "percent.", True, False),
    "runtime_days": ("Fixed runtime", "Days the test will run, if fixed; rows then solve for "
                     "the effect or power those days allow. Empty: rows solve for units.",
                     False, True),
}


WIDE_FIELDS = {"daily_units": "000,000", "share": "100.0 %", "runtime_days": "none"}
"""Fields that keep room for their usual text when the traffic group is narrow."""


class DescriptionEdit(QPlainTextEdit):
    """The plan's description: word-wrapped, as tall as its text up to three lines, then scrolls.

    Signals
    -------
    committed(str)
        The text, when the user is done with it (focus leaves, or Enter without Shift).
    """

    committed = Signal(str)
    MAX_LINES = 3

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.setObjectName("planDescription")
        self.setTabChangesFocus(True)
        self.setLineWrapMode(QPlainTextEdit.LineWrapMode.WidgetWidth)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.setVerticalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Fixed)
        self._shown = ""
        self.textChanged.connect(self._fit_height)
        self._fit_height()

    def text(self) -> str:
        """The text being edited."""
        return self.toPlainText()

    def show_text(self, text: str) -> None:
        """Show the plan's ``text`` (without committing it), scrolled to its start."""
        self._shown = text
        if self.toPlainText() != text:
            self.setPlainText(text)
        self.moveCursor(self.textCursor().MoveOperation.Start)

    def lines(self) -> int:
        """Lines the text takes at the current width (at least one)."""
        width = self.viewport().width() - 2 * int(self.document().documentMargin())
        text = self.toPlainText() or self.placeholderText() or " "
        box = self.fontMetrics().boundingRect(QRect(0, 0, max(width, 1), 1 << 20),
                                              int(Qt.TextFlag.TextWordWrap), text)
        return max(1, -(-box.height() // self.fontMetrics().lineSpacing()))

    def _fit_height(self) -> None:
        shown = min(self.lines(), self.MAX_LINES)
        margins = self.contentsMargins()
        # the editor scrolls unless its viewport holds the lines, a margin each side and a pixel
        height = (shown * self.fontMetrics().lineSpacing()
                  + 2 * int(self.document().documentMargin()) + 2
                  + margins.top() + margins.bottom())
        if height != self.height():
            self.setFixedHeight(height)

    def resizeEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().resizeEvent(event)
        if event.size().width() != event.oldSize().width():
            self._fit_height()

    def keyPressEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        key = event.key()
        if key in (Qt.Key.Key_Return, Qt.Key.Key_Enter) and not (
                event.modifiers() & Qt.KeyboardModifier.ShiftModifier):
            self.committed.emit(self.toPlainText())
            return
        if key == Qt.Key.Key_Escape:
            self.show_text(self._shown)
            return
        super().keyPressEvent(event)

    def commit(self) -> None:
        """Send ``committed`` if the text differs from the plan's."""
        if self.toPlainText() != self._shown:
            self.committed.emit(self.toPlainText())

    def focusOutEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().focusOutEvent(event)
        self.commit()


def _group(title: str) -> tuple[QFrame, QGridLayout]:
    frame = QFrame()
    frame.setObjectName("settingsGroup")
    outer = QVBoxLayout(frame)
    outer.setContentsMargins(8, 6, 8, 8)
    outer.setSpacing(4)
    heading = QLabel(title.upper())
    heading.setObjectName("groupHeading")
    outer.addWidget(heading)
    grid = QGridLayout()
    grid.setHorizontalSpacing(6)
    grid.setVerticalSpacing(4)
    outer.addLayout(grid)
    return frame, grid


GROUP_SPACING = 6
GROUP_STRETCH = (2, 1, 2, 2)
"""How the groups (test, arms, traffic, interim looks) share a row's extra width."""


class SettingsPanel(QWidget):
    """Compact editor of :class:`fourfold.plan.Settings`.

    Signals
    -------
    message(str)
        A refused value, for the status line.
    traffic_requested()
        The traffic model's button was pressed (the window opens Plan → Traffic model…).
    """

    message = Signal(str)
    traffic_requested = Signal()

    def __init__(self, document: PlanDocument, parent=None) -> None:
        super().__init__(parent)
        self.document = document
        self.fields: dict[str, QWidget] = {}
        self._tips: dict[str, str] | None = None  # the fields' own tooltips
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        outer.setSpacing(6)
        outer.setSizeConstraint(QLayout.SizeConstraint.SetNoConstraint)  # see minimumSizeHint
        names = QHBoxLayout()
        names.setSpacing(16)
        outer.addLayout(names)
        self._groups = QGridLayout()
        self._groups.setSpacing(GROUP_SPACING)
        outer.addLayout(self._groups)
        self._frames: list[QFrame] = []
        self._two_rows: bool | None = None

        self.title = QLineEdit()
        self.title.setObjectName("planTitle")
        self.title.setPlaceholderText("Plan title")
        self.title.setToolTip("The plan's title, shown in the exports.")
        self.title.editingFinished.connect(lambda: self._commit("title", self.title.text()))
        self.fields["title"] = self.title
        self.description = DescriptionEdit()
        self.description.setPlaceholderText("What is being tested, and why")
        self.description.setToolTip("A few lines on the test, shown in the exports. Enter "
                                    "keeps the text; Shift+Enter starts a new line.")
        self.description.committed.connect(lambda text: self._commit("description", text))
        self.fields["description"] = self.description
        names.addWidget(self.title, 2, Qt.AlignmentFlag.AlignTop)
        names.addWidget(self.description, 3)

        frame, grid = _group("Test")
        self._number(grid, 0, 0, "alpha")
        self._number(grid, 0, 2, "power")
        self._choice(grid, 1, 0, "correction", "Correction",
                     "Correction of α for several treatment arms and metrics. Dunnett's, for "
                     "arms that share one control, needs fewer units than Bonferroni or Šidák; "
                     "the table's α column shows the level of each comparison.",
                     CORRECTION_LABELS, span=3)
        self._frames.append(frame)

        frame, grid = _group("Arms")
        self._spin(grid, 0, "arms", "Treatment arms", MAX_ARMS,
                   "Treatment arms, each compared with the one control arm.")
        self._number(grid, 1, 0, "ratio")
        self._choice(grid, 0, 2, "allocation", "Split",
                     "As set: each treatment arm gets the allocation's units per control unit. "
                     "√k rule: the control gets √k times the units of each of the k treatment "
                     "arms, which needs the fewest units in all; the summary says what it saves "
                     "against an equal split.", ALLOCATION_LABELS)
        self._frames.append(frame)

        frame, grid = _group("Traffic")
        self._number(grid, 0, 0, "daily_units")
        self._number(grid, 0, 2, "share")
        self._number(grid, 1, 0, "runtime_days")
        weeks = QCheckBox("Whole weeks")
        weeks.setToolTip("Round durations up to whole weeks, so every weekday counts equally.")
        weeks.toggled.connect(lambda value: self._commit("whole_weeks", value))
        self.fields["whole_weeks"] = weeks
        grid.addWidget(weeks, 1, 2, 1, 2)
        self.traffic_button = QPushButton()
        self.traffic_button.setObjectName("trafficModel")
        self.traffic_button.clicked.connect(lambda _checked=False: self.traffic_requested.emit())
        grid.addWidget(self.traffic_button, 0, 4, 2, 1)
        self._frames.append(frame)

        frame, grid = _group("Interim looks")
        self._spin(grid, 0, "looks", "Looks", MAX_LOOKS,
                   "Analyses during the test, the last one included (1: a fixed design).")
        futility = QCheckBox("Futility bound")
        futility.setToolTip("Also stop early when the effect looks absent.")
        futility.toggled.connect(lambda value: self._commit("futility", value))
        self.fields["futility"] = futility
        grid.addWidget(futility, 0, 2)
        self._choice(grid, 1, 0, "spending", "Spending",
                     SPENDING_TIP, SPENDING_LABELS, span=2)
        self._frames.append(frame)
        self._arrange(two_rows=False)

        document.changed.connect(self._on_change)
        document.replaced.connect(self.refresh)
        self.refresh()

    def _one_row_width(self) -> int:
        """The narrowest width that holds the four groups side by side."""
        return (sum(frame.minimumSizeHint().width() for frame in self._frames)
                + GROUP_SPACING * (len(self._frames) - 1))

    def minimumSizeHint(self) -> QSize:  # noqa: N802 (Qt's name)
        """As narrow as the groups in two rows allow (the window can then be narrower than
        four groups side by side), as tall as they are now."""
        test, arms, traffic, looks = (frame.minimumSizeHint().width() for frame in self._frames)
        width = max(test, traffic) + max(arms, looks) + GROUP_SPACING
        return QSize(width, self.layout().minimumSize().height())

    def resizeEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().resizeEvent(event)
        self._arrange(self.width() < self._one_row_width())

    def _arrange(self, two_rows: bool) -> None:
        """The groups side by side, or in two rows of two when the panel is narrower than
        they need (a squeezed group would cut its fields' numbers)."""
        if two_rows == self._two_rows:
            return
        self._two_rows = two_rows
        for frame in self._frames:
            self._groups.removeWidget(frame)
        for column in range(4):
            self._groups.setColumnStretch(column, 0)
        spots = ((0, 0), (0, 1), (1, 0), (1, 1)) if two_rows else tuple((0, i) for i in range(4))
        for frame, (row, column) in zip(self._frames, spots, strict=True):
            self._groups.addWidget(frame, row, column)
        for column, stretch in enumerate((1, 1) if two_rows else GROUP_STRETCH):
            self._groups.setColumnStretch(column, stretch)
        self.updateGeometry()

    @staticmethod
    def _label(text: str, buddy: QWidget) -> QLabel:
        label = QLabel(text)
        label.setBuddy(buddy)
        label.setToolTip(buddy.toolTip())
        label.setObjectName("fieldLabel")
        return label

    def _number(self, grid: QGridLayout, row: int, column: int, field: str) -> None:
        text, tooltip, _, optional = NUMBER_FIELDS[field]
        edit = QLineEdit()
        edit.setToolTip(tooltip)
        edit.setAlignment(Qt.AlignmentFlag.AlignRight)
        edit.setMinimumWidth(44 if field not in WIDE_FIELDS else
                             edit.fontMetrics().horizontalAdvance(WIDE_FIELDS[field]) + 14)
        edit.setMaximumWidth(110)
        if optional:
            edit.setPlaceholderText("none")
        edit.editingFinished.connect(lambda: self._commit_number(field, edit))
        self.fields[field] = edit
        grid.addWidget(self._label(text, edit), row, column)
        grid.addWidget(edit, row, column + 1)

    def _spin(self, grid: QGridLayout, row: int, field: str, text: str, most: int,
              tooltip: str) -> None:
        spin = QSpinBox()
        spin.setRange(1, most)
        spin.setToolTip(tooltip)
        # a number typed is one change, made on Enter or on leaving the field ("12" is not a
        # change to 1 and another to 12); the arrows, keys and wheel change it at once
        spin.setKeyboardTracking(False)
        spin.valueChanged.connect(lambda value: self._commit(field, value))
        self.fields[field] = spin
        grid.addWidget(self._label(text, spin), row, 0)
        grid.addWidget(spin, row, 1)

    def _choice(self, grid: QGridLayout, row: int, column: int, field: str, text: str,
                tooltip: str, labels: dict[str, str], span: int = 1) -> None:
        combo = QComboBox()
        combo.setToolTip(tooltip)
        combo.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        combo.setMinimumContentsLength(6)
        for value in CHOICES[field]:
            combo.addItem(labels.get(value, value), value)
        combo.activated.connect(lambda _=0: self._commit(field, combo.currentData()))
        self.fields[field] = combo
        grid.addWidget(self._label(text, combo), row, column)
        grid.addWidget(combo, row, column + 1, 1, span)

    def commit_pending(self) -> None:
        """Commit a field the user is still typing in (before a save or any other action of
        the window, so that it acts on what the field shows)."""
        focused = QApplication.focusWidget()
        if focused is self.description:
            self.description.commit()
        elif isinstance(focused, QLineEdit) and focused in self.fields.values():
            focused.editingFinished.emit()
        elif isinstance(focused, QSpinBox) and focused in self.fields.values():
            focused.interpretText()  # a number typed, not yet ended by Enter

    def drop_pending(self) -> None:
        """Drop a number or choice the user is still typing in a field (before Undo or Redo,
        which act on the plan): the fields show the plan again. The description's text is
        left alone (it is committed when the description loses the focus)."""
        focused = QApplication.focusWidget()
        if focused is not self.description and focused in self.fields.values():
            self.refresh()

    def _commit_number(self, field: str, edit: QLineEdit) -> None:
        text, _, percent, optional = NUMBER_FIELDS[field]
        raw = edit.text().strip()
        try:
            value = None if (optional and not raw) else parse_number(raw, percent, label=text)
        except FourfoldError as error:
            self.message.emit(str(error))
            self.refresh()
            return
        self._commit(field, value)

    def _commit(self, field: str, value) -> None:
        if getattr(self.document.plan.settings, field) == value:
            self.refresh()
            return
        if not self.document.apply(SetSetting(field, value)):
            self.refresh()

    def _on_change(self, change) -> None:
        if change.kind in ("settings", "scenario", "reset") or change.settings:
            self.refresh()

    @staticmethod
    def show_setting(field: str, value) -> str:
        """A settings number as the panel shows it."""
        if value is None:
            return ""
        if field == "share":
            return format_percent(value)
        if field == "daily_units":
            return format_count(value)
        return format_number(value, sig=4)

    def _base_text(self, field: str, value) -> str:
        """A setting of the base in words, for a scenario field's tooltip."""
        if isinstance(value, bool):
            return "yes" if value else "no"
        if isinstance(value, str):
            return {**CORRECTION_LABELS, **SPENDING_LABELS}.get(value, value) or "empty"
        return self.show_setting(field, value) or "none"

    def _show_traffic(self, settings, changed: dict) -> None:
        """The traffic model's button, and the daily units only a constant model uses."""
        button = self.traffic_button
        button.setText(traffic.short_text(settings).replace(", ", ",\n", 1) + "…")
        button.setToolTip(traffic.describe(settings) + "\nPlan → Traffic model… (Ctrl+Shift+T)")
        mark = any(field in changed for field in traffic.TRAFFIC_SETTINGS)
        if bool(button.property("changed")) != mark:
            button.setProperty("changed", mark)
            button.style().unpolish(button)
            button.style().polish(button)
        daily = self.fields["daily_units"]
        daily.setEnabled(settings.traffic == "constant")
        if settings.traffic != "constant":
            daily.setToolTip("The reach curve gives the traffic (Plan → Traffic model…)")

    def refresh(self) -> None:
        """Show the plan's current settings (without sending commands); while a scenario is
        on show, the fields it changes are marked and their tooltips give the base's value."""
        settings = self.document.plan.settings
        whole = self.document.whole
        changed = find(whole, whole.active).settings if whole.active is not None else {}
        if self._tips is None:
            self._tips = {field: widget.toolTip() for field, widget in self.fields.items()}
        for field, widget in self.fields.items():
            value = getattr(settings, field)
            mark = field in changed
            if bool(widget.property("changed")) != mark:
                widget.setProperty("changed", mark)
                widget.style().unpolish(widget)
                widget.style().polish(widget)
            base = self._base_text(field, getattr(whole.settings, field))
            widget.setToolTip(self._tips[field] + (
                f"\nChanged in scenario {whole.active} (base: {base})" if mark else ""))
            widget.blockSignals(True)
            if isinstance(widget, QCheckBox):
                widget.setChecked(bool(value))
            elif isinstance(widget, QSpinBox):
                widget.setValue(int(value))
            elif isinstance(widget, QComboBox):
                widget.setCurrentIndex(max(widget.findData(value), 0))
            elif isinstance(widget, DescriptionEdit):
                widget.show_text(value)
            elif field == "ratio":
                widget.setText(self.show_setting(field, treatment_ratio(settings)))
                widget.setEnabled(settings.allocation == "fixed")
            elif field in NUMBER_FIELDS:
                widget.setText(self.show_setting(field, value))
            else:
                widget.setText(value)
                widget.setCursorPosition(0)
            widget.blockSignals(False)
        self._show_traffic(settings, changed)
