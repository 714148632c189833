"""Following units while a history file streams past: reach curve and per-unit windows.

:class:`TrafficPass` rides along the import's moments pass (:func:`fourfold.history
.read_history` with ``unit`` and ``time``): per chunk it hashes the unit ids
(:mod:`~fourfold.history.ids`), turns the times into days (:mod:`~fourfold.history.days`),
keeps each unit's first day and adds the chunk's values to the unit's window sums
(:mod:`~fourfold.history.exposure`).

One pass is enough when no unit's row comes before a row of the same unit already read — the
usual case for a log written in time order (within a day, order does not matter). When a
unit shows up earlier than its first day so far, its sums up to then were counted from the
wrong day: the first days are still right at the end of the pass, and a second pass over the
unit, time and metric columns adds the window sums again (:attr:`TrafficPass.second_pass`).

Memory stays within ``unit_memory`` bytes of per-unit arrays (briefly 1.5 times that while they
double): when the next unit would not fit, the reach curve goes over to a HyperLogLog sketch
(:mod:`~fourfold.history.hll`) and the windows to a hashed sample of units.
"""

from __future__ import annotations

import numpy as np

from fourfold.history.days import DATES, DayReader
from fourfold.history.errors import HistoryError
from fourfold.history.exposure import MAX_DAYS, Exposure, ReachCurve, WindowSummary
from fourfold.history.hll import DailySketch
from fourfold.history.ids import UnitTable, hash_ids

DEFAULT_UNIT_MEMORY = 1 << 30
"""Bytes of per-unit arrays (1 GiB) before the reach curve is estimated and the windows are
sampled: 4.8 million units with one mean column and its pre-period column, 1.4 million with the
six metrics of the sample history (see :mod:`fourfold.history.exposure` for the bytes)."""


class TrafficPass:
    """Reach and windows of one import (see the module text).

    Parameters
    ----------
    mapping : list of ColumnMap
        The metrics whose windows are summed.
    unit, time : str
        The unit id column and the time column.
    unit_memory : int
        Bytes of per-unit arrays before sampling.
    """

    def __init__(self, mapping, unit: str, time: str, unit_memory: int = DEFAULT_UNIT_MEMORY):
        if unit == time:
            raise HistoryError(f"column {unit!r} cannot be both the unit and the time")
        self.unit, self.time = unit, time
        self.table = UnitTable(limit=1 << 40)
        self.exposure = Exposure(mapping, self.table)
        self.table.limit = max(16, int(unit_memory) // self.table.bytes_per_unit)
        self.days = DayReader(time)
        self.sketch: DailySketch | None = None
        self.low: int | None = None
        self.high: int | None = None
        self.rows = 0

    @property
    def columns(self) -> tuple[str, str]:
        """The two columns this pass reads besides the metrics'."""
        return self.unit, self.time

    @property
    def second_pass(self) -> bool:
        """Whether the window sums need a second pass (rows out of time order)."""
        return self.table.out_of_order

    def add(self, chunk, value, where) -> None:
        """Follow the chunk's units (first pass); ``value(column, kind)`` gives a column's
        numbers and ``where(i)`` names row ``i`` for messages."""
        keys = hash_ids(chunk.columns[self.unit], self.unit, where)
        days = self.days(chunk.columns[self.time], where)
        self._span(days)
        index = self.table.index(keys, days, on_full=self._thin)
        if self.sketch is not None:
            self.sketch.add(days, keys)
        self.rows += len(keys)
        if not self.table.out_of_order:
            self._sum(index, days, value)

    def add_again(self, chunk, value, where) -> None:
        """Sum the chunk's windows with the final first days (second pass)."""
        keys = hash_ids(chunk.columns[self.unit], self.unit, where)
        days = self.days(chunk.columns[self.time], where)
        self._sum(self.table.index(keys, days, add=False), days, value)

    def restart(self) -> None:
        """Clear the window sums before the second pass."""
        self.exposure.clear()

    def _sum(self, index: np.ndarray, days: np.ndarray, value) -> None:
        offset = days - self.table.first_days(np.maximum(index, 0))
        self.exposure.add(index, offset, value)

    def _span(self, days: np.ndarray) -> None:
        if days.size == 0:
            return
        low, high = int(days.min()), int(days.max())
        self.low = low if self.low is None else min(self.low, low)
        self.high = high if self.high is None else max(self.high, high)
        if self.high - self.low + 1 > MAX_DAYS:
            raise HistoryError(
                f"column {self.time!r} spans more than {MAX_DAYS:,} days; the reach curve and "
                "windows follow at most that many (leave out --time, or cut the history)"
            )

    def _thin(self) -> None:
        """The table is full: count reach with a sketch from now on and sample the units."""
        if self.sketch is None:
            self.sketch = DailySketch()
            self.sketch.add(self.table.first_days(), self.table.keys())
        self.table.raise_level()

    @property
    def share(self) -> float:
        """The fraction of units the windows follow (1, or 1/2ᵏ)."""
        return 1.0 / (1 << self.table.level)

    def result(self) -> tuple[ReachCurve, tuple[WindowSummary, ...]]:
        """The reach curve and the windows, once every chunk is in."""
        if self.low is None:
            raise HistoryError("the file has no rows, so there is no reach to count")
        days = self.high - self.low + 1
        first = self.table.first_days()
        if self.sketch is None:
            counts = np.bincount(first.astype(np.int64) - self.low, minlength=days)
            units = tuple(int(n) for n in np.cumsum(counts))
            reach = ReachCurve(self.low, units, True, 0.0, self.days.form == DATES)
        else:
            estimates = np.rint(self.sketch.reach(self.low, days)).astype(np.int64)
            reach = ReachCurve(self.low, tuple(int(n) for n in estimates), False,
                               self.sketch.relative_error, self.days.form == DATES)
        windows = self.exposure.windows(first, self.low, days, self.share)
        return reach, windows
