"""Scenarios out of the program: ``fourfold compare`` (text and CSV), ``plan-scenarios.csv``,
``fourfold export --scenario`` — exit codes, stderr, no files on failure (the project's own
promises; CSV read back with pandas, the comparison checked against plan.compare and
plan.evaluate)."""

from __future__ import annotations

import csv
import json
import math

import pandas as pd
import pytest

from fourfold import cli
from fourfold.plan import compare, dumps, evaluate, load, sample_path


def _run(capsys, *argv) -> tuple[int, str, str]:
    code = cli.main([*map(str, argv)])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _texts(column) -> list[str]:
    return ["" if pd.isna(value) else value for value in column]


def test_compare_prints_an_aligned_table_one_column_per_scenario(capsys):
    code, out, err = _run(capsys, "compare", sample_path())
    assert code == 0 and err == ""
    lines = out.splitlines()
    names = ["Base", "Without arm B", "All eligible traffic", "Accept +7 % conversion lift"]
    starts = [lines[0].index(name) for name in names]
    assert starts == sorted(starts)
    duration = next(line for line in lines if line.startswith("Duration"))
    assert [duration[start:].split("  ")[0] for start in starts] == [
        "35 days", "21 days (−14 d)", "21 days (−14 d)", "21 days (−14 d)"]
    assert any(line.strip().startswith("Units per arm") for line in lines)
    assert "Checkout conversion" in out and "Page load time (s)" in out


def test_compare_to_csv_writes_the_comparison_in_full_precision(tmp_path, capsys):
    target = tmp_path / "alternatives.csv"
    code, out, _ = _run(capsys, "compare", sample_path(), "-o", target)
    assert code == 0 and "alternatives.csv" in out
    back = pd.read_csv(target, keep_default_na=False, na_values=[""])
    expected = compare(load(sample_path()))
    assert list(back.columns) == list(expected.columns)
    for column in expected.columns:
        if expected[column].dtype.kind == "f":
            assert back[column].tolist() == expected[column].tolist(), column
        else:
            assert _texts(back[column]) == _texts(expected[column]), column
    assert list(back.columns[:4]) == ["scenario", "status", "duration_days", "duration_weeks"]


@pytest.mark.parametrize(("argv", "message"), [
    (["-o", "out.txt"], "written as .csv"),
    (["-o", "nowhere/out.csv"], "does not exist"),
])
def test_compare_errors_go_to_stderr_with_status_2_and_no_file(tmp_path, capsys, monkeypatch,
                                                                argv, message):
    monkeypatch.chdir(tmp_path)
    code, out, err = _run(capsys, "compare", sample_path(), *argv)
    assert code == 2 and out == ""
    assert err.startswith("fourfold: error: ") and message in err
    assert list(tmp_path.iterdir()) == []


def test_compare_of_a_missing_plan_names_it(tmp_path, capsys):
    code, _, err = _run(capsys, "compare", tmp_path / "absent.json")
    assert code == 2 and "absent.json" in err


def test_export_of_a_scenario_writes_that_scenarios_rows(tmp_path, capsys):
    target = tmp_path / "b.csv"
    code, _, _ = _run(capsys, "export", sample_path(), "-o", target,
                      "--scenario", "Without arm B")
    assert code == 0
    back = pd.read_csv(target, keep_default_na=False, na_values=[""])
    frame = evaluate(load(sample_path()), "Without arm B")
    assert back["units_control"].tolist() == frame["units_control"].tolist()
    with open(tmp_path / "b-settings.csv", encoding="utf-8-sig", newline="") as handle:
        settings = {key: value for key, value, _ in list(csv.reader(handle))[1:]}
    assert settings["scenario"] == "Without arm B" and settings["arms"] == "1"
    assert float(settings["duration_days"]) == frame.attrs["duration_days"] == 21.0
    base = pd.read_csv(tmp_path / "b-scenarios.csv")
    assert base["scenario"].tolist()[0] == "Base"


def test_export_of_an_unknown_scenario_is_refused_naming_the_scenarios(tmp_path, capsys):
    code, _, err = _run(capsys, "export", sample_path(), "-o", tmp_path / "x.pdf",
                        "--scenario", "Drop arm A")
    assert code == 2
    assert "no scenario called 'Drop arm A'" in err and "'Without arm B'" in err
    assert list(tmp_path.iterdir()) == []


def test_a_plan_without_scenarios_writes_no_scenarios_file(tmp_path):
    from fourfold.export.csv import write_csv

    plan = load(sample_path())
    plan.scenarios = []
    written = write_csv(plan, tmp_path / "p.csv")
    assert [path.name for path in written] == ["p.csv", "p-settings.csv"]
    with open(written[1], encoding="utf-8-sig", newline="") as handle:
        assert "scenario" not in [row[0] for row in csv.reader(handle)]


def test_scenario_and_metric_names_that_look_like_formulas_are_neutralised(tmp_path, capsys):
    """OWASP "CSV Injection": text cells starting a formula get a leading quote."""
    data = json.loads(dumps(load(sample_path())))
    data["scenarios"][0]["name"] = "=HYPERLINK(1)"
    data["metrics"][0]["name"] = "+Conversion"
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    target = tmp_path / "c.csv"
    assert _run(capsys, "compare", path, "-o", target)[0] == 0
    with open(target, encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.reader(handle))
    assert rows[2][0] == "'=HYPERLINK(1)"
    assert "'+Conversion: units_control" in rows[0]


def test_an_incomplete_scenario_has_no_duration_in_the_csv_or_the_table(tmp_path, capsys):
    data = json.loads(dumps(load(sample_path())))
    data["scenarios"][-1]["rows"] = {"conversion": {"effect": None}}
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    code, out, _ = _run(capsys, "compare", path)
    assert code == 0
    duration = next(line for line in out.splitlines() if line.startswith("Duration"))
    assert duration.rstrip().endswith("incomplete")
    _run(capsys, "compare", path, "-o", tmp_path / "c.csv")
    back = pd.read_csv(tmp_path / "c.csv", keep_default_na=False, na_values=[""])
    last = back.iloc[-1]
    assert last["status"] == "incomplete" and math.isnan(last["duration_days"])
    assert "needs an effect" in last["notes"]
