"""The warehouse query in every dialect: it parses back with sqlglot in that dialect, and
transpiled to DuckDB it runs on generated data with the same numbers as the file import (to
1e-9 relative); hostile names stay names. DuckDB 2.0 and sqlglot 30 (test-only and core
dependencies) run and parse it; the figures it is compared with are the file import's, which
tests/history checks against pandas.
"""

import pytest
from history_frames import VISIT_MAPPING as MAPPING

from fourfold.history import ColumnMap, HistoryError, read_history
from fourfold.history.sql import DIALECTS
from fourfold.history.warehouse import (
    read_warehouse_file,
    read_warehouse_result,
    read_warehouse_rows,
    warehouse_sql,
)

duckdb = pytest.importorskip("duckdb")
sqlglot = pytest.importorskip("sqlglot")

HOSTILE = [
    'sp"end; DROP TABLE x; --',
    "sp`end /* comment */",
    "it's; SELECT 1 --",
    "back\\slash`\"'",
    "two\nlines]",
]


@pytest.fixture
def connection(frame):
    con = duckdb.connect()
    table = frame.assign(day=frame.index % 5)
    con.register("frame_view", table)
    con.execute('CREATE SCHEMA shop; CREATE TABLE shop."visits 2026" AS SELECT * FROM frame_view')
    yield con
    con.close()


@pytest.fixture
def visits_connection(visits):
    con = duckdb.connect()
    con.register("visits_view", visits)
    con.execute("CREATE TABLE visits AS SELECT * FROM visits_view")
    yield con
    con.close()


def _run(con, sql: str, dialect: str):
    """Parse the query back in its dialect, transpile it to DuckDB and run it."""
    statements = sqlglot.parse(sql, read=dialect)
    assert len(statements) == 1
    duck = statements[0].sql(dialect="duckdb")
    result = con.execute(duck)
    return [d[0] for d in result.description], result.fetchall()


def _same(a, b):
    assert (a.n, a.missing) == (b.n, b.missing)
    assert b.mean == pytest.approx(a.mean, rel=1e-9)
    assert b.sd == pytest.approx(a.sd, rel=1e-9)
    if a.rho is not None:
        assert b.rho == pytest.approx(a.rho, rel=1e-9)


@pytest.mark.parametrize("dialect", DIALECTS)
@pytest.mark.parametrize("group_by", [None, "day"])
def test_every_dialect_runs_with_the_file_import_numbers(connection, history_csv, dialect,
                                                         group_by):
    sql = warehouse_sql(MAPPING, ["shop", "visits 2026"], group_by=group_by, dialect=dialect)
    columns, rows = _run(connection, sql, dialect)
    assert len(rows) == (1 if group_by is None else 5)
    from_sql = read_warehouse_rows(columns, rows, MAPPING)
    from_file = read_history(history_csv, MAPPING)
    assert from_sql.rows == from_file.rows
    for a, b in zip(from_file.metrics, from_sql.metrics, strict=True):
        _same(a, b)


@pytest.mark.parametrize("dialect", DIALECTS)
def test_reach_and_windows_in_every_dialect_equal_the_file_import(visits_connection,
                                                                   visits_csv, dialect):
    from_file = read_history(visits_csv, MAPPING, unit="visitor", time="time")
    sql = warehouse_sql(MAPPING, "visits", dialect=dialect, unit="visitor", time="time")
    columns, rows = _run(visits_connection, sql, dialect)
    from_sql = read_warehouse_rows(columns, rows, MAPPING)
    assert from_sql.reach.units == from_file.reach.units
    assert from_sql.reach.start == from_file.reach.start == "2026-03-01"
    for a, b in zip(from_file.metrics, from_sql.metrics, strict=True):
        _same(a, b)
    assert [w.days for w in from_sql.windows] == [w.days for w in from_file.windows]
    for wa, wb in zip(from_file.windows, from_sql.windows, strict=True):
        assert wa.units == wb.units
        for a, b in zip(wa.metrics, wb.metrics, strict=True):
            _same(a, b)


@pytest.mark.parametrize("dialect", DIALECTS)
def test_hostile_names_stay_names_in_every_dialect(frame, dialect):
    con = duckdb.connect()
    renamed = frame.rename(columns={"spend": HOSTILE[0], "pre_spend": HOSTILE[1],
                                    "bought": HOSTILE[2], "clicks": HOSTILE[3],
                                    "sessions": HOSTILE[4]})
    con.register("frame_view", renamed)
    con.execute('CREATE TABLE "odd""table; --" AS SELECT * FROM frame_view')
    mapping = [ColumnMap("mean", HOSTILE[0], pre=HOSTILE[1]), ColumnMap("proportion", HOSTILE[2]),
               ColumnMap("ratio", HOSTILE[3], denominator=HOSTILE[4])]
    sql = warehouse_sql(mapping, ['odd"table; --'], dialect=dialect)
    tree = sqlglot.parse_one(sql, read=dialect)
    names = {column.name for column in tree.find_all(sqlglot.exp.Column)}
    assert set(HOSTILE) <= names
    assert {table.name for table in tree.find_all(sqlglot.exp.Table)} == {'odd"table; --'}
    columns, rows = _run(con, sql, dialect)
    summary = read_warehouse_rows(columns, rows, mapping)
    assert summary[HOSTILE[0]].mean == pytest.approx(frame["spend"].mean(), rel=1e-12)
    assert summary[f"{HOSTILE[3]}:{HOSTILE[4]}"].n == frame["clicks"].notna().sum()


def test_a_nul_or_an_empty_name_is_refused():
    with pytest.raises(HistoryError, match="without NUL"):
        warehouse_sql([ColumnMap("mean", "sp\x00end")], "t")
    with pytest.raises(HistoryError, match="schema.table"):
        warehouse_sql([ColumnMap("mean", "spend")], "a..b")
    with pytest.raises(HistoryError, match="unknown SQL dialect 'oracle'"):
        warehouse_sql([ColumnMap("mean", "spend")], "t", dialect="oracle")


def test_dialects_quote_their_own_way():
    mapping = [ColumnMap("mean", "spend")]
    assert "`spend`" in warehouse_sql(mapping, "t", dialect="bigquery")
    assert "`spend`" in warehouse_sql(mapping, "t", dialect="mysql")
    assert "`spend`" in warehouse_sql(mapping, "t", dialect="databricks")
    assert '"spend"' in warehouse_sql(mapping, "t", dialect="snowflake")
    assert "FLOAT64" in warehouse_sql(mapping, "t", dialect="bigquery")
    assert "DOUBLE PRECISION" in warehouse_sql(mapping, "t")


def test_pasted_tab_separated_text_and_a_saved_file(connection, tmp_path):
    sql = warehouse_sql(MAPPING, ["shop", "visits 2026"])
    result = connection.execute(sql).df()
    pasted = result.to_csv(index=False, sep="\t").upper()  # consoles may shout the names
    path = tmp_path / "result.csv"
    result.to_csv(path, index=False)
    for summary in (read_warehouse_result(pasted, MAPPING), read_warehouse_file(path, MAPPING)):
        assert summary["clicks:sessions"].n == len(connection.execute(
            'SELECT * FROM shop."visits 2026" WHERE clicks IS NOT NULL').fetchall())


def test_cells_that_are_not_zero_or_one_are_refused(connection):
    connection.execute('UPDATE shop."visits 2026" SET bought = NULL WHERE contacts > 1')
    connection.execute('ALTER TABLE shop."visits 2026" ALTER bought TYPE DOUBLE')
    connection.execute('UPDATE shop."visits 2026" SET bought = 2 WHERE contacts > 2')
    columns, rows = _run(connection, warehouse_sql(MAPPING, ["shop", "visits 2026"]), "ansi")
    with pytest.raises(HistoryError, match="'bought' has .* values that are not 0/1"):
        read_warehouse_rows(columns, rows, MAPPING)


def test_result_errors_name_the_column():
    mapping = [ColumnMap("mean", "spend")]
    with pytest.raises(HistoryError, match="m1_spend_var"):
        read_warehouse_result("rows,m1_spend_n,m1_spend_mean\n3,3,1.0\n", mapping)
    with pytest.raises(HistoryError, match="line 2"):
        read_warehouse_result("rows,m1_spend_n,m1_spend_mean,m1_spend_var\n3,3,abc,1\n",
                              mapping)
    with pytest.raises(HistoryError, match="no result row"):
        read_warehouse_result("rows,m1_spend_n,m1_spend_mean,m1_spend_var\n", mapping)
    with pytest.raises(HistoryError, match="unknown section 'oops'"):
        read_warehouse_result("section,rows,m1_spend_n,m1_spend_mean,m1_spend_var\n"
                              "oops,3,3,1,1\n", mapping)
    with pytest.raises(HistoryError, match="percentiles"):
        warehouse_sql([ColumnMap("mean", "spend", cap=99.0)], "t")
