"""Editing the plan table: reading typed and pasted text into field values, and copying cells.

An edit becomes a :class:`fourfold.plan.commands.SetField` command; text that cannot be read is
reported on the document's status message and changes nothing. A pasted block is read into
:class:`PasteEdits`, each line in the units its row will have.
"""

from __future__ import annotations

import dataclasses

from PySide6.QtCore import Qt

from fourfold.errors import FourfoldError
from fourfold.formatting import format_number
from fourfold.plan import CHOICES, Metric
from fourfold.plan.commands import SetField
from fourfold.plan.fields import validate_field
from fourfold.plan.kinds import DERIVED_SD
from fourfold.plan.windows import follows
from fourfold.ui import cells
from fourfold.ui.columns import CHECK, CHOICE, COLUMNS, TEXT

ROLE = Qt.ItemDataRole


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


class TableEditing:
    """Parsing, copying, pasting and ``setData`` of the plan table's model."""

    def choices(self, row: int, column: int,
                metric: Metric | None = None) -> list[tuple[str, object]]:
        """Allowed values of a choice cell as ``(label, value)`` pairs (of ``metric``'s row)."""
        key = COLUMNS[column].key
        if key == "method":
            metric = self._rows[row] if metric is None else metric
            methods = CHOICES["method"][metric.kind]
            return [(f"{methods[0]} (default)", None)] + [(name, name) for name in methods]
        return [(cells.label(value), value) for value in CHOICES[key]]

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
                value = truth[lowered]
            if col.key == "windowed" and value and not metric.windows:
                raise FourfoldError(f"{metric.name} has no history windows: import them with "
                                    "unit and time columns (Plan → Import history…)")
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
        if col.key == "sd" and metric.kind in DERIVED_SD:
            raise FourfoldError(f"SD of a {metric.kind} row is derived from its own inputs; "
                                f"edit those instead")
        if follows(metric) and any(col.key in window for window in metric.windows):
            raise FourfoldError(f"{col.label} of {metric.name} comes from its history window as "
                                "long as the plan's duration; untick 'By window' to type one")
        if metric.unit and text.endswith(metric.unit) and col.key in cells.OWN_UNIT_KEYS:
            text = text[: -len(metric.unit)].strip()  # "20 ms" as the cell shows it
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

    def paste_edits(self, top: int, left: int, grid: list[list[str]],
                    columns: list[int] | None = None) -> PasteEdits:
        """Read a block of pasted text at ``(top, left)`` into field edits.

        Lines below the last row become new rows (as Plan → Add metric makes them), to be
        appended in the same step. Each line's kind and "Relative" cells are read first, so
        that its other cells are read in the units that row will have. ``columns`` are the
        positions the cells of a line fall on, left to right (the shown columns from ``left``
        on; by default every column from ``left`` on).
        """
        edits, errors, computed, dropped = [], [], 0, 0
        order = {key: rank for rank, key in enumerate(("kind", "relative"))}
        if columns is None:
            columns = list(range(left, len(COLUMNS)))
        for r, line in enumerate(grid):
            row = top + r
            metric = dataclasses.replace(self._rows[row]) if row < len(self._rows) else Metric()
            inside = [(columns[c], text) for c, text in enumerate(line) if c < len(columns)]
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
            self.document.message.emit(self.refusal(row, column, str(error)))
            return False
        if parsed == getattr(self._rows[row], col.key) and type(parsed) is type(
            getattr(self._rows[row], col.key)
        ):
            return True
        return self.document.apply(SetField(row, col.key, parsed),
                                   explain=lambda text: self.refusal(row, column, text, parsed))

    def refusal(self, row: int, column: int, text: str, value=None) -> str:
        """The message for a refused cell: its row and column ("row 1 (Checkout conversion),
        Power: …", as the plan's rules word it), why, and a hint when a number typed in percent
        was meant (``90`` for a power of 90 %)."""
        col = COLUMNS[column]
        where = f"row {row + 1} ({self._rows[row].name}), "
        # the plan's rules name the row and the column already; a reading error the column
        message = text if text.startswith(where) else where + (
            text if text.startswith(f"{col.label}: ") else f"{col.label}: {text}")
        if isinstance(value, float) and 1 < value <= 100 and cells.unit(
                self._rows[row], col.key) is None:
            try:
                validate_field(col.key, value / 100, kind=self._rows[row].kind)
            except FourfoldError:
                return message
            return f"{message} — for {format_number(value)} percent, type {format_number(value)} %"
        return message
