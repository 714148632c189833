"""The generated SQL, run on DuckDB 2.0 (test-only dependency) over a generated table, gives the
same numbers as the streaming file import; partition results merge exactly."""

import pytest

from fourfold.history import ColumnMap, HistoryError, read_history
from fourfold.history.warehouse import (
    quote_table,
    read_warehouse_file,
    read_warehouse_result,
    warehouse_sql,
)

duckdb = pytest.importorskip("duckdb")

MAPPING = [
    ColumnMap("mean", "spend", pre="pre_spend"),
    ColumnMap("proportion", "bought"),
    ColumnMap("count", "contacts"),
    ColumnMap("ratio", "clicks", denominator="sessions"),
]


@pytest.fixture
def connection(frame):
    con = duckdb.connect()
    table = frame.assign(day=frame.index % 5)
    con.register("frame_view", table)
    con.execute('CREATE SCHEMA shop; CREATE TABLE shop."visits 2026" AS SELECT * FROM frame_view')
    yield con
    con.close()


def _same(a, b):
    assert (a.n, a.missing) == (b.n, b.missing)
    assert b.mean == pytest.approx(a.mean, rel=1e-10)
    assert b.sd == pytest.approx(a.sd, rel=1e-9)
    if a.rho is not None:
        assert b.rho == pytest.approx(a.rho, rel=1e-9)


@pytest.mark.parametrize("group_by", [None, "day"])
def test_sql_on_duckdb_matches_the_file_import(connection, history_csv, group_by):
    sql = warehouse_sql(MAPPING, ["shop", "visits 2026"], group_by=group_by)
    result = connection.execute(sql).df()
    assert len(result) == (1 if group_by is None else 5)
    from_sql = read_warehouse_result(result.to_csv(index=False), MAPPING)
    from_file = read_history(history_csv, MAPPING)
    assert from_sql.rows == from_file.rows
    for a, b in zip(from_file.metrics, from_sql.metrics, strict=True):
        _same(a, b)


def test_pasted_tab_separated_text_and_a_saved_file(connection, tmp_path):
    sql = warehouse_sql(MAPPING, ["shop", "visits 2026"])
    result = connection.execute(sql).df()
    pasted = result.to_csv(index=False, sep="\t").upper()  # consoles may shout the names
    path = tmp_path / "result.csv"
    result.to_csv(path, index=False)
    for summary in (read_warehouse_result(pasted, MAPPING), read_warehouse_file(path, MAPPING)):
        assert summary["clicks:sessions"].n == len(connection.execute(
            'SELECT * FROM shop."visits 2026" WHERE clicks IS NOT NULL').fetchall())


def test_identifiers_are_quoted_so_odd_names_cannot_break_out(frame):
    con = duckdb.connect()
    odd = 'sp"end; DROP TABLE x; --'
    con.register("frame_view", frame.rename(columns={"spend": odd}))
    con.execute("CREATE TABLE t AS SELECT * FROM frame_view")
    mapping = [ColumnMap("mean", odd)]
    result = con.execute(warehouse_sql(mapping, "t")).df()
    summary = read_warehouse_result(result.to_csv(index=False), mapping)
    assert summary[odd].mean == pytest.approx(frame["spend"].mean(), rel=1e-12)
    assert quote_table('a"b.c') == '"a""b"."c"'


def test_result_errors_name_the_column():
    mapping = [ColumnMap("mean", "spend")]
    with pytest.raises(HistoryError, match="m1_spend_var"):
        read_warehouse_result("rows,m1_spend_n,m1_spend_mean\n3,3,1.0\n", mapping)
    with pytest.raises(HistoryError, match="line 2"):
        read_warehouse_result("rows,m1_spend_n,m1_spend_mean,m1_spend_var\n3,3,abc,1\n",
                              mapping)
    with pytest.raises(HistoryError, match="no result row"):
        read_warehouse_result("rows,m1_spend_n,m1_spend_mean,m1_spend_var\n", mapping)
    with pytest.raises(HistoryError, match="percentiles"):
        warehouse_sql([ColumnMap("mean", "spend", cap=99.0)], "t")
