"""``fourfold history``: baselines and variances from a per-unit history file or a warehouse.

Only argparse at import time; the reader is imported when the command runs.
"""

from __future__ import annotations

import argparse


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("data", nargs="?",
                        help="per-unit history: CSV (or Parquet with pyarrow installed), or a "
                             "quoted glob of files with --engine duckdb; with --query-result, "
                             "the saved result of the --sql query")
    parser.add_argument("--mean", action="append", default=[], metavar="COL",
                        help="numeric column: mean and standard deviation")
    parser.add_argument("--proportion", action="append", default=[], metavar="COL",
                        help="0/1 or true/false column: rate and its variance")
    parser.add_argument("--count", action="append", default=[], metavar="COL",
                        help="count column: rate per unit and its over-dispersion")
    parser.add_argument("--ratio", action="append", default=[], metavar="NUM:DEN",
                        help="ratio of sums with its delta-method variance")
    parser.add_argument("--quantile", action="append", default=[], metavar="COL:LEVEL",
                        help="a quantile of a numeric column and the density there, e.g. "
                             "load_ms:0.95 for the p95")
    parser.add_argument("--pre", action="append", default=[], metavar="COL:PRECOL",
                        help="pre-period column of a metric, for CUPED's correlation")
    parser.add_argument("--cap", type=float, default=None, metavar="PERCENTILE",
                        help="cap heavy tails at this percentile (e.g. 99.9)")
    parser.add_argument("--unit", metavar="COL",
                        help="unit id column: rows are visits or days of units; with --time, "
                             "adds the reach curve and each unit's first 7/14/21/28 days")
    parser.add_argument("--time", metavar="COL",
                        help="date or timestamp column (or whole day numbers), with --unit")
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.add_argument("--engine", choices=("auto", "stream", "duckdb"), default="auto",
                        help="who reads a local file: the streaming reader, DuckDB (optional "
                             "extra 'duckdb'), or auto: DuckDB for a Parquet file without "
                             "--unit/--time when installed, else the streaming reader, "
                             "which checks every line")
    parser.add_argument("--sql", metavar="TABLE",
                        help="print the query of the same figures for a warehouse table "
                             "instead of reading a file (or run it, with --connect)")
    parser.add_argument("--dialect", metavar="NAME",
                        help="with --sql: the warehouse's SQL dialect (ansi, postgres, "
                             "snowflake, bigquery, spark, databricks, redshift, trino, duckdb, "
                             "mysql; default ansi)")
    parser.add_argument("--connect", metavar="URL",
                        help="with --sql: run the query over this SQLAlchemy URL (optional "
                             "extra 'warehouse'; the dialect comes from the URL), or env:NAME "
                             "to take the URL from environment variable NAME")
    parser.add_argument("--group-by", metavar="COL",
                        help="with --sql: one result row per value of COL (e.g. the day)")
    parser.add_argument("--query-result", action="store_true",
                        help="DATA is the saved result of the --sql query (rows are merged)")


def mapping_from_args(args: argparse.Namespace) -> list:
    """The column mapping the options describe (``--cap`` applies to every cappable metric)."""
    from fourfold.history.errors import HistoryError
    from fourfold.history.summary import ColumnMap

    def split_pair(text: str, option: str, what: str) -> tuple[str, str]:
        parts = text.split(":")
        if len(parts) != 2 or not all(part.strip() for part in parts):
            raise HistoryError(f"{option} needs {what}, not {text!r}")
        return parts[0].strip(), parts[1].strip()

    pre: dict[str, str] = {}
    for text in args.pre:
        column, pre_column = split_pair(text, "--pre", "COL:PRECOL")
        pre[column] = pre_column
    specs = []
    for kind, columns in (("mean", args.mean), ("proportion", args.proportion),
                          ("count", args.count)):
        for column in columns:
            cap = None if kind == "proportion" else args.cap
            specs.append(ColumnMap(kind, column, pre=pre.pop(column, None), cap=cap))
    for text in args.ratio:
        numerator, denominator = split_pair(text, "--ratio", "NUM:DEN")
        specs.append(ColumnMap("ratio", numerator, denominator=denominator, cap=args.cap))
    for text in args.quantile:
        column, level = split_pair(text, "--quantile", "COL:LEVEL (e.g. load_ms:0.95)")
        try:
            value = float(level)
        except ValueError:
            raise HistoryError(f"--quantile {text}: the level must be a number such as 0.95, "
                               f"not {level!r}") from None
        specs.append(ColumnMap("quantile", column, level=value))
    if pre:
        column = next(iter(pre))
        raise HistoryError(
            f"--pre {column}:{pre[column]}: map {column!r} with --mean, --proportion or --count"
        )
    return specs


def run(args: argparse.Namespace) -> int:
    """Read the history and print the summary (or JSON); errors are FourfoldError."""
    import json

    from fourfold.history.errors import HistoryError
    from fourfold.history.text import summary_table

    mapping = mapping_from_args(args)
    if args.sql is not None:
        summary = _warehouse(args, mapping)
        if summary is None:
            return 0
    else:
        for option, value in (("--group-by", args.group_by), ("--dialect", args.dialect),
                              ("--connect", args.connect)):
            if value is not None:
                raise HistoryError(f"{option} goes with --sql")
        if args.data is None:
            raise HistoryError("give a history file (or --sql TABLE to write a warehouse "
                               "query)")
        if args.query_result:
            from fourfold.history.warehouse import read_warehouse_file

            summary = read_warehouse_file(args.data, mapping)
        else:
            from fourfold.history.sources import summarise

            summary = summarise(args.data, mapping, engine=args.engine, unit=args.unit,
                                time=args.time)
    if args.json:
        print(json.dumps(summary.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(summary_table(summary))
    return 0


def _warehouse(args: argparse.Namespace, mapping):
    """Print the query for ``--sql`` (None), or run it with ``--connect`` (the summary)."""
    import os

    from fourfold.history.errors import HistoryError

    options = {"group_by": args.group_by, "unit": args.unit, "time": args.time}
    if args.data is not None:
        raise HistoryError("--sql writes a query for a warehouse table; leave out the file")
    if args.connect is None:
        from fourfold.history.warehouse import warehouse_sql

        print(warehouse_sql(mapping, args.sql, dialect=args.dialect, **options) + ";")
        return None
    if args.dialect is not None:
        raise HistoryError("--dialect comes from the --connect URL; leave it out")
    url = args.connect
    if url.startswith("env:"):
        url = os.environ.get(url[4:], "")
        if not url:
            raise HistoryError(f"environment variable {args.connect[4:]!r} holds no URL")
    from fourfold.history.connect import query_warehouse

    return query_warehouse(url, mapping, args.sql, **options)
