"""``fourfold history``: the JSON and the readable output, and errors on stderr with exit 2.

Reference figures: pandas 3.1 ``Series.mean``/``Series.std`` and ``numpy.corrcoef`` on the same
generated table.
"""

import json

import numpy as np
import pytest

from fourfold import cli


def test_json_output_keyed_by_metric(history_csv, frame, capsys):
    code = cli.main(["history", str(history_csv), "--mean", "spend", "--pre", "spend:pre_spend",
                     "--proportion", "bought", "--count", "contacts",
                     "--ratio", "clicks:sessions", "--json"])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out) == {"spend", "bought", "contacts", "clicks:sessions"}
    for metric in out.values():
        assert {"n", "missing", "mean", "sd"} <= set(metric)
    assert out["spend"]["mean"] == pytest.approx(frame["spend"].mean(), rel=1e-12)
    assert out["spend"]["sd"] == pytest.approx(frame["spend"].std(), rel=1e-12)
    assert out["spend"]["missing"] == int(frame["spend"].isna().sum())
    both = frame.dropna(subset=["spend"])
    assert out["spend"]["rho"] == pytest.approx(
        np.corrcoef(both["pre_spend"], both["spend"])[0, 1], rel=1e-10)
    assert "rho" not in out["bought"]
    assert out["bought"]["mean"] == pytest.approx(frame["bought"].mean(), rel=1e-12)


def test_cap_in_json(history_csv, frame, capsys):
    assert cli.main(["history", str(history_csv), "--mean", "spend", "--cap", "99",
                     "--json"]) == 0
    cap = json.loads(capsys.readouterr().out)["spend"]["cap"]
    assert cap["threshold"] == pytest.approx(np.percentile(frame["spend"].dropna(), 99),
                                             rel=1e-12)
    assert 0 < cap["variance_ratio"] < 1


def test_readable_summary(history_csv, capsys):
    assert cli.main(["history", str(history_csv), "--mean", "spend", "--cap", "99.5",
                     "--proportion", "bought"]) == 0
    out = capsys.readouterr().out
    assert "3,000 rows" in out
    assert "spend" in out and "bought" in out and "99.5th percentile" in out


@pytest.mark.parametrize("arguments, words", [
    (["--mean", "nothing"], "no column 'nothing'"),
    (["--mean", "unit"], "column 'unit'"),
    (["--ratio", "clicks"], "NUM:DEN"),
    (["--pre", "spend:pre_spend"], "map 'spend'"),
    ([], "map at least one column"),
])
def test_errors_go_to_stderr_with_exit_2(history_csv, capsys, arguments, words):
    assert cli.main(["history", str(history_csv), *arguments]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err.startswith("fourfold: error:") and words in captured.err


def test_sql_then_query_result_round_trip_on_duckdb(history_csv, frame, tmp_path, capsys):
    duckdb = pytest.importorskip("duckdb")  # DuckDB 2.0, test-only
    options = ["--mean", "spend", "--pre", "spend:pre_spend", "--ratio", "clicks:sessions"]
    assert cli.main(["history", "--sql", "visits", "--group-by", "day", *options]) == 0
    sql = capsys.readouterr().out
    con = duckdb.connect()
    con.register("frame_view", frame.assign(day=frame.index % 3))
    con.execute("CREATE TABLE visits AS SELECT * FROM frame_view")
    result = tmp_path / "result.csv"
    con.execute(sql).df().to_csv(result, index=False)
    assert cli.main(["history", str(result), "--query-result", "--json", *options]) == 0
    from_query = json.loads(capsys.readouterr().out)
    assert cli.main(["history", str(history_csv), "--json", *options]) == 0
    from_file = json.loads(capsys.readouterr().out)
    for name in ("spend", "clicks:sessions"):
        for key in ("n", "missing"):
            assert from_query[name][key] == from_file[name][key]
        for key in ("mean", "sd"):
            assert from_query[name][key] == pytest.approx(from_file[name][key], rel=1e-9)
    assert from_query["spend"]["rho"] == pytest.approx(from_file["spend"]["rho"], rel=1e-9)


def test_group_by_needs_sql_and_a_file_is_needed(history_csv, capsys):
    assert cli.main(["history", str(history_csv), "--mean", "spend", "--group-by", "d"]) == 2
    assert "--group-by goes with --sql" in capsys.readouterr().err
    assert cli.main(["history", "--mean", "spend"]) == 2
    assert "history file" in capsys.readouterr().err
