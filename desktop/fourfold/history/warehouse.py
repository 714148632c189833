"""The same import for data that lives in a warehouse: portable SQL and its result read back.

:func:`warehouse_sql` writes one aggregate query for a column mapping — ``COUNT``, ``AVG``,
``VAR_SAMP`` and ``COVAR_SAMP`` per metric, over the units where the metric's columns are
filled in (the moments the delta method and ρ need) — using only standard SQL, with every
identifier double-quoted. Run it in the warehouse, paste or save its result, and
:func:`read_warehouse_result` turns it into the same :class:`HistorySummary` as the file
import. A result with several rows (one per partition or day, from ``group_by``) is merged
exactly with the same moment merges as the file import's chunks.

Caps are percentiles, which do not merge across partitions; map capped metrics with the file
import instead (or cap in the warehouse and map the capped column).

Every value is cast to ``DOUBLE PRECISION`` (so that integer columns average as decimals); a
proportion column must be numeric 0/1 — some warehouses cannot cast a boolean to a float, so
cast a boolean column to an integer in a view first.

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
from fourfold.history.moments import CoMoments, Moments
from fourfold.history.summary import ColumnMap, HistorySummary, Tally, finish

_MAX_RESULT_BYTES = 1 << 20


def quote_identifier(name: str) -> str:
    """A double-quoted SQL identifier (embedded quotes doubled).

    Examples
    --------
    >>> print(quote_identifier('odd "name" here'))
    "odd ""name"" here"
    """
    if not isinstance(name, str) or not name or "\x00" in name:
        raise HistoryError(f"an SQL identifier must be non-empty text, not {name!r}")
    return '"' + name.replace('"', '""') + '"'


def quote_table(table: str | Sequence[str]) -> str:
    """A qualified table name, each dot-separated part quoted.

    Examples
    --------
    >>> quote_table("analytics.visits_2026")
    '"analytics"."visits_2026"'
    """
    parts = table.split(".") if isinstance(table, str) else list(table)
    if not parts or any(not part.strip() for part in parts):
        raise HistoryError(f"table must be a name like schema.table, not {table!r}")
    return ".".join(quote_identifier(part.strip()) for part in parts)


def _alias(index: int, spec: ColumnMap, what: str) -> str:
    slug = re.sub(r"[^a-z0-9]+", "_", spec.name.lower()).strip("_")[:40] or "metric"
    return f"m{index + 1}_{slug}_{what}"


def _value(column: str) -> str:
    return f"CAST({quote_identifier(column)} AS DOUBLE PRECISION)"


def _when_both(value: str, left: str, right: str) -> str:
    return (f"CASE WHEN {quote_identifier(left)} IS NOT NULL AND {quote_identifier(right)} "
            f"IS NOT NULL THEN {value} END")


def _select_items(index: int, spec: ColumnMap) -> list[tuple[str, str]]:
    items: list[tuple[str, str]] = []
    if spec.kind != "ratio":
        x = _value(spec.column)
        items += [(f"COUNT({x})", "n"), (f"AVG({x})", "mean"), (f"VAR_SAMP({x})", "var")]
    other = spec.denominator if spec.kind == "ratio" else spec.pre
    if other is not None:
        x = _when_both(_value(other), other, spec.column)
        y = _when_both(_value(spec.column), other, spec.column)
        items += [
            (f"COUNT({y})", "pairs"),
            (f"AVG({x})", "mean_x"),
            (f"AVG({y})", "mean_y"),
            (f"VAR_SAMP({x})", "var_x"),
            (f"VAR_SAMP({y})", "var_y"),
            (f"COVAR_SAMP({_value(other)}, {_value(spec.column)})", "cov"),
        ]
    return [(expression, _alias(index, spec, what)) for expression, what in items]


def _check(mapping: Sequence[ColumnMap]) -> list[ColumnMap]:
    mapping = list(mapping)
    if not mapping:
        raise HistoryError("map at least one column to a metric")
    for spec in mapping:
        if spec.kind == "quantile":
            raise HistoryError(
                f"quantile {spec.name!r}: a quantile and the density there need the values, "
                "which do not merge across partitions; import a per-unit file instead"
            )
        if spec.cap is not None:
            raise HistoryError(
                f"column {spec.column!r}: caps are percentiles, which do not merge across "
                "partitions; cap in the warehouse or import the file instead"
            )
    return mapping


def warehouse_sql(mapping: Sequence[ColumnMap], table: str | Sequence[str], *,
                  group_by: str | None = None) -> str:
    """One standard-SQL aggregate query giving every moment the mapping needs.

    Parameters
    ----------
    mapping : sequence of ColumnMap
        As for the file import (no caps).
    table : str or sequence of str
        The table, ``schema.table`` or its parts; each part is quoted.
    group_by : str, optional
        A partition column (e.g. the day): the query then gives one row per partition, and
        :func:`read_warehouse_result` merges them.

    Examples
    --------
    >>> print(warehouse_sql([ColumnMap("mean", "spend")], "shop.visits"))
    SELECT
      COUNT(*) AS "rows",
      COUNT(CAST("spend" AS DOUBLE PRECISION)) AS "m1_spend_n",
      AVG(CAST("spend" AS DOUBLE PRECISION)) AS "m1_spend_mean",
      VAR_SAMP(CAST("spend" AS DOUBLE PRECISION)) AS "m1_spend_var"
    FROM "shop"."visits"
    """
    mapping = _check(mapping)
    items = [("COUNT(*)", "rows")]
    if group_by is not None:
        items.insert(0, (quote_identifier(group_by), "part"))
    for index, spec in enumerate(mapping):
        items += _select_items(index, spec)
    select = ",\n".join(f"  {expression} AS {quote_identifier(alias)}"
                        for expression, alias in items)
    sql = f"SELECT\n{select}\nFROM {quote_table(table)}"
    if group_by is not None:
        sql += f"\nGROUP BY {quote_identifier(group_by)}"
    return sql


def read_warehouse_result(text: str, mapping: Sequence[ColumnMap], *,
                          source: str = "query result") -> HistorySummary:
    """Summaries from the result of :func:`warehouse_sql` (pasted text or a small CSV's text).

    The result is a header line of the query's column names and one row per partition,
    separated by commas, tabs, semicolons or ``|``; column names match case-insensitively and
    empty or ``NULL`` cells mean no value. Lines may end with ``\\n``, ``\\r\\n`` or ``\\r``.

    Raises
    ------
    HistoryError
        With the column and line at fault: a count that is missing, not a whole number or
        larger than the row count; a mean, variance or covariance that is missing although
        there are values, not a number, infinite, or a negative variance.

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
    mapping = _check(mapping)
    header, rows = _table(text, source)
    if not rows:
        raise HistoryError(f"{source}: there is a header line but no result row")
    tallies = [Tally() for _ in mapping]
    total = 0
    for line, row in rows:
        if len(row) < len(header):
            raise HistoryError(f"{source}: line {line} has {len(row)} of the {len(header)} "
                               "cells the header names")
        part = _Part(dict(zip(header, row, strict=False)), source, line)
        part_rows = part.count("rows")
        total += part_rows
        for index, spec in enumerate(mapping):
            tallies[index] = tallies[index].merge(_part_tally(index, spec, part, part_rows))
    metrics = tuple(finish(spec, tally) for spec, tally in zip(mapping, tallies, strict=True))
    return HistorySummary(source, total, metrics)


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


class _Part:
    """One result row: its cells by lower-case column name, read with checks."""

    def __init__(self, cells: dict[str, str], source: str, line: int) -> None:
        self.cells, self.source, self.line = cells, source, line

    def _text(self, alias: str) -> str:
        key = alias.lower()
        if key not in self.cells:
            raise HistoryError(
                f"{self.source}: no column {alias!r}; paste the whole result of the query "
                "written for this same mapping"
            )
        return self.cells[key]

    def _fault(self, alias: str, what: str) -> HistoryError:
        return HistoryError(f"{self.source}: column {alias!r} on line {self.line} {what}")

    def count(self, alias: str, most: int | None = None, of: str = "") -> int:
        """A count cell: present, a whole number, at least 0 and at most ``most``."""
        text = self._text(alias)
        try:
            value = float(text)
        except ValueError:
            value = math.nan
        if not (math.isfinite(value) and value >= 0 and value == math.floor(value)):
            shown = "empty" if text == "" else repr(text[:40])
            raise self._fault(alias, f"must be a count (a whole number, 0 or more), not {shown}")
        count = int(value)
        if most is not None and count > most:
            raise self._fault(alias, f"counts {count:,} values, more than the {most:,} {of}")
        return count

    def number(self, alias: str, needed: bool, *, variance: bool = False) -> float:
        """A mean, variance or covariance cell; 0.0 when empty and not ``needed``."""
        text = self._text(alias)
        if text == "" or text.upper() == "NULL":
            if needed:
                raise self._fault(alias, "is empty, but the line counts values for it")
            return 0.0
        try:
            value = float(text)
        except ValueError:
            value = math.nan
        if math.isnan(value):
            raise self._fault(alias, f"has {text[:40]!r}, which is not a number")
        if math.isinf(value):
            raise self._fault(alias, f"has {text[:40]!r}, which is infinite or beyond the "
                                     "largest number a double holds (about ±1.8e308)")
        if variance and value < 0:
            raise self._fault(alias, f"has {text[:40]!r}: a variance cannot be negative")
        return value


def _part_tally(index: int, spec: ColumnMap, part: _Part, rows: int) -> Tally:
    def alias(what: str) -> str:
        return _alias(index, spec, what)

    values = Moments()
    if spec.kind != "ratio":
        n = part.count(alias("n"), rows, "rows of that line")
        values = Moments.from_summary(n, part.number(alias("mean"), n > 0),
                                      part.number(alias("var"), n > 1, variance=True))
    pairs = CoMoments()
    if spec.kind == "ratio" or spec.pre is not None:
        n = part.count(alias("pairs"), rows, "rows of that line")
        pairs = CoMoments.from_summary(
            n, part.number(alias("mean_x"), n > 0), part.number(alias("mean_y"), n > 0),
            part.number(alias("var_x"), n > 1, variance=True),
            part.number(alias("var_y"), n > 1, variance=True),
            part.number(alias("cov"), n > 1),
        )
        if spec.kind == "ratio":
            values = pairs.y
    return Tally(rows, values, pairs)


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
