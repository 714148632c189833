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

Memory: per unit, :class:`~fourfold.history.ids.UnitTable` holds 20 to 28 bytes (hash, first
day, slots), and :class:`Exposure` keeps, for each of five bands of days since the first
(days 1–7, 8–14, 15–21, 22–28, 29 on; every window is a prefix of them), the unit's rows and
two numbers per metric (three for a ratio, two more for a pre-period column): 40 bytes, plus
80 per mean, count or proportion metric, 120 per ratio and 80 per pre-period column. One mean
with its pre-period column takes 224 bytes a unit; the six metrics of the sample history 744.
Past the memory budget (:data:`fourfold.history.traffic.DEFAULT_UNIT_MEMORY`) the windows come
from a hashed sample of units (one in 2ᵏ, chosen by id, so never a unit's partial history)
and the report says so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from fourfold.history.errors import HistoryError
from fourfold.history.moments import CoMoments, Moments
from fourfold.history.summary import ColumnMap, MetricSummary, Tally, finish
from fourfold.history.tail import TailEstimate

WINDOW_DAYS = (7, 14, 21, 28)
"""The standard windows (days since a unit's first day); the history's length is added."""
BAND_DAYS = 7
BANDS = 5
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
    first_day : int or None
        Day 1 as a day number (days since 1970-01-01 when the file holds dates); None when not
        known (a warehouse result without it).
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

    first_day: int | None
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
        if self.first_day is None:
            return "day 1"
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


_QUANTITIES = {
    "mean": ("sum",),
    "count": ("sum",),
    "proportion": ("true",),
    "ratio": ("num", "den"),
}
"""What each kind adds up per unit and band besides the rows: the values' sum, the rows with
a 1 (``true``), a ratio's numerator and denominator; and, for every metric, ``miss``: its
rows without a value (so that its rows with one are the unit's rows less those)."""


class Exposure:
    """Per-unit sums of each metric by band of days since the unit's first day.

    The sums are columns of the :class:`~fourfold.history.ids.UnitTable`'s rows (they grow,
    shrink and are sampled with it), one block per band holding the unit's rows in the band
    and every quantity the mapping adds up (see ``_QUANTITIES``; a pre-period column adds its
    sum and its empty cells), so that a file row's updates are side by side in memory and one
    ``np.add.at`` call makes them all; empty cells, usually few, are counted by a second call
    over those rows only. :meth:`add` takes a chunk's rows with their unit and day offset;
    :meth:`windows` turns the sums into one :class:`WindowSummary` per window.
    """

    def __init__(self, mapping: list[ColumnMap], table) -> None:
        self.mapping = mapping
        self.table = table
        dense: list[tuple[int, str]] = []
        sparse: list[tuple[int, str]] = []
        for i, spec in enumerate(mapping):
            if spec.kind not in _QUANTITIES:  # a quantile is of the rows, not of units
                continue
            pre = spec.pre is not None
            dense += [(i, name) for name in _QUANTITIES[spec.kind] + (("pre",) if pre else ())]
            sparse += [(i, "miss")] + ([(i, "pre_miss")] if pre else [])
        # Column 0 of a band's block counts the unit's rows in the band.
        self.places: list[dict[str, int] | None] = [
            None if spec.kind not in _QUANTITIES else {} for spec in mapping]
        for column, (i, name) in enumerate(dense + sparse, start=1):
            self.places[i][name] = column
        self.dense = 1 + len(dense)
        self.sparse = len(sparse)
        self.block = self.dense + self.sparse
        self._amounts: np.ndarray | None = None
        self._where: np.ndarray | None = None
        self.start = table.add_columns(BANDS * self.dense)
        self.sparse_start = table.add_columns(BANDS * self.sparse, matrix=1)

    def clear(self) -> None:
        """Forget every sum (before a second pass)."""
        self.table.clear_columns()

    def add(self, index: np.ndarray, offset: np.ndarray, value) -> None:
        """Add a chunk: ``index`` the unit of each row (−1: not followed), ``offset`` its
        days since the unit's first day, ``value(column, kind)`` a column's numbers (nan
        where empty)."""
        every = index.size == 0 or index.min() >= 0
        if not every:
            rows = np.flatnonzero(index >= 0)
            index, offset = index[rows], offset[rows]

        def numbers(column: str, kind: str) -> np.ndarray:
            x = value(column, kind)
            return x if every else x[rows]

        band = np.minimum(offset // BAND_DAYS, BANDS - 1)
        width = self.table.rows.shape[1]
        base = index * width + self.start + band * self.dense
        amounts, where = self._buffers(index.size)
        amounts[:, 0] = 1.0
        empty: list[tuple[int, np.ndarray]] = []
        for spec, place in zip(self.mapping, self.places, strict=True):
            if place is None:
                continue
            x = numbers(spec.column, "mean" if spec.kind == "ratio" else spec.kind)
            if spec.kind == "ratio":
                d = numbers(spec.denominator, "mean")
                present = ~(np.isnan(x) | np.isnan(d))
                amounts[:, place["num"]] = np.where(present, x, 0.0)
                amounts[:, place["den"]] = np.where(present, d, 0.0)
            else:
                present = ~np.isnan(x)
                if spec.kind == "proportion":
                    amounts[:, place["true"]] = x == 1.0
                else:
                    amounts[:, place["sum"]] = np.where(present, x, 0.0)
            empty.append((place["miss"], ~present))
            if spec.pre is not None:
                pre = numbers(spec.pre, spec.kind)
                has = ~np.isnan(pre)
                amounts[:, place["pre"]] = np.where(has, pre, 0.0)
                empty.append((place["pre_miss"], ~has))
        flat = self.table.rows.reshape(-1)
        np.add(base[:, None], np.arange(self.dense), out=where)
        np.add.at(flat, where.reshape(-1), amounts.reshape(-1))
        if not any(mask.any() for _, mask in empty):
            return
        sparse = self.table.matrix(1)
        base = index * sparse.shape[1] + self.sparse_start + band * self.sparse - self.dense
        cells = [base[mask] + column for column, mask in empty if mask.any()]
        np.add.at(sparse.reshape(-1), np.concatenate(cells), 1.0)

    def _buffers(self, rows: int) -> tuple[np.ndarray, np.ndarray]:
        """The chunk's amounts and cells, in arrays kept from chunk to chunk (fresh large
        arrays would be fresh pages of memory, each written for the first time)."""
        if self._amounts is None or len(self._amounts) < rows:
            self._amounts = np.empty((rows, self.dense))
            self._where = np.empty((rows, self.dense), np.int64)
        return self._amounts[:rows], self._where[:rows]

    def windows(self, first_days: np.ndarray, day_one: int, days: int,
                share: float = 1.0) -> tuple[WindowSummary, ...]:
        """One summary per window of a ``days``-day history starting on ``day_one``.

        The units' sums are read a slice of units at a time, and their moments merged, so
        no copy of the table is made; the values of a capped metric are kept whole (a
        percentile does not merge).
        """
        start = first_days.astype(np.int64) - day_one
        plan = [(d, start + d <= days, d // BAND_DAYS if d in WINDOW_DAYS else BANDS)
                for d in window_days(days)]
        tallies = [[Tally() for _ in self.mapping] for _ in plan]
        kept: list[list[list]] = [[[] for _ in self.mapping] for _ in plan]
        rows, sparse = self.table.rows, self.table.matrix(1)
        # One slice of units at a time, band by band, in buffers kept for the whole call.
        part = np.empty((BANDS, min(_UNITS_AT_ONCE, start.size), self.block))
        running = np.empty_like(part)
        for a in range(0, start.size, _UNITS_AT_ONCE):
            end = min(a + _UNITS_AT_ONCE, start.size)
            here, cum = part[:, :end - a], running[:, :end - a]
            here[:, :, :self.dense] = rows[a:end, self.start:self.start + BANDS * self.dense
                                           ].reshape(-1, BANDS, self.dense).transpose(1, 0, 2)
            if self.sparse:
                here[:, :, self.dense:] = sparse[
                    a:end, self.sparse_start:self.sparse_start + BANDS * self.sparse
                ].reshape(-1, BANDS, self.sparse).transpose(1, 0, 2)
            cum[0] = here[0]
            for band in range(1, BANDS):
                np.add(cum[band - 1], here[band], out=cum[band])
            for w, (_, complete, bands) in enumerate(plan):
                chosen = np.flatnonzero(complete[a:a + _UNITS_AT_ONCE])
                if not chosen.size:
                    continue
                inside = cum[bands - 1].take(chosen, axis=0)
                whole = cum[-1].take(chosen, axis=0)
                for i, (spec, place) in enumerate(zip(self.mapping, self.places, strict=True)):
                    if place is None:
                        continue
                    values = _values(spec, place, inside, whole)
                    if spec.cap is None:
                        tallies[w][i] = tallies[w][i].merge(_tally(spec, *values))
                    else:
                        kept[w][i].append(values)
        out = []
        for (d, complete, _), window_tallies, window_kept in zip(plan, tallies, kept,
                                                                  strict=True):
            units = int(complete.sum())
            metrics, problems = [], {}
            for spec, place, tally, values in zip(self.mapping, self.places, window_tallies,
                                                  window_kept, strict=True):
                if place is None:
                    problems[spec.name] = ("a quantile is of the rows' values; it has no "
                                           "per-unit window")
                    continue
                try:
                    if spec.cap is None:
                        summary = finish(spec, replace(tally, rows=units))
                    else:
                        summary = _capped(spec, units, values)
                    metrics.append(summary)
                except HistoryError as error:
                    problems[spec.name] = str(error)
            out.append(WindowSummary(d, units, tuple(metrics), problems, share))
        return tuple(out)


_UNITS_AT_ONCE = 1 << 17


def _values(spec: ColumnMap, place: dict[str, int], inside: np.ndarray, whole: np.ndarray):
    """The metric's per-unit values in a window (units with a value only) and its other
    column: the denominator of a ratio, the pre-period value (nan where none), or None.
    ``inside`` holds the units' sums over the window's bands, ``whole`` over all bands (the
    pre-period value is a unit attribute); column 0 is the unit's rows."""
    present = inside[:, 0] - inside[:, place["miss"]] > 0
    if spec.kind == "ratio":
        return inside[present, place["num"]], inside[present, place["den"]]
    if spec.kind == "proportion":
        x = (inside[present, place["true"]] > 0).astype(np.float64)
    else:
        x = inside[present, place["sum"]]
    if spec.pre is None:
        return x, None
    pre_n = whole[present, 0] - whole[present, place["pre_miss"]]
    with np.errstate(invalid="ignore", divide="ignore"):
        pre = np.where(pre_n > 0, whole[present, place["pre"]] / pre_n, np.nan)
    return x, pre


def _tally(spec: ColumnMap, x: np.ndarray, other: np.ndarray | None) -> Tally:
    """The uncapped tally of one slice of units (rows are set for the whole window)."""
    if spec.kind == "ratio":
        pairs = CoMoments.of(other, x)
        return Tally(0, pairs.y, pairs)
    pairs = CoMoments()
    if other is not None:
        has = ~np.isnan(other)
        pairs = CoMoments.of(other[has], x[has])
    return Tally(0, Moments.of(x), pairs)


def _capped(spec: ColumnMap, units: int, parts: list) -> MetricSummary:
    """One capped metric over a window, from all its units' values."""
    x = np.concatenate([p[0] for p in parts]) if parts else np.empty(0)
    capped, count, thresholds = _cap(x, spec.cap, spec.column)
    if spec.kind == "ratio":
        den = np.concatenate([p[1] for p in parts]) if parts else np.empty(0)
        pairs = CoMoments.of(den, capped)
        tally = Tally(units, pairs.y, pairs, raw_pairs=CoMoments.of(den, x), capped=count)
        return finish(spec, tally, thresholds=thresholds)
    pairs = CoMoments()
    if spec.pre is not None:
        pre = np.concatenate([p[1] for p in parts]) if parts else np.empty(0)
        has = ~np.isnan(pre)
        pre_capped, _, pre_thresholds = _cap(pre[has], spec.cap, spec.pre)
        thresholds.update(pre_thresholds)
        pairs = CoMoments.of(pre_capped, capped[has])
    tally = Tally(units, Moments.of(capped), pairs, raw_values=Moments.of(x), capped=count)
    return finish(spec, tally, thresholds=thresholds)


def _cap(x: np.ndarray, cap: float | None, column: str):
    """``x`` capped at its exact ``cap`` percentile, how many values moved, the threshold."""
    if cap is None:
        return x, 0, {}
    value = float(np.percentile(x, cap)) if x.size else math.nan
    over = x > value
    estimate = TailEstimate(float(cap), value, True)
    return np.where(over, value, x), int(over.sum()), {(column, cap): estimate}
