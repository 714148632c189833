"""Streaming import of a per-unit history file into baselines, sds and ρ.

:func:`read_history` is the one entry point for the window, the command line and notebooks.
It reads only the mapped columns, a chunk at a time, so memory stays flat however long the
file is. Without caps or quantiles there is one pass (moments); with caps, a first pass keeps
a bounded summary of each capped column's upper tail (:class:`~fourfold.history.tail.TailSketch`)
to find the cap, and a second pass computes the moments of the capped and uncapped values. A
quantile's first pass finds the quantile and the kernel's bandwidth, its second the density
there (:mod:`fourfold.history.quantiles`).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from fourfold.history.errors import HistoryCancelled, HistoryError
from fourfold.history.moments import CoMoments, Moments
from fourfold.history.quantiles import QuantileSketch, kernel_sum
from fourfold.history.reader import iter_chunks, location, numbers, read_columns
from fourfold.history.summary import (
    ColumnMap,
    HistorySummary,
    Tally,
    check_mapping,
    finish,
)
from fourfold.history.tail import TailSketch
from fourfold.history.traffic import DEFAULT_UNIT_MEMORY, TrafficPass

DEFAULT_CHUNK_ROWS = 200_000

Progress = Callable[[float, int], None]
"""``progress(fraction_done, rows_read)``: called after every chunk (rows over all passes)."""


def read_history(
    path: str | os.PathLike,
    mapping: Sequence[ColumnMap],
    *,
    chunk_rows: int = DEFAULT_CHUNK_ROWS,
    progress: Progress | None = None,
    cancel: Callable[[], bool] | None = None,
    tail_capacity: int = 1 << 20,
    unit: str | None = None,
    time: str | None = None,
    unit_memory: int = DEFAULT_UNIT_MEMORY,
) -> HistorySummary:
    """Baselines and per-unit variances of the mapped metrics of a history file.

    Parameters
    ----------
    path : path-like
        CSV with a header line (or ``.parquet``, with pyarrow installed), one row per unit.
    mapping : sequence of ColumnMap
        Which columns become which metrics.
    chunk_rows : int
        Rows per chunk; the results do not depend on it.
    progress : callable, optional
        ``progress(fraction_done, rows_read)`` after every chunk.
    cancel : callable, optional
        Checked before every chunk; when it returns True the import stops with
        :class:`~fourfold.history.errors.HistoryCancelled`.
    tail_capacity : int
        How many of the largest values of a capped column are kept exactly (see
        :mod:`fourfold.history.tail`).
    unit, time : str, optional
        A unit id column and a time column (both or neither): rows are then visits or days
        of units, and the summary also carries the reach curve and the metrics over each
        unit's first 7, 14, 21, 28 days and the history's length (see
        :mod:`fourfold.history.exposure`). A second pass is made when the rows are not in
        time order.
    unit_memory : int
        Bytes of per-unit arrays before the reach is estimated and the windows sampled (see
        :mod:`fourfold.history.traffic`).

    Returns
    -------
    HistorySummary

    Raises
    ------
    HistoryError
        The file cannot be read, a column is missing, a cell is not a number, or a metric's
        numbers cannot size a test; the message names the column (and line).

    References
    ----------
    Chan, Golub & LeVeque (1983) for the merges; Deng, Knoblich & Lu (2018) for the ratio's
    delta method; Deng, Xu, Kohavi & Walker (2013) for ρ (see :mod:`fourfold.history.summary`).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "h.csv").write_text("spend,bought,pre\\n0,0,1\\n5,1,4\\n,0,0\\n10,1,8\\n")
    >>> result = read_history(folder / "h.csv", [ColumnMap("mean", "spend", pre="pre"),
    ...                                          ColumnMap("proportion", "bought")])
    >>> spend = result["spend"]
    >>> spend.n, spend.missing, spend.mean, spend.sd, round(spend.rho, 4)
    (3, 1, 5.0, 5.0, 0.9966)
    >>> result["bought"].mean
    0.5
    """
    path = Path(path)
    mapping = list(mapping)
    header = read_columns(path)
    check_mapping(mapping, header, path.name, unit=unit, time=time)
    columns = list(dict.fromkeys(c for spec in mapping for c in spec.columns))
    capped = list(dict.fromkeys(c for spec in mapping for c in spec.capped_columns))
    traffic = TrafficPass(mapping, unit, time, unit_memory) if unit is not None else None
    if traffic is not None:
        columns = list(dict.fromkeys([*columns, *traffic.columns]))
    levels = {spec.name: spec for spec in mapping if spec.kind == "quantile"}
    passes = 2 if capped or levels else 1
    counter = _Counter(progress, passes)

    thresholds, quantiles = {}, {}
    if passes == 2:
        sketches = {column: TailSketch(capacity=tail_capacity) for column in capped}
        kinds = {c: spec.kind for spec in mapping for c in spec.capped_columns}
        first = {name: QuantileSketch(spec.level, tail_capacity) for name, spec in levels.items()}
        read = list(dict.fromkeys([*capped, *(spec.column for spec in levels.values())]))
        for chunk in _chunks(path, read, chunk_rows, cancel, counter, 0):
            for column in capped:
                x = _column(chunk, column, kinds[column], path)
                sketches[column].add(x[~np.isnan(x)])
            for name, spec in levels.items():
                x = _column(chunk, spec.column, "mean", path)
                first[name].add(x[~np.isnan(x)])
        thresholds = {
            (column, spec.cap): sketches[column].estimate(spec.cap)
            for spec in mapping for column in spec.capped_columns
        }
        quantiles = {name: sketch.estimate() for name, sketch in first.items()}

    tallies = [Tally() for _ in mapping]
    for chunk in _chunks(path, columns, chunk_rows, cancel, counter, passes - 1):
        cache: dict[tuple[str, str], np.ndarray] = {}
        for i, spec in enumerate(mapping):
            tallies[i] = tallies[i].merge(_tally(spec, chunk, path, cache, thresholds,
                                                 quantiles))
        if traffic is not None:
            traffic.add(chunk, _values(chunk, path, cache), _where(path, chunk))
    metrics = tuple(
        finish(spec, tally, thresholds=thresholds, quantiles=quantiles)
        for spec, tally in zip(mapping, tallies, strict=True)
    )
    rows = tallies[0].rows if tallies else 0
    if traffic is None:
        return HistorySummary(str(path), rows, metrics)
    if traffic.second_pass:
        counter.passes += 1
        traffic.restart()
        for chunk in _chunks(path, columns, chunk_rows, cancel, counter, passes):
            traffic.add_again(chunk, _values(chunk, path, {}), _where(path, chunk))
    reach, windows = traffic.result()
    return HistorySummary(str(path), rows, metrics, reach, windows)


def _values(chunk, path, cache):
    """``value(column, kind)``: a chunk's column as numbers (parsed once per chunk)."""
    return lambda column, kind: _column(chunk, column, kind, path, cache)


def _where(path, chunk):
    """``where(i)``: the line (CSV) or row (Parquet) of the chunk's row ``i``."""
    return lambda i: location(path, chunk.start + i)


class _Counter:
    """Rows read over all passes and the fraction done, for the progress callback."""

    def __init__(self, callback: Progress | None, passes: int) -> None:
        self.callback, self.passes, self.rows = callback, passes, 0

    def report(self, pass_index: int, fraction: float, rows: int) -> None:
        self.rows += rows
        if self.callback is not None:
            self.callback((pass_index + fraction) / self.passes, self.rows)


def _chunks(path, columns, chunk_rows, cancel, counter: _Counter, pass_index: int):
    if cancel is not None and cancel():
        raise HistoryCancelled("the history import was cancelled")
    for chunk in iter_chunks(path, columns, chunk_rows):
        yield chunk
        counter.report(pass_index, chunk.fraction, chunk.rows)
        if cancel is not None and cancel():
            raise HistoryCancelled("the history import was cancelled")


def _column(chunk, column: str, kind: str, path, cache=None) -> np.ndarray:
    key = (column, kind if kind in ("proportion", "count") else "number")
    if cache is not None and key in cache:
        return cache[key]
    x = numbers(chunk.columns[column], column, proportion=kind == "proportion", path=path,
                start=chunk.start)
    if kind == "count":
        bad = ~np.isnan(x) & ((x < 0) | (x != np.floor(x)))
        if bad.any():
            i = int(np.argmax(bad))
            raise HistoryError(
                f"{Path(path).name}: column {column!r} has {x[i]:g} on "
                f"{location(path, chunk.start + i)}, which is not a count (0, 1, 2, …)"
            )
    if cache is not None:
        cache[key] = x
    return x


def _capped(x: np.ndarray, column: str, spec: ColumnMap, thresholds: dict):
    """``x`` with values above the spec's cap of ``column`` lowered to it, and how many."""
    estimate = thresholds.get((column, spec.cap)) if spec.cap is not None else None
    if estimate is None:
        return x, 0
    over = x > estimate.value
    count = int(over.sum())
    return (np.where(over, estimate.value, x), count) if count else (x, 0)


def _tally(spec: ColumnMap, chunk, path, cache, thresholds, quantiles) -> Tally:
    value_kind = "mean" if spec.kind in ("ratio", "quantile") else spec.kind
    x = _column(chunk, spec.column, value_kind, path, cache)
    if spec.kind == "ratio":
        d = _column(chunk, spec.denominator, "mean", path, cache)
        both = ~(np.isnan(x) | np.isnan(d))
        x, d = x[both], d[both]
        capped_x, count = _capped(x, spec.column, spec, thresholds)
        pairs = CoMoments.of(d, capped_x)
        raw = CoMoments.of(d, x) if spec.cap is not None else CoMoments()
        return Tally(chunk.rows, pairs.y, pairs, raw_pairs=raw, capped=count)
    present = ~np.isnan(x)
    x = x[present]
    if spec.kind == "quantile":
        estimate = quantiles[spec.name]
        kernel = kernel_sum(x, estimate) if estimate.bandwidth > 0 else 0.0
        return Tally(chunk.rows, Moments.of(x), kernel=kernel)
    capped_x, count = _capped(x, spec.column, spec, thresholds)
    values = Moments.of(capped_x)
    raw = Moments.of(x) if spec.cap is not None else Moments()
    pairs = CoMoments()
    if spec.pre is not None:
        pre = _column(chunk, spec.pre, spec.kind, path, cache)[present]
        both = ~np.isnan(pre)
        pre_capped, _ = _capped(pre[both], spec.pre, spec, thresholds)
        pairs = CoMoments.of(pre_capped, capped_x[both])
    return Tally(chunk.rows, values, pairs, raw_values=raw, capped=count)
