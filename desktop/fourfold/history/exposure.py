"""Reach and per-unit windows: what a file of rows per unit and day says about a test's traffic.

With a unit column and a time column, rows are visits (or days) of units, and a unit's
**first day** is the day of its earliest row; day 1 is the first day in the file and the history
is D days long.

* The **reach curve** counts distinct units by first day: after d days, the units first seen
  on days 1…d (:class:`ReachCurve`; exact, or a HyperLogLog estimate past the memory budget).
* **Windowed moments**: for d = 7, 14, 21, 28 (those up to D) and d = D, each unit's metric is
  accumulated over the first d days of its exposure — its rows on its first day and the
  d − 1 days after — and the mean, sd and ρ are taken over units: a mean or count column is
  summed over those rows (revenue per user over 14 days), a 0/1 column becomes 1 when any of
  them is 1 (converted within 14 days), a ratio sums numerator and denominator over the rows
  that have both. Only units whose whole window lies inside the history count (first day
  ≤ D − d + 1), so no window is cut short; a unit with no value in its window is missing. The
  pre-period column is a unit attribute: its mean over the unit's rows that have one. A cap
  applies to the per-unit window values, at their exact percentile.

Memory: per unit, :class:`~fourfold.history.ids.UnitTable` holds 20 bytes, and per mapped metric
:class:`Exposure` adds the sums of five bands of days since the first (days 1–7, 8–14,
15–21, 22–28, 29 on), from which every window is a prefix: 42 bytes for a mean or count, 4 for
a proportion, 82 for a ratio, 12 more for a pre-period column. Past the memory budget the
windows come from a hashed sample of units (one in 2ᵏ, chosen by id, so never a unit's partial
history) and the report says so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fourfold.history.errors import HistoryError
from fourfold.history.moments import CoMoments, Moments
from fourfold.history.summary import ColumnMap, MetricSummary, Tally, finish
from fourfold.history.tail import TailEstimate

WINDOW_DAYS = (7, 14, 21, 28)
"""The standard windows (days since a unit's first day); the history's length is added."""
BAND_DAYS = 7
BANDS = 5
_NEVER = np.iinfo(np.int16).max
MAX_DAYS = 3660
"""The longest history the reach curve and windows follow (ten years of days)."""


def window_days(days: int) -> tuple[int, ...]:
    """The windows of a history of ``days`` days: the standard ones that fit, and its length.

    Examples
    --------
    >>> window_days(28), window_days(30), window_days(10)
    ((7, 14, 21, 28), (7, 14, 21, 28, 30), (7, 10))
    """
    return tuple(sorted({d for d in WINDOW_DAYS if d <= days} | {int(days)}))


@dataclass(frozen=True)
class ReachCurve:
    """Distinct units reached after 1, 2, …, D days (cumulative, by first day).

    Attributes
    ----------
    first_day : int
        Day 1 as a day number (days since 1970-01-01 when the file holds dates).
    units : tuple of int
        ``units[k]`` units were first seen on days 1 … k + 1.
    exact : bool
        False when counted with HyperLogLog; then each figure is within ±``relative_error``
        (one standard error, relative) of the true count.
    dates : bool
        Whether ``first_day`` counts days since 1970-01-01 (the file held dates).

    Examples
    --------
    >>> curve = ReachCurve(20513, (120, 200, 251), True, 0.0, True)
    >>> curve.days, curve.start, curve.to_list()[-1]
    (3, '2026-03-01', {'day': 3, 'units': 251})
    """

    first_day: int
    units: tuple[int, ...]
    exact: bool
    relative_error: float
    dates: bool

    @property
    def days(self) -> int:
        """D, the history's length in days."""
        return len(self.units)

    @property
    def start(self) -> str:
        """Day 1 as an ISO date (or "day N" for day numbers)."""
        if not self.dates:
            return f"day {self.first_day}"
        import datetime as dt

        return (dt.date(1970, 1, 1) + dt.timedelta(days=self.first_day)).isoformat()

    def to_list(self) -> list[dict[str, int]]:
        """``[{"day": 1, "units": N1}, …]`` as the JSON output carries it."""
        return [{"day": day, "units": int(n)} for day, n in enumerate(self.units, start=1)]


@dataclass(frozen=True)
class WindowSummary:
    """The metrics over each unit's first ``days`` days.

    ``units`` units have a complete window (``share`` of them: 1, or 1/2ᵏ when the windows
    come from a hashed sample); ``metrics`` holds the metrics whose figures can size a test
    and ``problems`` says, per metric name, why the others cannot.
    """

    days: int
    units: int
    metrics: tuple[MetricSummary, ...]
    problems: dict[str, str] = field(default_factory=dict)
    share: float = 1.0

    def __getitem__(self, name: str) -> MetricSummary:
        for metric in self.metrics:
            if metric.name == name:
                return metric
        raise KeyError(name)

    def get(self, name: str) -> MetricSummary | None:
        """The metric's summary, or None when this window has no usable figures for it."""
        try:
            return self[name]
        except KeyError:
            return None


class Exposure:
    """Per-unit sums of each metric by band of days since the unit's first day.

    The arrays live in the :class:`~fourfold.history.ids.UnitTable` (they grow, shrink and
    are sampled with it). :meth:`add` takes a chunk's rows with their unit index and day
    offset; :meth:`windows` turns the sums into one :class:`WindowSummary` per window.
    """

    def __init__(self, mapping: list[ColumnMap], table) -> None:
        self.mapping = mapping
        self.table = table
        for i, spec in enumerate(mapping):
            table.add_array(f"{i}:first", np.int16, fill=_NEVER)
            if spec.kind == "proportion":
                table.add_array(f"{i}:true", np.int16, fill=_NEVER)
            elif spec.kind == "ratio":
                table.add_array(f"{i}:num", np.float64, BANDS)
                table.add_array(f"{i}:den", np.float64, BANDS)
            else:
                table.add_array(f"{i}:sum", np.float64, BANDS)
            if spec.pre is not None:
                table.add_array(f"{i}:pre", np.float64)
                table.add_array(f"{i}:pren", np.int32)

    def clear(self) -> None:
        """Forget every sum (before a second pass)."""
        self.table.clear_arrays()

    def add(self, index: np.ndarray, offset: np.ndarray, value) -> None:
        """Add a chunk: ``index`` the unit of each row (−1: not followed), ``offset`` its days
        since the unit's first day, ``value(column, kind)`` a column's numbers (nan if empty)."""
        rows = index >= 0
        if not rows.all():
            index, offset = index[rows], offset[rows]
        offset = np.minimum(offset, _NEVER - 1).astype(np.int16)
        cell = index * BANDS + np.minimum(offset // BAND_DAYS, BANDS - 1)
        table = self.table
        for i, spec in enumerate(self.mapping):
            x = value(spec.column, "mean" if spec.kind == "ratio" else spec.kind)
            x = x if rows.all() else x[rows]
            if spec.kind == "ratio":
                d = value(spec.denominator, "mean")
                d = d if rows.all() else d[rows]
                present = ~(np.isnan(x) | np.isnan(d))
                np.add.at(table.array(f"{i}:num").reshape(-1), cell[present], x[present])
                np.add.at(table.array(f"{i}:den").reshape(-1), cell[present], d[present])
            else:
                present = ~np.isnan(x)
                if spec.kind == "proportion":
                    hit = present & (x == 1.0)
                    np.minimum.at(table.array(f"{i}:true"), index[hit], offset[hit])
                else:
                    np.add.at(table.array(f"{i}:sum").reshape(-1), cell[present], x[present])
            np.minimum.at(table.array(f"{i}:first"), index[present], offset[present])
            if spec.pre is not None:
                pre = value(spec.pre, spec.kind)
                pre = pre if rows.all() else pre[rows]
                has = ~np.isnan(pre)
                np.add.at(table.array(f"{i}:pre"), index[has], pre[has])
                np.add.at(table.array(f"{i}:pren"), index[has], 1)

    def windows(self, first_days: np.ndarray, day_one: int, days: int,
                share: float = 1.0) -> tuple[WindowSummary, ...]:
        """One summary per window of a ``days``-day history starting on ``day_one``."""
        start = first_days.astype(np.int64) - day_one
        out = []
        for d in window_days(days):
            complete = start + d <= days
            bands = d // BAND_DAYS if d in WINDOW_DAYS else BANDS
            metrics, problems = [], {}
            for i, spec in enumerate(self.mapping):
                try:
                    metrics.append(self._metric(i, spec, complete, d, bands))
                except HistoryError as error:
                    problems[spec.name] = str(error)
            out.append(WindowSummary(d, int(complete.sum()), tuple(metrics), problems, share))
        return tuple(out)

    def _metric(self, i: int, spec: ColumnMap, complete: np.ndarray, d: int,
                bands: int) -> MetricSummary:
        size = self.table.size

        def part(name: str) -> np.ndarray:
            return self.table.array(f"{i}:{name}")[:size][complete]

        units = int(complete.sum())
        present = part("first") < d
        if spec.kind == "ratio":
            num = part("num")[:, :bands].sum(axis=1)[present]
            den = part("den")[:, :bands].sum(axis=1)[present]
            raw = CoMoments.of(den, num)
            capped, count, thresholds = _cap(num, spec.cap, spec.column)
            pairs = CoMoments.of(den, capped)
            tally = Tally(units, pairs.y, pairs,
                          raw_pairs=raw if spec.cap is not None else CoMoments(), capped=count)
            return finish(spec, tally, thresholds=thresholds)
        if spec.kind == "proportion":
            x = (part("true") < d).astype(np.float64)[present]
        else:
            x = part("sum")[:, :bands].sum(axis=1)[present]
        capped, count, thresholds = _cap(x, spec.cap, spec.column)
        pairs = CoMoments()
        if spec.pre is not None:
            pre_n = part("pren")[present]
            has = pre_n > 0
            pre = part("pre")[present][has] / pre_n[has]
            pre_capped, _, pre_thresholds = _cap(pre, spec.cap, spec.pre)
            thresholds.update(pre_thresholds)
            pairs = CoMoments.of(pre_capped, capped[has])
        tally = Tally(units, Moments.of(capped), pairs,
                      raw_values=Moments.of(x) if spec.cap is not None else Moments(),
                      capped=count)
        return finish(spec, tally, thresholds=thresholds)


def _cap(x: np.ndarray, cap: float | None, column: str):
    """``x`` capped at its exact ``cap`` percentile, how many values moved, the threshold."""
    if cap is None:
        return x, 0, {}
    value = float(np.percentile(x, cap)) if x.size else math.nan
    over = x > value
    estimate = TailEstimate(float(cap), value, True)
    return np.where(over, value, x), int(over.sum()), {(column, cap): estimate}
