"""Plans at the edges of a double through every headless command, with Python warnings turned
into errors: each command ends with exit 0 and nothing on stderr but Fourfold's own warning
that the plan is incomplete (exported with ``--allow-incomplete``), or one line and exit 2, and
a result it cannot give carries its reason — never an empty cell without a word, an ``inf``
count, a ``RuntimeWarning`` or a traceback.

The limits are IEEE 754 double facts (largest finite 1.8e308, smallest subnormal 4.9e-324;
common practice, no source).
"""

from __future__ import annotations

import csv
import json
import subprocess
import sys

import pytest

from fourfold import cli
from fourfold.plan import sample_path


def _sample() -> dict:
    return json.loads(sample_path().read_text(encoding="utf-8"))


def _edit(settings=None, row=None, **fields) -> dict:
    data = _sample()
    data["settings"].update(settings or {})
    if row is not None:
        data["metrics"][row].update(fields)
    return data


EXTREMES = {
    "daily units 1e-320": _edit({"daily_units": 1e-320}),
    "daily units 1e308": _edit({"daily_units": 1e308}),
    "daily units 1e-320 with looks": _edit({"daily_units": 1e-320, "looks": 3}),
    "runtime with daily units 1e-320": _edit({"daily_units": 1e-320, "runtime_days": 14.0}),
    "cluster cv 1e300": _edit(row=0, cluster_cv=1e300, cluster_size=2.0, icc=0.5),
    "cluster size 1e308": _edit(row=0, cluster_size=1e308, icc=1.0),
    "n of 1e308": _edit(row=0, solve="power", n=1e308),
    "mean of 1e308, sd 1e308": _edit(row=1, baseline=1e308, sd=1e308),
    "mean of 1e-320, sd 1e-320": _edit(row=1, baseline=1e-320, sd=1e-320),
    "rate of 1e308": _edit(row=4, baseline=1e308),
    "margin of 1e308": _edit(row=5, margin=1e308, relative=False),
}


def _quiet(err: str) -> bool:
    """stderr holds nothing but Fourfold's warning that the plan is incomplete."""
    return all(line.startswith("fourfold: warning: the plan is incomplete: ")
               for line in err.splitlines())


def _plan_file(tmp_path, name: str):
    path = tmp_path / "edge.json"
    path.write_text(json.dumps(EXTREMES[name]), encoding="utf-8")
    return path


@pytest.mark.filterwarnings("error")
@pytest.mark.parametrize("name", list(EXTREMES))
def test_an_extreme_plan_exports_with_reasons_and_no_warning(tmp_path, capsys, name):
    plan = _plan_file(tmp_path, name)
    assert cli.main(["export", str(plan), "-o", str(tmp_path / "out.csv"),
                     "--allow-incomplete"]) == 0
    assert _quiet(capsys.readouterr().err)
    with open(tmp_path / "out.csv", encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.DictReader(handle))
    for row in rows:
        assert "inf" not in (row["units_total"], row["units_control"], row["days"])
        computed = all(row[key] for key in ("units_control", "units_total"))
        assert computed or row["reason"], row
        if EXTREMES[name]["settings"].get("daily_units") and row["solve"] == "sample_size":
            assert row["days"] or row["reason"], row


@pytest.mark.filterwarnings("error")
@pytest.mark.parametrize("name", ["daily units 1e-320", "runtime with daily units 1e-320",
                                  "cluster cv 1e300", "mean of 1e308, sd 1e308",
                                  "n of 1e308"])
def test_an_extreme_plan_gives_a_pdf_and_a_shot(tmp_path, capsys, name):
    plan = _plan_file(tmp_path, name)
    assert cli.main(["export", str(plan), "-o", str(tmp_path / "out.pdf"),
                     "--allow-incomplete"]) == 0
    assert cli.main(["shot", str(plan), "-o", str(tmp_path / "out.png")]) == 0
    assert _quiet(capsys.readouterr().err)
    assert (tmp_path / "out.pdf").read_bytes().rstrip().endswith(b"%%EOF")


def test_the_tiny_traffic_row_says_why_it_has_no_days(tmp_path, capsys):
    plan = _plan_file(tmp_path, "daily units 1e-320")
    assert cli.main(["export", str(plan), "-o", str(tmp_path / "out.csv")]) == 2
    err = capsys.readouterr().err  # the plan is incomplete: refused in one line with why
    assert err.count("\n") == 1 and "needs more days than can be counted" in err
    assert cli.main(["export", str(plan), "-o", str(tmp_path / "out.csv"),
                     "--allow-incomplete"]) == 0
    with open(tmp_path / "out.csv", encoding="utf-8-sig", newline="") as handle:
        first = next(csv.DictReader(handle))
    assert first["days"] == ""
    assert first["reason"] == "needs more days than can be counted at 9.99989e-321 daily units"


def test_the_command_line_prints_no_warning_with_warnings_as_errors(tmp_path):
    # The real command in a fresh interpreter with -W error: a RuntimeWarning anywhere on the
    # path (engine, evaluation, export) would end it with a traceback.
    plan = _plan_file(tmp_path, "cluster cv 1e300")
    done = subprocess.run([sys.executable, "-W", "error", "-m", "fourfold", "export", str(plan),
                           "-o", str(tmp_path / "out.csv"), "--allow-incomplete"],
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0 and _quiet(done.stderr), done.stderr
    history = tmp_path / "edge.csv"
    history.write_text("x,y\n1e308,1\n-1e308,2\n1e-320,3\n")
    done = subprocess.run([sys.executable, "-W", "error", "-m", "fourfold", "history",
                           str(history), "--mean", "x", "--ratio", "x:y", "--pre", "x:y"],
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0 and done.stderr == "", done.stderr
