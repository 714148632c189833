"""The history query for a warehouse, built as a syntax tree and written in its SQL dialect.

:func:`history_query` builds one aggregate query with sqlglot and renders it in the dialect the
warehouse speaks. Identifiers — table and column names — enter the tree as quoted identifier
nodes, never as text, so each dialect's generator quotes and escapes them its own way
(``"…"`` with ``""`` in ANSI, PostgreSQL, Snowflake, Redshift, Trino and DuckDB; backticks in
BigQuery, Spark, Databricks and MySQL): a name holding quotes, backticks, semicolons or
comment markers stays one name.

The result has one row per *section* (column ``section``), with the same columns throughout:

``all``
    The whole history, one row (or one per value of the ``group_by`` column, in ``part``):
    ``rows`` and per metric the moments of the file import — count, mean and sample variance of
    the values, and for a ratio or a pre-period column the moments of the pairs with both
    filled in (their covariance as (Var(x + y) − Var(x) − Var(y)) / 2, from the sample
    variances every one of these warehouses has) — and, for proportion and count columns,
    ``bad``: how many cells are not 0/1 or not a count. With a unit and a time column, ``at``
    is the history's length in days and ``day_one`` its first day (text, YYYY-MM-DD).
``reach``
    With a unit and a time column: one row per day with new units — ``at`` the day (day 1 =
    the first day in the table), ``rows`` the units first seen on it.
``window``
    With a unit and a time column: one row per window of ``at`` = 7, 14, 21, 28 days and the
    history's length (those that fit), ``rows`` the units whose whole window is in the history,
    and the metrics' moments over those units' values in their first ``at`` days, as
    :mod:`fourfold.history.exposure` defines them.

:mod:`fourfold.history.warehouse` reads such a result back into the file import's summary.

Dialects are sqlglot's names (:data:`DIALECTS`); ``ansi`` — the default — is sqlglot's generic
SQL with ``DOUBLE PRECISION`` and ``VAR_SAMP``, and counts days by subtracting dates (as
PostgreSQL, Redshift, Snowflake and DuckDB do); the others count days with their own date
functions.

References
----------
sqlglot (Mao, T. et al.), https://github.com/tobymao/sqlglot — the syntax tree and dialects.
"""

from __future__ import annotations

from collections.abc import Sequence

from fourfold.history.errors import HistoryError
from fourfold.history.exposure import WINDOW_DAYS
from fourfold.history.summary import RESERVED_KEYS, ColumnMap

DIALECTS = ("ansi", "postgres", "snowflake", "bigquery", "spark", "databricks", "redshift",
            "trino", "duckdb", "mysql")
"""The dialects the query is written in (sqlglot's names; ``ansi`` is the default)."""
DEFAULT_DIALECT = "ansi"
SECTION, AT, DAY_ONE, ROWS, PART = "section", "at", "day_one", "rows", "part"
_SOURCE, _FIRSTS, _SPAN, _VISITS, _WINDOWS, _UNITS = (
    "fourfold_rows", "fourfold_firsts", "fourfold_span", "fourfold_visits", "fourfold_windows",
    "fourfold_units")


def alias(index: int, spec: ColumnMap, what: str) -> str:
    """The result column of one figure of metric ``index`` (ASCII, like ``m1_spend_mean``).

    Examples
    --------
    >>> alias(0, ColumnMap("mean", "Spend (€)"), "var")
    'm1_spend_var'
    """
    import re

    slug = re.sub(r"[^a-z0-9]+", "_", spec.name.lower()).strip("_")[:40] or "metric"
    return f"m{index + 1}_{slug}_{what}"


def sqlglot_dialect(name: str | None) -> str:
    """The sqlglot dialect for one of :data:`DIALECTS` (``ansi`` is registered here)."""
    name = (name or DEFAULT_DIALECT).lower()
    if name not in DIALECTS:
        raise HistoryError(f"unknown SQL dialect {name!r}; choose one of {', '.join(DIALECTS)}")
    if name == "ansi":
        _register_ansi()
    return name


def history_query(mapping: Sequence[ColumnMap], table: str | Sequence[str], *,
                  dialect: str | None = None, group_by: str | None = None,
                  unit: str | None = None, time: str | None = None) -> str:
    """The history query for ``table`` in ``dialect`` (see the module text).

    Parameters
    ----------
    mapping : sequence of ColumnMap
        As for the file import; caps are refused (percentiles do not merge across partitions).
    table : str or sequence of str
        ``table``, ``schema.table`` or ``catalog.schema.table``, or its parts.
    dialect : str, optional
        One of :data:`DIALECTS` (default ``ansi``).
    group_by : str, optional
        A partition column: one ``all`` row per value (merged when read back).
    unit, time : str, optional
        Unit id and date/timestamp columns (both or neither): adds the reach curve and the
        windows.

    Examples
    --------
    >>> print(history_query([ColumnMap("mean", "spend")], "shop.visits", dialect="bigquery"))
    SELECT
      'all' AS `section`,
      NULL AS `at`,
      COUNT(*) AS `rows`,
      COUNT(CAST(`spend` AS FLOAT64)) AS `m1_spend_n`,
      AVG(CAST(`spend` AS FLOAT64)) AS `m1_spend_mean`,
      VARIANCE(CAST(`spend` AS FLOAT64)) AS `m1_spend_var`
    FROM `shop`.`visits`
    """
    mapping = check_mapping(mapping)
    name = sqlglot_dialect(dialect)
    tree = history_tree(mapping, table, group_by=group_by, unit=unit, time=time,
                        dates_subtract=name == "ansi")
    return tree.sql(dialect=name, pretty=True)


def check_mapping(mapping: Sequence[ColumnMap]) -> list[ColumnMap]:
    """The mapping as a list; HistoryError when it is empty, has a cap or a quantile."""
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


def history_tree(mapping: list[ColumnMap], table, *, group_by=None, unit=None, time=None,
                 dates_subtract: bool = False):
    """The query as a sqlglot expression (dialect-free but for how days are counted)."""
    from sqlglot import exp

    if (unit is None) != (time is None):
        raise HistoryError("reach and windows need both a unit column and a time column")
    clash = [spec.name for spec in mapping if unit is not None and spec.name in RESERVED_KEYS]
    if clash:
        raise HistoryError(f"a metric called {clash[0]!r} cannot go with a unit and a time "
                           "column (the output uses that name for the reach curve)")
    columns = list(dict.fromkeys(c for spec in mapping for c in spec.columns))
    slot = {column: f"c{i + 1}" for i, column in enumerate(columns)}
    if unit is None:
        value = {column: _double(_ident(column)) for column in columns}
        items = _all_items(mapping, value, group_by=_ident(group_by) if group_by else None)
        query = exp.select(*items).from_(_table(table))
        if group_by is not None:
            query = query.group_by(_ident(group_by))
        return query
    b = _Builder(mapping, slot, dates_subtract)
    return b.query(table, unit, time, group_by)


class _Builder:
    """The query with the reach curve and the windows (a few common table expressions)."""

    def __init__(self, mapping, slot, dates_subtract):
        self.mapping, self.slot, self.dates_subtract = mapping, slot, dates_subtract

    def days_between(self, start, end):
        from sqlglot import exp

        if self.dates_subtract:
            return exp.paren(exp.Sub(this=end, expression=start))
        return exp.DateDiff(this=end, expression=start, unit=exp.var("DAY"))

    def query(self, table, unit, time, group_by):
        from sqlglot import exp

        def col(name, source=None):
            return exp.column(_ident(name), table=_ident(source) if source else None)

        day = exp.Cast(this=exp.Cast(this=_ident(time), to=exp.DataType.build("timestamp")),
                       to=exp.DataType.build("date"))
        source_items = [exp.alias_(_ident(unit), "u", quoted=True),
                        exp.alias_(day, "d", quoted=True)]
        source_items += [exp.alias_(_double(_ident(column)), name, quoted=True)
                         for column, name in self.slot.items()]
        if group_by is not None:
            source_items.append(exp.alias_(_ident(group_by), PART, quoted=True))
        source = exp.select(*source_items).from_(_table(table))
        firsts = (exp.select(col("u"), exp.alias_(exp.Min(this=col("d")), "d0", quoted=True))
                  .from_(_ident(_SOURCE)).group_by(col("u")))
        span = exp.select(
            exp.alias_(exp.Min(this=col("d")), "day_one", quoted=True),
            exp.alias_(self.days_between(exp.Min(this=col("d")), exp.Max(this=col("d")))
                       + exp.Literal.number(1), "length", quoted=True),
        ).from_(_ident(_SOURCE))
        visits = (
            exp.select(
                *[col(name, "s") for name in ("u", *self.slot.values())],
                exp.alias_(self.days_between(col("d0", "f"), col("d", "s")), "k", quoted=True),
                exp.alias_(self.days_between(col("day_one", "p"), col("d0", "f")), "start",
                           quoted=True),
                col("length", "p"),
            )
            .from_(_from(_SOURCE, "s"))
            .join(_from(_FIRSTS, "f"),
                  on=exp.EQ(this=col("u", "s"), expression=col("u", "f")))
            .join(_from(_SPAN, "p"), join_type="cross")
        )
        windows = exp.select(exp.alias_(col("length"), "w", quoted=True)).from_(_ident(_SPAN))
        for days in reversed(WINDOW_DAYS):
            windows = exp.union(exp.select(exp.alias_(exp.Literal.number(days), "w",
                                                      quoted=True)), windows, distinct=True)
        units = self._units(col)
        reach = (
            exp.select(
                exp.alias_(exp.Literal.string("reach"), SECTION, quoted=True),
                exp.alias_(self.days_between(col("day_one", "p"), col("d0", "f"))
                           + exp.Literal.number(1), AT, quoted=True),
                exp.alias_(exp.Null(), DAY_ONE, quoted=True),
                exp.alias_(exp.Count(this=exp.Star()), ROWS, quoted=True),
                *self._nulls(group_by),
            )
            .from_(_from(_FIRSTS, "f"))
            .join(_from(_SPAN, "p"), join_type="cross")
            .group_by(self.days_between(col("day_one", "p"), col("d0", "f")))
        )
        whole_value = {column: col(name) for column, name in self.slot.items()}
        length = exp.Subquery(this=exp.select(col("length")).from_(_ident(_SPAN)))
        first = exp.Subquery(this=exp.select(
            exp.Cast(this=col("day_one"), to=exp.DataType.build("varchar"))).from_(_ident(_SPAN)))
        whole = (exp.select(*_all_items(self.mapping, whole_value,
                                        group_by=col(PART) if group_by else None, at=length,
                                        day_one=first))
                 .from_(_ident(_SOURCE)))
        if group_by is not None:
            whole = whole.group_by(col(PART))
        per_window = (exp.select(*self._window_items(col, group_by)).from_(_ident(_UNITS))
                      .group_by(col("w")))
        query = exp.union(exp.union(whole, reach, distinct=False), per_window, distinct=False)
        for name, body in ((_SOURCE, source), (_FIRSTS, firsts), (_SPAN, span),
                           (_VISITS, visits), (_WINDOWS, windows), (_UNITS, units)):
            query = query.with_(_ident(name), as_=body)
        return query

    def _units(self, col):
        """Each unit's values in each window whose whole length lies in the history."""
        from sqlglot import exp

        inside = exp.LT(this=col("k", "v"), expression=col("w", "w"))
        items = [col("u", "v"), col("w", "w")]
        for i, spec in enumerate(self.mapping):
            x = col(self.slot[spec.column], "v")
            if spec.kind == "ratio":
                d = col(self.slot[spec.denominator], "v")
                both = exp.and_(inside, exp.Not(this=exp.Is(this=x, expression=exp.Null())),
                                exp.Not(this=exp.Is(this=d, expression=exp.Null())))
                items.append(exp.alias_(exp.Sum(this=_when(both, x)), f"x{i}", quoted=True))
                items.append(exp.alias_(exp.Sum(this=_when(both, d)), f"y{i}", quoted=True))
                continue
            gather = exp.Max if spec.kind == "proportion" else exp.Sum
            items.append(exp.alias_(gather(this=_when(inside, x)), f"x{i}", quoted=True))
            if spec.pre is not None:
                pre = col(self.slot[spec.pre], "v")
                items.append(exp.alias_(exp.Avg(this=pre), f"y{i}", quoted=True))
        complete = exp.LTE(this=exp.Add(this=col("start", "v"), expression=col("w", "w")),
                           expression=col("length", "v"))
        return (exp.select(*items)
                .from_(_from(_VISITS, "v"))
                .join(_from(_WINDOWS, "w"), on=complete)
                .group_by(col("u", "v"), col("w", "w")))

    def _window_items(self, col, group_by):
        from sqlglot import exp

        items = [exp.alias_(exp.Literal.string("window"), SECTION, quoted=True),
                 exp.alias_(col("w"), AT, quoted=True),
                 exp.alias_(exp.Null(), DAY_ONE, quoted=True),
                 exp.alias_(exp.Count(this=exp.Star()), ROWS, quoted=True)]
        if group_by is not None:
            items.append(exp.alias_(exp.Null(), PART, quoted=True))
        for i, spec in enumerate(self.mapping):
            other = col(f"y{i}") if spec.kind == "ratio" or spec.pre is not None else None
            items += _metric_items(i, spec, col(f"x{i}"), other)
        return items

    def _nulls(self, group_by):
        from sqlglot import exp

        names = [PART] if group_by is not None else []
        for i, spec in enumerate(self.mapping):
            names += [alias(i, spec, what) for what in _figures(spec)]
        return [exp.alias_(exp.Null(), name, quoted=True) for name in names]


def _figures(spec: ColumnMap) -> list[str]:
    """The result columns of one metric (without the ``m1_slug_`` prefix)."""
    names = [] if spec.kind == "ratio" else ["n", "mean", "var"]
    if spec.kind == "ratio" or spec.pre is not None:
        names += ["pairs", "mean_x", "mean_y", "var_x", "var_y", "cov"]
    if spec.kind in ("proportion", "count"):
        names.append("bad")
    return names


def _all_items(mapping, value, *, group_by=None, at=None, day_one=None):
    from sqlglot import exp

    items = [exp.alias_(exp.Literal.string("all"), SECTION, quoted=True),
             exp.alias_(at if at is not None else exp.Null(), AT, quoted=True)]
    if day_one is not None:
        items.append(exp.alias_(day_one, DAY_ONE, quoted=True))
    items.append(exp.alias_(exp.Count(this=exp.Star()), ROWS, quoted=True))
    if group_by is not None:
        items.append(exp.alias_(group_by, PART, quoted=True))
    for i, spec in enumerate(mapping):
        other = None
        if spec.kind == "ratio":
            other = value[spec.denominator]
        elif spec.pre is not None:
            other = value[spec.pre]
        items += _metric_items(i, spec, value[spec.column], other, check=True)
    return items


def _metric_items(index: int, spec: ColumnMap, x, other, *, check: bool = False):
    """Count, mean, variance (and pairs' moments) of one metric's values ``x``."""
    from sqlglot import exp

    out = []

    def add(expression, what: str) -> None:
        out.append(exp.alias_(expression, alias(index, spec, what), quoted=True))

    if spec.kind != "ratio":
        add(exp.Count(this=x), "n")
        add(exp.Avg(this=x), "mean")
        add(exp.Variance(this=x), "var")
    if other is not None:
        both = exp.and_(exp.Not(this=exp.Is(this=x, expression=exp.Null())),
                        exp.Not(this=exp.Is(this=other, expression=exp.Null())))
        px, py = _when(both, other), _when(both, x)
        add(exp.Count(this=py), "pairs")
        add(exp.Avg(this=px), "mean_x")
        add(exp.Avg(this=py), "mean_y")
        add(exp.Variance(this=px), "var_x")
        add(exp.Variance(this=py), "var_y")
        spread = exp.Sub(
            this=exp.Sub(this=exp.Variance(this=exp.Add(this=px, expression=py)),
                         expression=exp.Variance(this=px)),
            expression=exp.Variance(this=py))
        add(exp.Div(this=exp.paren(spread), expression=exp.Literal.number(2)), "cov")
    if spec.kind in ("proportion", "count"):
        if check:
            wrong = (exp.and_(exp.NEQ(this=x, expression=exp.Literal.number(0)),
                              exp.NEQ(this=x, expression=exp.Literal.number(1)))
                     if spec.kind == "proportion" else
                     exp.or_(exp.LT(this=x, expression=exp.Literal.number(0)),
                             exp.NEQ(this=x, expression=exp.Floor(this=x))))
            add(exp.Count(this=_when(wrong, exp.Literal.number(1))), "bad")
        else:
            add(exp.Null(), "bad")
    return out


def _when(condition, value):
    from sqlglot import exp

    return exp.Case(ifs=[exp.If(this=condition, true=value)])


def _double(expression):
    from sqlglot import exp

    return exp.Cast(this=expression, to=exp.DataType.build("double"))


def _from(name: str, short: str):
    """A common table expression named ``name``, read under the alias ``short``."""
    from sqlglot import exp

    return exp.Table(this=_ident(name), alias=exp.TableAlias(this=_ident(short)))


def _ident(name: str):
    from sqlglot import exp

    if not isinstance(name, str) or not name or "\x00" in name:
        raise HistoryError(f"an SQL name must be non-empty text without NUL, not {name!r}")
    return exp.to_identifier(name, quoted=True)


def _table(table):
    """A table node of up to three quoted parts (catalog.schema.table)."""
    from sqlglot import exp

    parts = table.split(".") if isinstance(table, str) else list(table)
    parts = [part.strip() if isinstance(part, str) else part for part in parts]
    if not parts or len(parts) > 3 or any(not part for part in parts):
        raise HistoryError(f"table must be a name like schema.table, not {table!r}")
    names = [_ident(part) for part in parts]
    return exp.Table(this=names[-1], db=names[-2] if len(names) > 1 else None,
                     catalog=names[-3] if len(names) > 2 else None)


_ANSI: list = []


def _register_ansi() -> None:
    """Register sqlglot dialect ``ansi``: the generic one, with ``DOUBLE PRECISION`` and
    ``VAR_SAMP`` as the standard spells them."""
    if _ANSI:
        return
    from sqlglot import exp, generator
    from sqlglot.dialects.dialect import Dialect

    class Ansi(Dialect):
        class Generator(generator.Generator):
            TYPE_MAPPING = {**generator.Generator.TYPE_MAPPING,
                            exp.DataType.Type.DOUBLE: "DOUBLE PRECISION"}
            TRANSFORMS = {**generator.Generator.TRANSFORMS,
                          exp.Variance: lambda self, e: self.func("VAR_SAMP", e.this)}

    _ANSI.append(Ansi)
