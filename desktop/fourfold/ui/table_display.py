"""What the plan table shows: cell texts, tooltips, colours of the text and the row headers.

A cell shows an input as the user typed it (in the row's units), a plan default or an unused
input in muted italics, a computed output, or "—" with the reason in its tooltip when the row
cannot be computed. The row header marks the binding metric. While a scenario is on show, the
inputs it changes are tinted and their tooltips give the base's value.
"""

from __future__ import annotations

import math

from PySide6.QtCore import Qt

from fourfold.plan import CHOICES, kinds, traffic, windows
from fourfold.plan.scenarios import find
from fourfold.ui import cells, simulation_cells
from fourfold.ui.columns import CHECK, CHOICE, COLUMNS, NUMBER, TEXT

ROLE = Qt.ItemDataRole

DERIVED_SD_TIPS = {
    "ratio": "Derived from the numerator's and denominator's means, sds and correlation by the "
             "delta method (not typed)",
    "quantile": "Derived from the quantile's level and the density there: √(p(1 − p)) / "
                "density (not typed)",
}


def _solve_tip(solved: str, chosen: str, runtime: bool) -> str:
    """Why a row computes something other than its "Solve for" choice."""
    if solved == "detectable_margin":
        why = "a fixed runtime and a margin" if runtime and chosen == "sample_size" else \
            "a margin"
        return (f"With {why}, this row reports the tightest margin it rules out (the margin "
                f"closest to its effect), not an effect (chosen: {cells.label(chosen)})")
    return (f"The plan has a fixed runtime, so this row reports the {cells.label(solved)} "
            f"those days allow (chosen: {cells.label(chosen)})")


class TableDisplay:
    """Display texts and roles of :class:`fourfold.ui.table_model.PlanTableModel`."""

    def scenario_changes(self) -> dict:
        """Row id → the fields the scenario on show changes (empty for the base)."""
        whole = self.document.whole
        if whole.active is None:
            return {}
        return find(whole, whole.active).rows

    def changed_here(self, row: int, key: str) -> bool:
        """Whether the scenario on show changes this input of ``row``."""
        return key in self._changes.get(self._rows[row].id, ())

    def _base_text(self, row: int, key: str) -> str:
        base = next((metric for metric in self.document.whole.metrics
                     if metric.id == self._rows[row].id), None)
        if base is None:
            return ""
        value = getattr(base, key)
        if isinstance(value, bool):
            return "yes" if value else "no"
        if key == "method" and value is None:
            return CHOICES["method"][base.kind][0]
        if isinstance(value, str) or value is None:
            return cells.label(value) if value is not None else "empty"
        return cells.show_value(base, key, value)

    def window_value(self, row: int, key: str):
        """The figure a row that follows its history windows uses for ``key`` (the window as
        long as the plan's duration), or None when it takes its own field."""
        metric = self._rows[row]
        if not windows.follows(metric) or not any(key in w for w in metric.windows):
            return None
        result = self.document.result
        days = None if result is None else result.window_days
        return None if days is None else windows.figures(metric, days)[0].get(key)

    def _days_flag(self, row: int) -> str:
        """Why a row's days are a flagged number: past the reach curve ("" otherwise)."""
        settings = self.document.plan.settings
        result = self._results[row]
        if result is None or not traffic.extrapolated(settings, result.days):
            return ""
        found = traffic.model(settings)
        return (f"Extrapolated: past the reach curve's {found.observed:g} days, where the "
                f"fitted model gives the units (stated error ±"
                f"{float(found.fit.error(result.days)) * 100:.2g} %)")

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
            if key == "power_at_duration":
                return cells.format_number(self.duration_power(row), sig=3)
            return cells.output_text(metric, self.document.plan.settings, self._results[row],
                                     key)
        value = getattr(metric, key)
        shown = self.window_value(row, key)
        if shown is not None:
            return cells.show_value(metric, key, shown, with_unit=True)
        if col.editor == TEXT:
            return value
        if col.editor == CHECK:
            return ""
        if col.editor == CHOICE:
            if key == "method" and value is None:
                return CHOICES["method"][metric.kind][0]
            if key == "solve":  # what the row computes, which a runtime or a margin may change
                return cells.label(self._solved(row))
            return cells.label(value)
        if value is None and key in ("alpha", "power"):
            return self._default_text(key)
        if value is None and key == "sd" and metric.kind == "rate":
            return "= mean"
        if (key == "sd" and metric.kind in kinds.DERIVED_SD) or (
                key == "density" and value is None and metric.kind == "quantile"):
            return self._derived_text(metric, key)
        if col.kind is not None and metric.kind != col.kind:
            return ""
        return cells.show_value(metric, key, value, with_unit=True)

    def _derived_text(self, metric, key: str) -> str:
        """The text of a figure derived from the row's own fields alone (a ratio's or
        quantile's sd, a quantile's fitted density), as the plan keeps it by the row's stamp
        (an engine call once per state of the row, not on every recompute)."""
        if key == "sd":
            sd = float(kinds.kept_unit_sds([metric])[0][0])
            return cells.show_value(metric, key, sd, with_unit=True) or cells.DASH
        return cells.show_value(metric, key, kinds.kept_density(metric))

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

    def _tooltip(self, row: int, column: int) -> str | None:
        col = COLUMNS[column]
        if col.key == simulation_cells.KEY:
            return simulation_cells.tooltip(self._rows[row], self.document.plan.settings,
                                            self._results[row])
        reason = self._reason(row)
        if col.computed and reason:
            return f"Cannot compute this row: {reason}"
        metric = self._rows[row]
        if not col.computed and self.changed_here(row, col.key):
            return (f"Changed in scenario {self.document.scenario} "
                    f"(base: {self._base_text(row, col.key)})")
        if col.key == "solve" and self._solved(row) != metric.solve:
            return _solve_tip(self._solved(row), metric.solve,
                              self.document.plan.settings.runtime_days is not None)
        if col.key == "effect" and self._is_unused(row, "effect"):
            return "Not used: this row computes the effect it can detect"
        if col.key == "margin" and self._is_unused(row, "margin"):
            return "Not used: this row computes the tightest margin it rules out"
        if col.key == "power_at_duration" and not reason and math.isnan(self.duration_power(row)):
            return "The plan has no duration yet: no row sets it, or the plan is incomplete"
        if col.key in ("alpha", "power") and getattr(metric, col.key) is None:
            return "Plan default (type a value to override it for this row)"
        if col.key == "notes" and metric.notes:
            return metric.notes
        if col.key == "method" and metric.method is None:
            return f"The usual method for a {metric.kind} (choose another to override it)"
        if col.key == "sd" and metric.kind in kinds.DERIVED_SD:
            return DERIVED_SD_TIPS[metric.kind]
        if self.window_value(row, col.key) is not None:
            days = self.document.result.window_days
            return (f"From the history: each unit's first {days:g} days, the plan's duration "
                    "(untick 'By window' to type the row's own)")
        if col.key == "days" and self._days_flag(row):
            return self._days_flag(row)
        if col.key == "density" and metric.kind == "quantile" and metric.density is None:
            return ("From the log-normal through the baseline and the second percentile; type "
                    "a density (the history import estimates one) to use it instead")
        if col.kind is not None and metric.kind != col.kind:
            return f"Used by {col.kind} rows only"
        if col.key == "better" and metric.role == "guardrail":
            margin = cells.show_value(metric, "margin", abs(metric.margin), True).lstrip("+")
            return f"This guardrail {kinds.direction_words(metric, margin)}"
        if self.is_solved(row, column):
            return "The quantity this row solves for"
        if col.key == "name" and reason:
            return f"Cannot compute this row: {reason}"
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
        if col.key == "days" and self._days_flag(row):
            return self._tints.problem
        if self.window_value(row, col.key) is not None:
            return self._tints.muted
        if col.key == "method" and metric.method is None:
            return self._tints.muted
        if col.key in ("sd", "density") and getattr(metric, col.key) is None:
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
