"""The same import for data that lives in a warehouse: its query, and its result read back.

:func:`warehouse_sql` writes the aggregate query of :mod:`fourfold.history.sql` (a sqlglot
syntax tree rendered in the warehouse's dialect): per metric ``COUNT``, ``AVG`` and the sample
variance over the units where the metric's columns are filled in (the moments the delta method
and ρ need); with a unit and a time column also the reach curve and the windows. Run it in the
warehouse — or let Fourfold run it (:mod:`fourfold.history.connect`, :mod:`fourfold.history
.duckdb_files`) — and :func:`read_warehouse_result` or :func:`read_warehouse_rows` turn its
result into the same :class:`HistorySummary` as the file import. Every result, pasted, saved or
fetched, goes through the same cell checks. Rows of several partitions (``group_by``) are
merged exactly with the same moment merges as the file import's chunks.

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
import io
import math
import os
from collections.abc import Sequence
from pathlib import Path

from fourfold.history.errors import HistoryError
from fourfold.history.exposure import ReachCurve, WindowSummary
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
_check = check_mapping
_alias = alias


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

    The result is a header line of the query's column names and one row per partition,
    separated by commas, tabs, semicolons or ``|``; column names match case-insensitively and
    empty or ``NULL`` cells mean no value.

    Examples
    --------
    >>> text = "rows,m1_spend_n,m1_spend_mean,m1_spend_var\\n10,8,2.5,4.0\\n6,6,4.0,1.0\\n"
    >>> spend = read_warehouse_result(text, [ColumnMap("mean", "spend")])["spend"]
    >>> spend.n, spend.missing, round(spend.mean, 6), round(spend.sd, 6)
    (14, 2, 3.142857, 1.769708)
    """
    mapping = _check(mapping)
    header, rows = _table(text, source)
    return summary_from_rows(header, rows, mapping, source)


def read_warehouse_rows(columns: Sequence[str], records, mapping: Sequence[ColumnMap], *,
                        source: str = "query result") -> HistorySummary:
    """:func:`read_warehouse_result` of rows fetched from a database (SQLAlchemy, DuckDB).

    Each value is written as the text a result file would hold and read with the same checks.

    Examples
    --------
    >>> rows = [("all", None, 10, 8, 2.5, 4.0), ("all", None, 6, 6, 4.0, 1.0)]
    >>> names = ["section", "at", "rows", "m1_spend_n", "m1_spend_mean", "m1_spend_var"]
    >>> read_warehouse_rows(names, rows, [ColumnMap("mean", "spend")])["spend"].n
    14
    """
    mapping = _check(mapping)
    header = [str(name).strip().lower() for name in columns]
    rows = [(number, [_text(value) for value in record])
            for number, record in enumerate(records, start=2)]
    return summary_from_rows(header, rows, mapping, source)


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
    return str(value)


def summary_from_rows(header: list[str], rows: list[tuple[int, list[str]]],
                      mapping: list[ColumnMap], source: str) -> HistorySummary:
    """The summary of a result's rows (each with its line number), by section."""
    if not rows:
        raise HistoryError(f"{source}: there is a header line but no result row")
    sections: dict[str, list] = {"all": [], "reach": [], "window": []}
    at_index = header.index(SECTION) if SECTION in header else None
    for line, row in rows:
        name = row[at_index].strip().lower() if at_index is not None and at_index < len(
            row) else "all"
        if name not in sections:
            raise HistoryError(f"{source}: line {line} is of an unknown section {name!r}")
        sections[name].append((line, dict(zip(header, row, strict=False))))
    if not sections["all"]:
        raise HistoryError(f"{source}: no line of the whole history (section 'all')")
    tallies = [Tally() for _ in mapping]
    total = 0
    length = first = None
    for line, cells in sections["all"]:
        def get(name: str, line=line, cells=cells) -> float:
            return _cell(cells, name, source, line)

        part_rows = get(ROWS)
        total += int(part_rows)
        if AT in cells and cells[AT].strip() not in ("", "NULL", "null"):
            length = _day(get(AT), AT, source, line)
            first = _date(cells.get(DAY_ONE, ""), source, line)
        for index, spec in enumerate(mapping):
            _check_bad(index, spec, get, cells, source, line)
            tallies[index] = tallies[index].merge(_part_tally(index, spec, get, part_rows))
    metrics = tuple(finish(spec, tally) for spec, tally in zip(mapping, tallies, strict=True))
    if not sections["reach"] and not sections["window"]:
        return HistorySummary(source, total, metrics)
    reach = _reach(sections["reach"], length, first, source)
    windows = tuple(_window(line, cells, mapping, source)
                    for line, cells in sorted(sections["window"],
                                              key=lambda item: float(item[1].get(AT) or 0)))
    return HistorySummary(source, total, metrics, reach, windows)


def _check_bad(index: int, spec: ColumnMap, get, cells: dict, source: str, line: int) -> None:
    if spec.kind not in ("proportion", "count"):
        return
    name = alias(index, spec, "bad")
    if name not in cells:
        return  # a result of a query written before these checks
    bad = get(name)
    if not math.isnan(bad) and bad > 0:
        what = "0/1 (or true/false)" if spec.kind == "proportion" else "a count (0, 1, 2, …)"
        raise HistoryError(f"{source}: column {spec.column!r} has {int(bad):,} values that are "
                           f"not {what} (column {name!r} on line {line})")


def _day(value: float, name: str, source: str, line: int) -> int:
    if math.isnan(value) or value < 1 or value != math.floor(value) or value > 1e5:
        raise HistoryError(f"{source}: column {name!r} on line {line} must be a day (1, 2, …)")
    return int(value)


def _date(text: str, source: str, line: int) -> int | None:
    """Days since 1970-01-01 of a ``YYYY-MM-DD`` cell (None when empty)."""
    import datetime as dt

    text = text.strip()
    if text in ("", "NULL", "null"):
        return None
    try:
        return (dt.date.fromisoformat(text[:10]) - dt.date(1970, 1, 1)).days
    except ValueError:
        raise HistoryError(f"{source}: column {DAY_ONE!r} on line {line} must be a date "
                           f"(YYYY-MM-DD), not {text[:40]!r}") from None


def _reach(lines, length: int | None, first: int | None, source: str) -> ReachCurve:
    """The cumulative reach from the rows of new units per day."""
    new: dict[int, int] = {}
    for line, cells in lines:
        day = _day(_cell(cells, AT, source, line), AT, source, line)
        if day in new:
            raise HistoryError(f"{source}: day {day} appears twice in the reach (line {line})")
        new[day] = int(_cell(cells, ROWS, source, line))
    days = max([length or 0, *new])
    if new and max(new) > days:
        raise HistoryError(f"{source}: the reach goes past the history's {days} days")
    units, running = [], 0
    for day in range(1, days + 1):
        running += new.get(day, 0)
        units.append(running)
    return ReachCurve(first, tuple(units), True, 0.0, first is not None)


def _window(line: int, cells: dict, mapping: list[ColumnMap], source: str) -> WindowSummary:
    def get(name: str) -> float:
        return _cell(cells, name, source, line)

    days = _day(get(AT), AT, source, line)
    units = int(get(ROWS))
    metrics, problems = [], {}
    for index, spec in enumerate(mapping):
        try:
            metrics.append(finish(spec, _part_tally(index, spec, get, units)))
        except HistoryError as error:
            problems[spec.name] = str(error)
    return WindowSummary(days, units, tuple(metrics), problems)


def read_warehouse_file(path: str | os.PathLike, mapping: Sequence[ColumnMap]) -> HistorySummary:
    """:func:`read_warehouse_result` of a small saved result file (up to 1 MB)."""
    path = Path(path)
    try:
        data = path.read_bytes()[: _MAX_RESULT_BYTES + 1]
    except OSError as error:
        raise HistoryError(f"{path}: cannot be read ({error.strerror})") from None
    if len(data) > _MAX_RESULT_BYTES:
        raise HistoryError(f"{path.name}: a query result should be a few lines, not over 1 MB")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise HistoryError(f"{path.name}: not a UTF-8 text file") from None
    return read_warehouse_result(text, mapping, source=path.name)


def _part_tally(index: int, spec: ColumnMap, get, rows: float) -> Tally:
    def alias(what: str) -> str:
        return _alias(index, spec, what)

    values = Moments()
    if spec.kind != "ratio":
        values = Moments.from_summary(get(alias("n")), _or_zero(get(alias("mean"))),
                                      _or_zero(get(alias("var"))))
    pairs = CoMoments()
    if spec.kind == "ratio" or spec.pre is not None:
        pairs = CoMoments.from_summary(
            get(alias("pairs")), _or_zero(get(alias("mean_x"))), _or_zero(get(alias("mean_y"))),
            _or_zero(get(alias("var_x"))), _or_zero(get(alias("var_y"))),
            _or_zero(get(alias("cov"))),
        )
        if spec.kind == "ratio":
            values = pairs.y
    return Tally(int(rows), values, pairs)


def _or_zero(value: float) -> float:
    return 0.0 if math.isnan(value) else value


def _table(text: str, source: str) -> tuple[list[str], list[tuple[int, list[str]]]]:
    lines = [line for line in text.replace("\r\n", "\n").split("\n") if line.strip()]
    lines = [line for line in lines if not set(line.strip()) <= set("-+|= ")]
    if not lines:
        raise HistoryError(f"{source}: paste the query's result, header line first")
    first = lines[0]
    delimiter = max(",\t;|", key=first.count)
    if first.count(delimiter) == 0:
        raise HistoryError(f"{source}: the first line should name the result's columns")
    parsed = list(csv.reader(io.StringIO("\n".join(lines)), delimiter=delimiter))
    header = [cell.strip().strip('"').lower() for cell in parsed[0]]
    rows = [(number + 2, [cell.strip() for cell in row]) for number, row in
            enumerate(parsed[1:]) if any(cell.strip() for cell in row)]
    return header, rows


def _cell(cells: dict, alias: str, source: str, line: int) -> float:
    key = alias.lower()
    if key not in cells:
        raise HistoryError(
            f"{source}: no column {alias!r}; paste the whole result of the query written for "
            "this same mapping"
        )
    text = cells[key]
    if text == "" or text.upper() == "NULL":
        return math.nan
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value):  # nan or inf cells make a mean or variance nan or inf
        raise HistoryError(
            f"{source}: column {alias!r} has {text[:40]!r} on line {line}, which is not a "
            "finite number (an infinite or not-a-number cell in the data?)"
        )
    if key.endswith(("_n", "_pairs")) or key == "rows":
        if value < 0 or value != math.floor(value):
            raise HistoryError(f"{source}: column {alias!r} on line {line} must be a count")
    return value
