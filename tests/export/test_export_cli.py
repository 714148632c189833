"""``fourfold export`` from the command line: results on success, clear errors and no files on
failure (no outside source: the project's own promises about user errors, see DEVELOPERS.md)."""

from __future__ import annotations

import csv

import pytest

from fourfold import cli
from fourfold.plan import dumps, load, sample_path


def _fails(capsys, *argv) -> str:
    code = cli.main(["export", *map(str, argv)])
    captured = capsys.readouterr()
    assert code != 0
    assert captured.err.startswith("fourfold: error: ")
    return captured.err


def test_csv_export_writes_both_files(tmp_path, capsys):
    assert cli.main(["export", str(sample_path()), "-o", str(tmp_path / "p.csv")]) == 0
    assert "p.csv" in capsys.readouterr().out
    assert sorted(p.name for p in tmp_path.iterdir()) == ["p-scenarios.csv", "p-settings.csv",
                                                          "p.csv"]


def test_missing_plan_file(tmp_path, capsys):
    err = _fails(capsys, tmp_path / "absent.json", "-o", tmp_path / "out.pdf")
    assert "absent.json" in err
    assert list(tmp_path.iterdir()) == []


def test_malformed_plan_file(tmp_path, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text('{"format": "fourfold-plan", "schema_version": 1, "metrics": 3}',
                   encoding="utf-8")
    err = _fails(capsys, bad, "-o", tmp_path / "out.csv")
    assert "metrics" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.json"]


def test_unknown_extension(tmp_path, capsys):
    err = _fails(capsys, sample_path(), "-o", tmp_path / "out.xlsx")
    assert ".csv or .pdf" in err
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("where", ["missing-folder", "under-a-file"])
def test_unwritable_output_path(tmp_path, capsys, where):
    blocker = tmp_path / "blocker.txt"
    blocker.write_text("not a folder", encoding="utf-8")
    folder = tmp_path / "nowhere" if where == "missing-folder" else blocker
    err = _fails(capsys, sample_path(), "-o", folder / "out.csv")
    assert "out.csv" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["blocker.txt"]


def test_csv_export_names_both_files_it_wrote(tmp_path, capsys):
    assert cli.main(["export", str(sample_path()), "-o", str(tmp_path / "p.csv")]) == 0
    out = capsys.readouterr().out
    assert out.strip() == (f"wrote {tmp_path / 'p.csv'}, {tmp_path / 'p-settings.csv'} and "
                           f"{tmp_path / 'p-scenarios.csv'}")
    assert sorted(path.name for path in tmp_path.iterdir()) == [
        "p-scenarios.csv", "p-settings.csv", "p.csv"]


def _incomplete_plan(tmp_path):
    """The sample plan as a hand-written file would hold it: the primary's baseline 150 % and
    the page-load guardrail ("less", no true change) with a margin of −20 ms."""
    text = dumps(load(sample_path()))
    text = text.replace('"baseline": 0.031', '"baseline": 1.5')
    text = text.replace('"margin": 0.02', '"margin": -0.02')
    path = tmp_path / "broken.json"
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize("suffix", [".csv", ".pdf"])
def test_an_incomplete_plan_is_refused_with_exit_2_naming_each_row(tmp_path, capsys, suffix):
    plan = _incomplete_plan(tmp_path)
    err = _fails(capsys, plan, "-o", tmp_path / f"out{suffix}")
    assert cli.main(["export", str(plan), "-o", str(tmp_path / f"out{suffix}")]) == 2
    assert "incomplete plan" in err and "--allow-incomplete" in err
    assert ("row 1 (Checkout conversion): baseline must be between 0 and 1 (exclusive) for a "
            "proportion") in err
    assert ("row 6 (Page load time (s)): effect must be less than the margin for a 'less' "
            "test") in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["broken.json"]


def test_allowed_an_incomplete_plan_says_so_in_every_csv(tmp_path, capsys):
    plan = _incomplete_plan(tmp_path)
    out = tmp_path / "out.csv"
    assert cli.main(["export", str(plan), "-o", str(out), "--allow-incomplete"]) == 0
    captured = capsys.readouterr()
    assert captured.err.startswith("fourfold: warning: the plan is incomplete: row 1 "
                                   "(Checkout conversion): baseline must be")
    with open(out, encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.reader(handle))
    status = rows[0].index("plan_status")
    assert {row[status] for row in rows[1:]} == {"incomplete"}
    with open(tmp_path / "out-settings.csv", encoding="utf-8-sig", newline="") as handle:
        values = {key: value for key, value, _ in csv.reader(handle)}
    assert values["status"] == "incomplete"
    assert values["duration_days"] == values["total_units"] == values["binding_name"] == ""
    assert values["incomplete_1"].startswith("row 1 (Checkout conversion): baseline must be")
    assert values["incomplete_2"].startswith("row 6 (Page load time (s)): effect must be less")


def test_a_complete_plan_says_complete(tmp_path, capsys):
    assert cli.main(["export", str(sample_path()), "-o", str(tmp_path / "p.csv")]) == 0
    assert capsys.readouterr().err == ""
    with open(tmp_path / "p-settings.csv", encoding="utf-8-sig", newline="") as handle:
        values = {key: value for key, value, _ in csv.reader(handle)}
    assert values["status"] == "complete" and "incomplete_1" not in values
