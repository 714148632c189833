"""The summary line: the plan's duration, its total units and the binding metric, always shown.

An incomplete plan (a primary or guardrail row that cannot be computed) shows no duration:
the line says so in the warning colour and names each such row with its reason.
"""

from __future__ import annotations

import html
import math
import re

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QFrame, QHBoxLayout, QLabel, QSizePolicy

from fourfold.formatting import format_count, format_days, format_number, whole_days
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


class SummaryBar(QFrame):
    """One line under the settings: duration, total units, binding metric, notes on hover."""

    def __init__(self, document: PlanDocument, parent=None) -> None:
        super().__init__(parent)
        self.setObjectName("summaryBar")
        self.document = document
        layout = QHBoxLayout(self)
        layout.setContentsMargins(12, 6, 12, 6)
        layout.setSpacing(28)
        self.duration = QLabel()
        self.units = QLabel()
        self.binding = QLabel()
        for label in (self.duration, self.units, self.binding):
            label.setTextFormat(Qt.TextFormat.RichText)
            label.setObjectName("summaryItem")
            label.setMinimumWidth(40)
            label.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Preferred)
            layout.addWidget(label)
        layout.addStretch(1)
        self.notes = QLabel()
        self.notes.setObjectName("summaryNotes")
        layout.addWidget(self.notes)
        document.computed.connect(self.refresh)
        self.refresh()

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

    def refresh(self) -> None:
        """Show the document's current result."""
        result = self.document.result
        if result is None:
            self.duration.setText(f"Cannot compute the plan: {self.document.compute_error}")
            self.units.setText("")
            self.binding.setText("")
            self.notes.setText("")
            return
        self._notes(result)
        if result.incomplete:
            self._show_incomplete(result)
            return
        self._wrap(False)
        settings = self.document.plan.settings
        duration = duration_text(result.duration_days)
        if result.duration_days is None and settings.daily_units is None:
            duration = "— (set daily units)"
        text = f"Duration <b>{duration}</b>"
        if settings.looks > 1 and result.binding_index is not None:
            expected = result.rows[result.binding_index].days_expected_h1
            if math.isfinite(expected):
                text += f" at most, {format_days(expected)} days expected"
        self.duration.setText(text)
        total = format_count(result.total_units) if result.total_units is not None else "—"
        self.units.setText(f"Total units <b>{total}</b>")
        if result.binding_name:
            row = result.binding_index + 1
            self.binding.setText(f"Binding metric <b>▶ {result.binding_name}</b> (row {row})")
        elif settings.runtime_days is not None:
            self.binding.setText("Fixed runtime: rows report what it allows")
        else:
            self.binding.setText("No binding metric (no primary or guardrail row sized)")

    def _wrap(self, wide: bool) -> None:
        """Let the duration item take the line's free width and wrap (an incomplete plan's
        reasons), or keep it to its text (a duration)."""
        self.duration.setWordWrap(wide)
        horizontal = QSizePolicy.Policy.Expanding if wide else QSizePolicy.Policy.Preferred
        self.duration.setSizePolicy(horizontal, QSizePolicy.Policy.Preferred)
        self.layout().setStretchFactor(self.duration, 1 if wide else 0)

    def _notes(self, result) -> None:
        count = len(result.notes)
        self.notes.setText(f"{count} note{'s' if count != 1 else ''} (hover)" if count else "")
        items = "".join(f"<li>{html.escape(note)}</li>" for note in result.notes)
        self.notes.setToolTip(f"<ul>{items}</ul>" if count else "")
        self.setToolTip("\n".join(result.notes))
