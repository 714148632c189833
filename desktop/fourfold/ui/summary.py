"""The summary line: the plan's duration, its total units and the binding metric, always shown.

For a plan with scenarios it starts with the scenario on show (a drop-down that switches it,
tinted while a scenario rather than the base is shown) and gives the duration's difference
from the base. An incomplete plan (a primary or guardrail row that cannot be computed) shows no
duration: the line says so in the warning colour and names each such row with its reason.
"""

from __future__ import annotations

import html
import math
import re

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QComboBox, QFrame, QHBoxLayout, QLabel, QSizePolicy, QVBoxLayout

from fourfold.formatting import MINUS, format_count, format_days, format_number, whole_days
from fourfold.plan import traffic
from fourfold.plan.arms import equal_allocation_saving
from fourfold.plan.evaluation import RowCache
from fourfold.plan.scenarios import BASE
from fourfold.ui import theme
from fourfold.ui.document import PlanDocument


def duration_text(days: float | None) -> str:
    """Days and weeks in words, e.g. "28 days (4 weeks)"; days whole, rounded up.

    Examples
    --------
    >>> duration_text(28.0)
    '28 days (4 weeks)'
    >>> duration_text(10.0)
    '10 days (1.4 weeks)'
    >>> duration_text(None)
    '—'
    """
    if days is None or not math.isfinite(days):
        return "—"
    days = whole_days(days)
    weeks = days / 7.0
    week_word = "week" if weeks == 1 else "weeks"
    day_word = "day" if days == 1 else "days"
    return f"{format_days(days)} {day_word} ({format_number(weeks, sig=2)} {week_word})"


def base_delta(days: float | None, base: float | None) -> str:
    """The difference of a scenario's duration from the base's, in words.

    Examples
    --------
    >>> base_delta(21.0, 35.0), base_delta(35.0, 35.0), base_delta(None, 35.0)
    ('−14 d vs base', 'same as base', '')
    """
    if days is None or base is None or not (math.isfinite(days) and math.isfinite(base)):
        return ""
    delta = days - base
    if delta == 0:
        return "same as base"
    sign = "+" if delta > 0 else MINUS
    return f"{sign}{format_number(abs(delta), sig=3)} d vs base"


SPACING = 28
"""Pixels between the items of a line of the summary."""

SCENARIO_CHARS = 28
"""Characters of the scenario on show the drop-down keeps room for."""


class SummaryBar(QFrame):
    """One line under the settings: the scenario on show, duration, total units, binding
    metric, notes on hover. :attr:`chosen` carries a scenario picked in the drop-down
    (``None``: the base)."""

    chosen = Signal(object)

    def __init__(self, document: PlanDocument, parent=None) -> None:
        super().__init__(parent)
        self.setObjectName("summaryBar")
        self.document = document
        self._equal_cache = RowCache()
        self._shown_notes: tuple | None = None
        lines = QVBoxLayout(self)
        lines.setContentsMargins(12, 6, 12, 6)
        lines.setSpacing(4)
        self._lines = tuple(QHBoxLayout() for _ in range(4))  # one item a line at most
        for line in self._lines:
            line.setSpacing(SPACING)
            lines.addLayout(line)
        self._places: tuple = ()
        self.scenario = QComboBox()
        self.scenario.setObjectName("scenarioChoice")
        self.scenario.setAccessibleName("Scenario on show")
        self.scenario.activated.connect(self._picked)
        # as wide as a usual name (a long one is cut short with "…"; its list shows it whole),
        # so that the summary's other items keep to one line whichever scenario is on show
        self.scenario.setSizeAdjustPolicy(
            QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.scenario.setMinimumContentsLength(SCENARIO_CHARS)
        first = self._lines[0]
        first.addWidget(self.scenario)
        self.duration = QLabel()
        self.units = QLabel()
        self.binding = QLabel()
        for label in (self.duration, self.units, self.binding):
            label.setTextFormat(Qt.TextFormat.RichText)
            label.setObjectName("summaryItem")
            label.setMinimumWidth(40)
            label.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Preferred)
            first.addWidget(label)
        first.addStretch(1)
        self.notes = QLabel()
        self.notes.setObjectName("summaryNotes")
        first.addWidget(self.notes)
        for line in self._lines[1:]:
            line.addStretch(1)
        document.computed.connect(self.refresh)
        self.refresh()

    def resizeEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().resizeEvent(event)
        self._arrange()

    def _arrange(self) -> None:
        """Keep every item whole (a clipped item would show a cut number): the items go, in
        their order, on the first line beside the notes while they fit, then on the next
        lines, each as full as it can be.

        An incomplete plan's reasons wrap in the duration item, which takes the free width of
        its line."""
        margins = self.layout().contentsMargins()
        full = self.contentsRect().width() - margins.left() - margins.right()
        room = full - self.notes.sizeHint().width() - SPACING
        items = [self.scenario] if not self.scenario.isHidden() else []
        items += [self.duration, self.units, self.binding]
        places, line, used = [], 0, 0
        for item in items:
            if item is self.scenario or (item.text() and not item.wordWrap()):
                width = item.sizeHint().width()
                if used and used + width > room and line + 1 < len(self._lines):
                    line, used, room = line + 1, 0, full  # not after the others on this line
                elif not used and line == 0 and width > room:
                    line, room = 1, full  # not even alone beside the notes
                used += width + SPACING
            places.append(line)
        if tuple(places) == self._places:
            return
        self._places = tuple(places)
        for item in items:
            for layout in self._lines:
                layout.removeWidget(item)
        for item, line in zip(items, places, strict=True):
            layout = self._lines[line]
            at = layout.count() - (2 if line == 0 else 1)  # before the stretch (and notes)
            stretch = 1 if item is self.duration and item.wordWrap() else 0
            layout.insertWidget(at, item, stretch)

    def texts(self) -> tuple[str, str, str]:
        """The three items as plain text (for tests and the status of a shot)."""
        return tuple(html.unescape(re.sub(r"<[^>]+>", "", label.text()))
                     for label in (self.duration, self.units, self.binding))

    def _show_incomplete(self, result) -> None:
        """An incomplete plan: no duration, but the rows that keep it from one, in the warning
        colour."""
        colour = theme.tints().problem.name()
        rows = "; ".join(f"row {item.index + 1} ({html.escape(item.name)}): "
                         f"{html.escape(item.reason)}" for item in result.incomplete)
        self._wrap(True)
        self.duration.setText(f'<span style="color:{colour}"><b>Incomplete plan: no duration'
                              f'</b> until these rows can be computed — {rows}</span>')
        self.units.setText("")
        self.binding.setText("")
        self._arrange()

    def _saving_text(self, result) -> str:
        """What a √k split saves against an equal one ("" for any other split)."""
        plan = self.document.plan
        if plan.settings.allocation != "sqrt-k":
            return ""
        saving = equal_allocation_saving(plan, result, self._equal_cache)
        if saving is None:
            return ""
        text = f" (√k split: {format_count(saving.units_saved)} fewer units"
        if math.isfinite(saving.days_saved):
            text += f", {format_number(saving.days_saved, sig=3)} days sooner"
        return text + " than an equal split)"

    def scenario_text(self) -> str:
        """The scenario on show as the drop-down names it ("" without scenarios)."""
        return "" if self.scenario.isHidden() else self.scenario.currentText()

    def _picked(self, index: int) -> None:
        self.chosen.emit(self.scenario.itemData(index))

    def _show_scenarios(self) -> None:
        whole = self.document.whole
        names = [None, *(scenario.name for scenario in whole.scenarios)]
        self.scenario.blockSignals(True)
        if [self.scenario.itemData(i) for i in range(self.scenario.count())] != names:
            self.scenario.clear()
            for name in names:
                self.scenario.addItem(f"Scenario: {name}" if name else f"Showing: {BASE}", name)
            measure = self.scenario.view().fontMetrics()
            self.scenario.view().setMinimumWidth(max(
                measure.horizontalAdvance(self.scenario.itemText(i))
                for i in range(self.scenario.count())) + 32)
        self.scenario.setCurrentIndex(names.index(whole.active))
        self.scenario.setToolTip(f"{self.scenario.currentText()}. The scenario on show: edits "
                                 "change only it (Base: the plan as entered)")
        self.scenario.blockSignals(False)
        self.scenario.setVisible(bool(whole.scenarios))
        active = whole.active is not None
        if self.scenario.property("active") != active:  # its style follows; else nothing to do
            self.scenario.setProperty("active", active)
            self.scenario.style().unpolish(self.scenario)
            self.scenario.style().polish(self.scenario)

    def refresh(self) -> None:
        """Show the document's current result."""
        self._show_scenarios()
        result = self.document.result
        if result is None:
            self.duration.setText(f"Cannot compute the plan: {self.document.compute_error}")
            self.units.setText("")
            self.binding.setText("")
            self.notes.setText("")
            self._shown_notes = None
            self._arrange()
            return
        self._notes(result)
        if result.incomplete:
            self._show_incomplete(result)
            return
        self._wrap(False)
        settings = self.document.plan.settings
        duration = duration_text(result.duration_days)
        if result.duration_days is None and not traffic.has_traffic(settings):
            duration = ("— (enter the reach curve)" if settings.traffic == "reach" else
                        "— (set daily units)")
        text = f"Duration <b>{duration}</b>"
        base = self.document.outcome(None) if self.document.scenario is not None else None
        if base is not None and base.complete:
            delta = base_delta(result.duration_days, base.result.duration_days)
            if delta:
                text += f" ({delta})"
        text += self._extrapolated(settings, result.duration_days)
        if settings.looks > 1 and result.binding_index is not None:
            expected = result.rows[result.binding_index].days_expected_h1
            if math.isfinite(expected):
                text += f" at most, {format_days(expected)} days expected"
        self.duration.setText(text)
        total = format_count(result.total_units) if result.total_units is not None else "—"
        self.units.setText(f"Total units <b>{total}</b>{self._saving_text(result)}")
        if result.binding_name:
            row = result.binding_index + 1
            self.binding.setText(f"Binding metric <b>▶ {result.binding_name}</b> (row {row})")
        elif settings.runtime_days is not None:
            self.binding.setText("Fixed runtime: rows report what it allows")
        else:
            self.binding.setText("No binding metric (no primary or guardrail row sized)")
        self._arrange()

    @staticmethod
    def _extrapolated(settings, days: float | None) -> str:
        """A duration past the reach curve's days, flagged in the warning colour with the
        stated error ("" otherwise; the notes and the duration's tooltip say more)."""
        if days is None or not traffic.extrapolated(settings, days):
            return ""
        found = traffic.model(settings)
        error = float(found.fit.error(days)) * 100
        colour = theme.tints().problem.name()
        return f' <span style="color:{colour}">extrapolated ±{error:.2g} %</span>'


    def _wrap(self, wide: bool) -> None:
        """Let the duration item take the line's free width and wrap (an incomplete plan's
        reasons), or keep it to its text (a duration)."""
        self.duration.setWordWrap(wide)
        horizontal = QSizePolicy.Policy.Expanding if wide else QSizePolicy.Policy.Preferred
        self.duration.setSizePolicy(horizontal, QSizePolicy.Policy.Preferred)
        for line in self._lines:
            line.setStretchFactor(self.duration, 1 if wide else 0)

    def _notes(self, result) -> None:
        if result.notes == self._shown_notes:
            return  # the same notes (thousands, on a large plan) are not written out again
        self._shown_notes = result.notes
        count = len(result.notes)
        self.notes.setText(f"{count} note{'s' if count != 1 else ''} (hover)" if count else "")
        items = "".join(f"<li>{html.escape(note, quote=False)}</li>" for note in result.notes)
        self.notes.setToolTip(f"<ul>{items}</ul>" if count else "")
        self.setToolTip("\n".join(result.notes))
