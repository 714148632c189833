"""The same import for data that lives in a warehouse: its query, and its result read back.

:func:`warehouse_sql` writes the aggregate query of :mod:`fourfold.history.sql` (a sqlglot
syntax tree rendered in the warehouse's dialect): per metric ``COUNT``, ``AVG`` and the sample
variance over the units where the metric's columns are filled in (the moments the delta method
and ρ need); with a unit and a time column also the reach curve and the windows. Run it in the
warehouse — or let Fourfold run it (:mod:`fourfold.history.connect`, :mod:`fourfold.history
.duckdb_files`) — and :func:`read_warehouse_result` or :func:`read_warehouse_rows` turn its
result into the same :class:`HistorySummary` as the file import. Every result, pasted, saved or
fetched, and every section of it goes through :func:`summary_from_rows` and the same cell
checks (:class:`_Part`): counts whole, at least 0 and at most the rows of their line; means,
variances and covariances finite, variances not negative, and present wherever the line counts
values for them; days whole and within the history. Rows of several partitions (``group_by``)
are merged exactly with the same moment merges as the file import's chunks.

Caps are percentiles, which do not merge across partitions; map capped metrics with the file
import instead (or cap in the warehouse and map the capped column).

Every value is cast to a double (so that integer columns average as decimals); a proportion
column must be numeric 0/1 or a boolean the warehouse casts to 0/1 — the result counts the
cells that are not (``bad``), and reading refuses them as the file import does.

References
----------
Chan, Golub & LeVeque (1983), the pairwise merge of (n, mean, m2) used for partitions;
Deng, Knoblich & Lu (2018) for the delta method (see :mod:`fourfold.history.summary`).
"""

from __future__ import annotations

import csv
import math
import os
import re
from collections.abc import Sequence
from pathlib import Path

from fourfold.history.errors import HistoryError
from fourfold.history.exposure import MAX_DAYS, ReachCurve, WindowSummary
from fourfold.history.moments import CoMoments, Moments
from fourfold.history.sql import (
    AT,
    DAY_ONE,
    ROWS,
    SECTION,
    alias,
    check_mapping,
    history_query,
)
from fourfold.history.summary import ColumnMap, HistorySummary, Tally, finish

_MAX_RESULT_BYTES = 1 << 20
_EMPTY = ("", "NULL")


def warehouse_sql(mapping: Sequence[ColumnMap], table: str | Sequence[str], *,
                  group_by: str | None = None, dialect: str | None = None,
                  unit: str | None = None, time: str | None = None) -> str:
    """The history query for ``table`` (see :func:`fourfold.history.sql.history_query`).

    Examples
    --------
    >>> print(warehouse_sql([ColumnMap("mean", "spend")], "shop.visits"))
    SELECT
      'all' AS "section",
      NULL AS "at",
      COUNT(*) AS "rows",
      COUNT(CAST("spend" AS DOUBLE PRECISION)) AS "m1_spend_n",
      AVG(CAST("spend" AS DOUBLE PRECISION)) AS "m1_spend_mean",
      VAR_SAMP(CAST("spend" AS DOUBLE PRECISION)) AS "m1_spend_var"
    FROM "shop"."visits"
    """
    return history_query(mapping, table, dialect=dialect, group_by=group_by, unit=unit,
                         time=time)


def read_warehouse_result(text: str, mapping: Sequence[ColumnMap], *,
                          source: str = "query result") -> HistorySummary:
    """Summaries from the result of :func:`warehouse_sql` (pasted text or a small CSV's text).

    The result is a header line of the query's column names and one row per partition or
    section, separated by commas, tabs, semicolons or ``|``; column names match
    case-insensitively and empty or ``NULL`` cells mean no value. Lines may end with ``\\n``,
    ``\\r\\n`` or ``\\r``.

    Raises
    ------
    HistoryError
        With the column and line at fault (see :func:`summary_from_rows`).

    Examples
    --------
    >>> text = "rows,m1_spend_n,m1_spend_mean,m1_spend_var\\n10,8,2.5,4.0\\n6,6,4.0,1.0\\n"
    >>> spend = read_warehouse_result(text, [ColumnMap("mean", "spend")])["spend"]
    >>> spend.n, spend.missing, round(spend.mean, 6), round(spend.sd, 6)
    (14, 2, 3.142857, 1.769708)
    >>> read_warehouse_result(text.replace("10,8", "10,13"), [ColumnMap("mean", "spend")])
    Traceback (most recent call last):
    ...
    fourfold.history.errors.HistoryError: query result: column 'm1_spend_n' on line 2 counts \
13 values, more than the 10 rows of that line
    """
    mapping = check_mapping(mapping)
    header, rows = _table(text, source)
    return summary_from_rows(header, rows, mapping, source)


def read_warehouse_rows(columns: Sequence[str], records, mapping: Sequence[ColumnMap], *,
                        source: str = "query result") -> HistorySummary:
    """:func:`read_warehouse_result` of rows fetched from a database (SQLAlchemy, DuckDB).

    Each value is written as the text a result file would hold and read with the same checks;
    messages name the row of the result (``result row 1`` is the first), and a cell that is
    not finite asks whether the data holds such a value.

    Examples
    --------
    >>> rows = [("all", None, 10, 8, 2.5, 4.0), ("all", None, 6, 6, 4.0, 1.0)]
    >>> names = ["section", "at", "rows", "m1_spend_n", "m1_spend_mean", "m1_spend_var"]
    >>> read_warehouse_rows(names, rows, [ColumnMap("mean", "spend")])["spend"].n
    14
    >>> read_warehouse_rows(names, [("all", None, 10, 8, 2.5, -4.0)], [ColumnMap("mean", "spend")])
    Traceback (most recent call last):
    ...
    fourfold.history.errors.HistoryError: query result: column 'm1_spend_var' on result row 1 \
has '-4.0': a variance cannot be negative
    """
    mapping = check_mapping(mapping)
    header = [str(name).strip().lower() for name in columns]
    rows = [(number, [_text(value) for value in record])
            for number, record in enumerate(records, start=1)]
    return summary_from_rows(header, rows, mapping, source, fetched=True)


def _text(value) -> str:
    """A database value as a result file would write it (empty for NULL)."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "1" if value else "0"
    if isinstance(value, float):
        return repr(value)
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return str(value).strip()


def summary_from_rows(header: list[str], rows: list[tuple[int, list[str]]],
                      mapping: list[ColumnMap], source: str, *,
                      fetched: bool = False) -> HistorySummary:
    """The summary of a result's rows (each with its line number, or its row number when
    ``fetched`` from a database), by section.

    A result without a ``section`` column is all section ``all``. Every line of every section
    is read through :class:`_Part`'s checks.

    Raises
    ------
    HistoryError
        In one line, naming the column and line (or result row) at fault: a line with fewer
        cells than the header; an unknown section, or no ``all`` line; a count that is
        missing, not a whole number or larger than the rows of its line; a mean, variance or
        covariance that is missing although the line counts values for it, not a number,
        infinite, or a negative variance; a proportion's or count's cells that are not 0/1
        or counts (``bad``); a day that is not a whole number from 1, past the history's
        length, or named twice; a history length without reach lines; a reach of more units
        than the history has rows, a window of more units than the reach.
    """
    if not rows:
        raise HistoryError(f"{source}: there is a header line but no result row")
    sections: dict[str, list[_Part]] = {"all": [], "reach": [], "window": []}
    position = header.index(SECTION) if SECTION in header else None
    for line, row in rows:
        part = _Part(dict(zip(header, row, strict=False)), source, line, fetched)
        if len(row) < len(header):
            raise HistoryError(f"{source}: {part.place} has {len(row)} of the {len(header)} "
                               "cells the header names")
        name = row[position].strip().lower() if position is not None else "all"
        if name not in sections:
            raise HistoryError(f"{source}: {part.place} is of an unknown section "
                               f"{name[:40]!r}")
        sections[name].append(part)
    if not sections["all"]:
        raise HistoryError(f"{source}: no line of the whole history (section 'all')")
    tallies = [Tally() for _ in mapping]
    total = 0
    length = first = None
    for part in sections["all"]:
        part_rows = part.count(ROWS)
        total += part_rows
        if part.filled(AT):
            length = part.day(AT)
            first = part.date(DAY_ONE)
        for index, spec in enumerate(mapping):
            _check_bad(index, spec, part, part_rows)
            tallies[index] = tallies[index].merge(_part_tally(index, spec, part, part_rows))
    metrics = tuple(finish(spec, tally) for spec, tally in zip(mapping, tallies, strict=True))
    if length is not None and total and not sections["reach"]:
        raise HistoryError(f"{source}: the result gives the history's length (column 'at') "
                           "but no reach line; paste the whole result of the query")
    if not sections["reach"] and not sections["window"]:
        return HistorySummary(source, total, metrics)
    reach = _reach(sections["reach"], length, first, total, source)
    reached = reach.units[-1] if reach.units else total
    windows = _windows(sections["window"], mapping, length, reached)
    return HistorySummary(source, total, metrics, reach, windows)


class _Part:
    """One result line: its cells by lower-case column name, read with checks."""

    def __init__(self, cells: dict[str, str], source: str, line: int,
                 fetched: bool = False) -> None:
        self.cells, self.source, self.fetched = cells, source, fetched
        self.place = f"result row {line}" if fetched else f"line {line}"

    def has(self, alias: str) -> bool:
        """Whether the result has the column (a result of an older query may not)."""
        return alias.lower() in self.cells

    def filled(self, alias: str) -> bool:
        """Whether the result has the column and this line a value in it."""
        return self.has(alias) and self.cells[alias.lower()].upper() not in _EMPTY

    def _text(self, alias: str) -> str:
        key = alias.lower()
        if key not in self.cells:
            raise HistoryError(
                f"{self.source}: no column {alias!r}; paste the whole result of the query "
                "written for this same mapping"
            )
        return self.cells[key]

    def fault(self, alias: str, what: str) -> HistoryError:
        """The error for column ``alias`` of this line: ``what`` is wrong with it."""
        return HistoryError(f"{self.source}: column {alias!r} on {self.place} {what}")

    def _whole(self, alias: str, least: int, what: str) -> int:
        text = self._text(alias)
        try:
            value = float(text)
        except ValueError:
            value = math.nan
        if not (math.isfinite(value) and value >= least and value == math.floor(value)):
            shown = "empty" if text.upper() in _EMPTY else repr(text[:40])
            raise self.fault(alias, f"must be {what}, not {shown}")
        return int(value)

    def count(self, alias: str, most: int | None = None, of: str = "") -> int:
        """A count cell: present, a whole number, at least 0 and at most ``most``."""
        count = self._whole(alias, 0, "a count (a whole number, 0 or more)")
        if most is not None and count > most:
            raise self.fault(alias, f"counts {count:,} values, more than the {most:,} {of}")
        return count

    def day(self, alias: str, most: int | None = None) -> int:
        """A day cell: a whole number from 1 to the history's length ``most`` (or
        :data:`~fourfold.history.exposure.MAX_DAYS`)."""
        day = self._whole(alias, 1, f"a day number (1, 2, …, up to {MAX_DAYS:,})")
        if day > MAX_DAYS:
            raise self.fault(alias, f"is day {day:,}; a history spans at most {MAX_DAYS:,} days")
        if most is not None and day > most:
            raise self.fault(alias, f"is day {day:,}, past the {most:,} days of the history")
        return day

    def date(self, alias: str) -> int | None:
        """Days since 1970-01-01 of a ``YYYY-MM-DD`` cell (None when absent or empty)."""
        import datetime as dt

        if not self.filled(alias):
            return None
        text = self._text(alias)
        try:
            return (dt.date.fromisoformat(text[:10]) - dt.date(1970, 1, 1)).days
        except ValueError:
            raise self.fault(alias, f"must be a date (YYYY-MM-DD), not {text[:40]!r}") from None

    def number(self, alias: str, needed: bool, *, variance: bool = False) -> float:
        """A mean, variance or covariance cell; 0.0 when empty and not ``needed``."""
        text = self._text(alias)
        if text.upper() in _EMPTY:
            if needed:
                raise self.fault(alias, "is empty, but the line counts values for it")
            return 0.0
        try:
            value = float(text)
        except ValueError:
            value = math.nan
        hint = " (does the data hold such a value?)" if self.fetched else ""
        if math.isnan(value):
            raise self.fault(alias, f"has {text[:40]!r}, which is not a number{hint}")
        if math.isinf(value):
            raise self.fault(alias, f"has {text[:40]!r}, which is infinite or beyond the "
                                    f"largest number a double holds (about ±1.8e308){hint}")
        if variance and value < 0:
            raise self.fault(alias, f"has {text[:40]!r}: a variance cannot be negative")
        return value


def _check_bad(index: int, spec: ColumnMap, part: _Part, rows: int) -> None:
    """Refuse a proportion's or count's column with cells that are not 0/1 or counts."""
    if spec.kind not in ("proportion", "count"):
        return
    name = alias(index, spec, "bad")
    if not part.has(name):
        return  # a result of a query written before these checks
    bad = part.count(name, rows, "rows of that line")
    if bad:
        what = "0/1 (or true/false)" if spec.kind == "proportion" else "a count (0, 1, 2, …)"
        raise HistoryError(f"{part.source}: column {spec.column!r} has {bad:,} values that "
                           f"are not {what} (column {name!r} on {part.place})")


def _part_tally(index: int, spec: ColumnMap, part: _Part, rows: int) -> Tally:
    """One line's moments of one metric, each count at most the line's ``rows``."""
    def name(what: str) -> str:
        return alias(index, spec, what)

    values = Moments()
    if spec.kind != "ratio":
        n = part.count(name("n"), rows, "rows of that line")
        values = Moments.from_summary(n, part.number(name("mean"), n > 0),
                                      part.number(name("var"), n > 1, variance=True))
    pairs = CoMoments()
    if spec.kind == "ratio" or spec.pre is not None:
        n = part.count(name("pairs"), rows, "rows of that line")
        pairs = CoMoments.from_summary(
            n, part.number(name("mean_x"), n > 0), part.number(name("mean_y"), n > 0),
            part.number(name("var_x"), n > 1, variance=True),
            part.number(name("var_y"), n > 1, variance=True),
            part.number(name("cov"), n > 1),
        )
        if spec.kind == "ratio":
            values = pairs.y
    return Tally(rows, values, pairs)


def _reach(parts: list[_Part], length: int | None, first: int | None, total: int,
           source: str) -> ReachCurve:
    """The cumulative reach from the lines of new units per day."""
    new: dict[int, int] = {}
    for part in parts:
        if not part.filled(AT):
            raise part.fault(AT, "is empty: some units have no time in any row; leave rows "
                                 "with an empty time out of the table (the file import "
                                 "refuses them too)")
        day = part.day(AT, length)
        if day in new:
            raise HistoryError(f"{source}: day {day} appears twice in the reach "
                               f"({part.place})")
        new[day] = part.count(ROWS)
    reached = sum(new.values())
    if reached > total:
        raise HistoryError(f"{source}: the reach counts {reached:,} units, more than the "
                           f"{total:,} rows of the whole history")
    days = length if length is not None else max(new, default=0)
    units, running = [], 0
    for day in range(1, days + 1):
        running += new.get(day, 0)
        units.append(running)
    return ReachCurve(first, tuple(units), True, 0.0, first is not None)


def _windows(parts: list[_Part], mapping: list[ColumnMap], length: int | None,
             reached: int) -> tuple[WindowSummary, ...]:
    """The windows, shortest first: cells are checked (and refused) as everywhere; a metric
    whose checked figures cannot size a test becomes the window's problem."""
    windows: dict[int, WindowSummary] = {}
    for part in parts:
        days = part.day(AT, length)
        if days in windows:
            raise HistoryError(f"{part.source}: the {days}-day window appears twice "
                               f"({part.place})")
        units = part.count(ROWS, reached, "units the reach counts")
        tallies = [_part_tally(index, spec, part, units) for index, spec in enumerate(mapping)]
        metrics, problems = [], {}
        for spec, tally in zip(mapping, tallies, strict=True):
            try:
                metrics.append(finish(spec, tally))
            except HistoryError as error:
                problems[spec.name] = str(error)
        windows[days] = WindowSummary(days, units, tuple(metrics), problems)
    return tuple(windows[days] for days in sorted(windows))


def read_warehouse_file(path: str | os.PathLike, mapping: Sequence[ColumnMap]) -> HistorySummary:
    """:func:`read_warehouse_result` of a small saved result file (up to 1 MB)."""
    path = Path(path)
    if "\x00" in str(path):
        raise HistoryError(f"{str(path)!r}: the file name holds a NUL character")
    try:
        with open(path, "rb") as handle:
            data = handle.read(_MAX_RESULT_BYTES + 1)
    except OSError as error:
        raise HistoryError(f"{path}: cannot be read ({error.strerror})") from None
    if len(data) > _MAX_RESULT_BYTES:
        raise HistoryError(f"{path.name}: a query result should be a few lines, not over 1 MB")
    if b"\x00" in data:
        raise HistoryError(f"{path.name}: not a text file (it contains binary data)")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise HistoryError(f"{path.name}: not a UTF-8 text file") from None
    return read_warehouse_result(text, mapping, source=path.name)


_LINE_BREAK = re.compile(r"\r\n|\r|\n")


def _table(text: str, source: str) -> tuple[list[str], list[tuple[int, list[str]]]]:
    numbered = [(number, line) for number, line in enumerate(_LINE_BREAK.split(text), start=1)
                if line.strip() and not set(line.strip()) <= set("-+|= ")]
    if not numbered:
        raise HistoryError(f"{source}: paste the query's result, header line first")
    first = numbered[0][1]
    delimiter = max(",\t;|", key=first.count)
    if first.count(delimiter) == 0:
        raise HistoryError(f"{source}: the first line should name the result's columns")
    try:
        parsed = [(number, next(csv.reader([line], delimiter=delimiter)))
                  for number, line in numbered]
    except csv.Error as error:
        raise HistoryError(f"{source}: cannot be read as a table ({error})") from None
    header = [cell.strip().strip('"').lower() for cell in parsed[0][1]]
    rows = [(number, [cell.strip() for cell in row]) for number, row in parsed[1:]
            if any(cell.strip() for cell in row)]
    return header, rows
