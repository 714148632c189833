"""``fourfold history``: the JSON and the readable output, and errors on stderr with exit 2.

Reference figures: pandas 3.1 ``Series.mean``/``Series.std`` and ``numpy.corrcoef`` on the same
generated table.
"""

import json

import numpy as np
import pytest
from history_frames import make_frame, write_csv

from fourfold import cli


@pytest.fixture
def frame():
    return make_frame()


@pytest.fixture
def history_csv(tmp_path, frame):
    return write_csv(tmp_path, frame)



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
