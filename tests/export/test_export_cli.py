"""``fourfold export`` from the command line: results on success, clear errors and no files on
failure (no outside source: the project's own promises about user errors, see DEVELOPERS.md)."""

from __future__ import annotations

import pytest

from fourfold import cli
from fourfold.plan import sample_path


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
