"""Hostile history files and warehouse results through ``fourfold history``: a correct answer or
one line on stderr with exit status 2 — never a traceback, a warning, a runaway memory or a
wrong answer with exit 0.

Reference values: the sample sd from its definition (√(Σ(x − x̄)²/(n − 1)), common practice,
no source) evaluated exactly with Python's ``fractions``; pandas 3 ``Series.std`` on the same
numbers written with ordinary line breaks.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import mpmath
import pytest

from fourfold import cli
from fourfold.history import ColumnMap, read_history
from fourfold.history.moments import CoMoments, Moments


def _history(capsys, *argv) -> tuple[int, str, str]:
    code = cli.main(["history", *map(str, argv)])
    out, err = capsys.readouterr()
    return code, out, err


def _refused(capsys, *argv) -> str:
    code, out, err = _history(capsys, *argv)
    assert code == 2 and out == "", (out, err)
    assert err.startswith("fourfold: error: ") and err.count("\n") == 1, err
    return err


def _exact_sd(values) -> float:
    """The sample sd of the doubles ``values``, exactly up to the final rounding (fractions,
    then mpmath 1.3's square root at 40 digits)."""
    exact = [Fraction(v) for v in values]
    mean = sum(exact) / len(exact)
    variance = sum((v - mean) ** 2 for v in exact) / (len(exact) - 1)
    with mpmath.workdps(40):
        return float(mpmath.sqrt(mpmath.mpf(variance.numerator) / variance.denominator))


# -- bytes that would make a reader hold everything -----------------------------------------

@pytest.mark.skipif(not Path("/proc/self/status").exists(), reason="needs Linux's /proc")
def test_a_run_of_nul_bytes_after_the_first_megabyte_is_refused_in_bounded_memory(tmp_path):
    path = tmp_path / "padded.csv"
    with open(path, "wb") as handle:
        handle.write(b"spend,bought\n" + b"1.5,0\n2.5,1\n" * 90_000)  # past the first MB
        handle.truncate(handle.tell() + (200 << 20))  # 200 MB of NUL bytes, sparse
    code = (  # VmHWM: this process's own peak (ru_maxrss would carry its parent's over exec)
        "import re, sys\n"
        "from fourfold import cli\n"
        "status = cli.main(['history', sys.argv[1], '--mean', 'spend'])\n"
        "status_text = open('/proc/self/status').read()\n"
        "peak = int(re.search(r'VmHWM:\\s+(\\d+)', status_text).group(1)) // 1024\n"
        "print(status, peak)\n"
    )
    done = subprocess.run([sys.executable, "-c", code, str(path)], capture_output=True,
                          text=True, timeout=120)
    status, peak_mb = map(int, done.stdout.split())
    assert status == 2
    assert done.stderr == ("fourfold: error: padded.csv: line 180002 holds a NUL byte: this is "
                           "binary data, not CSV text\n")
    assert peak_mb < 400  # the file's 200 MB of NULs are never held


def test_a_line_longer_than_a_megabyte_is_refused_with_its_number(tmp_path, capsys):
    path = tmp_path / "long.csv"
    path.write_bytes(b"spend\n1\n2\n" + b"9" * (2 << 20) + b"\n3\n")
    err = _refused(capsys, path, "--mean", "spend")
    assert "long.csv: line 4 is longer than 1 MB" in err


def test_a_quote_left_open_is_refused_with_its_line(tmp_path, capsys):
    path = tmp_path / "open.csv"
    path.write_bytes(b'spend,note\n1,"ok"\n2,"never closed\n' + b"3,x\n" * 100_000)
    err = _refused(capsys, path, "--mean", "spend")
    assert err.endswith("open.csv: line 3 opens a quote that is never closed\n")
    path.write_bytes(b'spend,note\n1,"ok"\n2,"never closed\n' + b"3,x\n" * 3_000_000)
    err = _refused(capsys, path, "--mean", "spend")  # past a block: the record grows too long
    assert "line 3 is longer than 1 MB" in err and "quote left open" in err


# -- line endings, headers, numbers at the edges ---------------------------------------------

@pytest.mark.parametrize("ending", [b"\r", b"\r\n", b"\n"])
def test_every_line_ending_gives_the_same_answer(tmp_path, capsys, ending):
    lines = [b"spend,bought", b"1.5,0", b"2.5,1", b"", b"7,1", b"-2,0"]
    path = tmp_path / "endings.csv"
    path.write_bytes(ending.join(lines) + ending)
    code, out, err = _history(capsys, path, "--mean", "spend", "--proportion", "bought",
                              "--json")
    assert code == 0 and err == ""
    result = json.loads(out)
    assert result["spend"]["n"] == 4 and result["spend"]["missing"] == 1
    assert result["spend"]["sd"] == pytest.approx(_exact_sd([1.5, 2.5, 7, -2]), rel=1e-15)
    assert result["bought"]["mean"] == 0.5


def test_a_column_named_twice_is_refused(tmp_path, capsys):
    path = tmp_path / "twice.csv"
    path.write_text("spend,bought,spend\n1,0,5\n2,1,6\n3,0,9\n")
    err = _refused(capsys, path, "--mean", "spend")
    assert "names column 'spend' twice (columns 1 and 3)" in err


@pytest.mark.parametrize("values", [
    [1e308, -1e308],
    [1e300, 2e300, 3e300],
    [1.7e308, 1.7e308, 1.6e308],
    [1e-300, 2e-300, 4e-300],
    [5e-324, 1e-323, 0.0],
])
def test_values_far_from_one_keep_a_finite_sd(tmp_path, capsys, values):
    path = tmp_path / "edges.csv"
    path.write_text("x\n" + "\n".join(repr(v) for v in values) + "\n")
    code, out, err = _history(capsys, path, "--mean", "x", "--json")
    assert code == 0 and err == ""
    assert json.loads(out)["x"]["sd"] == pytest.approx(_exact_sd(values), rel=1e-12)


def test_moments_far_from_one_merge_across_chunks_like_the_whole(tmp_path):
    values = [1.5e307, -1.2e308, 3e-310, 9e307, -4e307, 1e307]
    whole = Moments.of(values)
    parts = Moments()
    for value in values:
        parts = parts.merge(Moments.of([value]))
    assert parts.sd == pytest.approx(_exact_sd(values), rel=1e-12)
    assert whole.sd == pytest.approx(_exact_sd(values), rel=1e-12)
    pairs = CoMoments.of(values[:3], values[3:])
    merged = CoMoments.of(values[:1], values[3:4]).merge(CoMoments.of(values[1:3],
                                                                      values[4:]))
    assert merged.correlation == pytest.approx(pairs.correlation, rel=1e-12)


def test_a_ratio_of_huge_sums_has_a_finite_delta_method_sd(tmp_path, capsys):
    pairs = [(3.0, 1), (6.0, 2), (9.0, 3), (15.0, 5), (4.0, 1)]
    small, huge = tmp_path / "small.csv", tmp_path / "huge.csv"
    small.write_text("items,orders\n" + "".join(f"{i!r},{o}\n" for i, o in pairs))
    huge.write_text("items,orders\n" + "".join(f"{i * 1e300!r},{o}\n" for i, o in pairs))
    code, out, err = _history(capsys, huge, "--ratio", "items:orders", "--json")
    assert code == 0 and err == ""
    spec = [ColumnMap("ratio", "items", denominator="orders")]
    reference = read_history(small, spec)["items:orders"].sd
    assert 0 < reference < math.inf
    assert json.loads(out)["items:orders"]["sd"] == pytest.approx(reference * 1e300, rel=1e-12)


@pytest.mark.parametrize("cell", ["1" + "0" * 400, "1" + "0" * 5000, "-1e400", "inf"])
def test_a_number_beyond_a_double_is_named_as_such(tmp_path, capsys, cell):
    path = tmp_path / "big.csv"
    path.write_text(f"x\n1\n{cell}\n3\n")
    err = _refused(capsys, path, "--mean", "x")
    assert "on line 3, which is infinite or beyond the largest number a double holds" in err
    assert len(err) < 300


# -- warehouse results ------------------------------------------------------------------------

HEADER = "rows,m1_spend_n,m1_spend_mean,m1_spend_var"


@pytest.mark.parametrize("row, words", [
    ("nan,8,2.5,4", "column 'rows' on line 2 must be a count"),
    ("NULL,8,2.5,4", "column 'rows' on line 2 must be a count"),
    (",8,2.5,4", "column 'rows' on line 2 must be a count (a whole number, 0 or more), not empty"),
    ("inf,8,2.5,4", "column 'rows' on line 2 must be a count"),
    ("10,nan,2.5,4", "column 'm1_spend_n' on line 2 must be a count"),
    ("10,2.5,2.5,4", "column 'm1_spend_n' on line 2 must be a count"),
    ("10,13,2.5,4", "counts 13 values, more than the 10 rows of that line"),
    ("10,8,2.5,-4", "column 'm1_spend_var' on line 2 has '-4': a variance cannot be negative"),
    ("10,8,inf,4", "column 'm1_spend_mean' on line 2 has 'inf', which is infinite"),
    ("10,8,2.5,1e400", "column 'm1_spend_var' on line 2 has '1e400', which is infinite"),
    ("10,8,nan,4", "column 'm1_spend_mean' on line 2 has 'nan', which is not a number"),
    ("10,8,,4", "column 'm1_spend_mean' on line 2 is empty, but the line counts values"),
    ("10,8,2.5,NULL", "column 'm1_spend_var' on line 2 is empty, but the line counts values"),
    ("10,8", "line 2 has 2 of the 4 cells the header names"),
])
def test_a_faulty_query_result_is_refused_naming_the_cell(tmp_path, capsys, row, words):
    path = tmp_path / "result.csv"
    path.write_text(f"{HEADER}\n{row}\n")
    err = _refused(capsys, "--query-result", path, "--mean", "spend")
    assert words in err


@pytest.mark.parametrize("ending", ["\r", "\r\n", "\n"])
def test_a_query_result_reads_with_any_line_ending(tmp_path, capsys, ending):
    path = tmp_path / "result.csv"
    path.write_text(ending.join([HEADER, "10,8,2.5,4.0", "6,6,4.0,1.0"]) + ending, newline="")
    code, out, err = _history(capsys, "--query-result", path, "--mean", "spend", "--json")
    assert code == 0 and err == ""
    assert json.loads(out)["spend"]["n"] == 14


def test_huge_warehouse_moments_keep_a_finite_sd(tmp_path, capsys):
    path = tmp_path / "result.csv"
    path.write_text(f"{HEADER}\n10,8,1e308,1e300\n10,8,-1e308,1e300\n")
    code, out, err = _history(capsys, "--query-result", path, "--mean", "spend", "--json")
    assert code == 0 and err == ""
    # pooled: within m2 = 2·7·1e300, between 2·8·(1e308)² → variance ≈ 16e616/15
    assert json.loads(out)["spend"]["sd"] == pytest.approx(math.sqrt(16 / 15) * 1e308,
                                                           rel=1e-12)


# -- warehouse results with the reach and window sections -------------------------------------

SECTIONED = ["section,at,day_one,rows,m1_spend_n,m1_spend_mean,m1_spend_var",
             "all,5,2026-03-01,12,10,2.5,4.0",
             "reach,1,,3,,,",
             "reach,2,,2,,,",
             "reach,4,,1,,,",
             "window,5,,6,6,3.0,2.0"]


def test_a_sectioned_query_result_reads_its_reach_and_window(tmp_path, capsys):
    path = tmp_path / "result.csv"
    path.write_text("\r".join(SECTIONED) + "\r", newline="")
    code, out, err = _history(capsys, "--query-result", path, "--mean", "spend", "--json")
    assert code == 0 and err == ""
    result = json.loads(out)
    assert [day["units"] for day in result["reach"]] == [3, 5, 5, 6, 6]
    (window,) = result["spend"]["windows"]
    assert (window["days"], window["units"], window["n"]) == (5, 6, 6)
    assert window["sd"] == pytest.approx(math.sqrt(2.0), rel=1e-15)


@pytest.mark.parametrize("line, row, words", [
    (1, "all,0,2026-03-01,12,10,2.5,4.0", "column 'at' on line 2 must be a day number"),
    (1, "all,5,yesterday,12,10,2.5,4.0", "column 'day_one' on line 2 must be a date"),
    (1, "all,9999,2026-03-01,12,10,2.5,4.0", "is day 9,999; a history spans at most 3,660"),
    (2, "reach,,,3,,,", "column 'at' on line 3 is empty: some units have no time"),
    (2, "reach,1.5,,3,,,", "column 'at' on line 3 must be a day number (1, 2, …"),
    (2, "reach,8,,3,,,", "column 'at' on line 3 is day 8, past the 5 days of the history"),
    (2, "reach,2,,3,,,", "day 2 appears twice in the reach (line 4)"),
    (2, "reach,1,,nan,,,", "column 'rows' on line 3 must be a count"),
    (2, "reach,1,,-3,,,", "column 'rows' on line 3 must be a count"),
    (2, "reach,1,,30,,,", "the reach counts 33 units, more than the 12 rows of the whole"),
    (2, "leak,1,,3,,,", "line 3 is of an unknown section 'leak'"),
    (2, "", "gives the history's length (column 'at') but no reach line"),
    (2, "reach,1", "line 3 has 2 of the 7 cells the header names"),
    (5, "window,x,,6,6,3.0,2.0", "column 'at' on line 6 must be a day number"),
    (5, "window,7,,6,6,3.0,2.0", "is day 7, past the 5 days of the history"),
    (5, "window,5,,9,6,3.0,2.0", "column 'rows' on line 6 counts 9 values, more than the 6 "
                                 "units the reach counts"),
    (5, "window,5,,6,7,3.0,2.0", "column 'm1_spend_n' on line 6 counts 7 values, more than the "
                                 "6 rows of that line"),
    (5, "window,5,,6,6,3.0,-2.0", "'m1_spend_var' on line 6 has '-2.0': a variance cannot be"),
    (5, "window,5,,6,6,inf,2.0", "'m1_spend_mean' on line 6 has 'inf', which is infinite"),
    (5, "window,5,,6,6,NaN,2.0", "'m1_spend_mean' on line 6 has 'NaN', which is not a number"),
    (5, "window,5,,6,6,3.0,", "'m1_spend_var' on line 6 is empty, but the line counts values"),
    (5, "window,5,,6,6.5,3.0,2", "'m1_spend_n' on line 6 must be a count"),
])
def test_a_faulty_reach_or_window_line_is_refused_naming_the_cell(tmp_path, capsys, line, row,
                                                                  words):
    lines = list(SECTIONED)
    lines[line] = row
    if "appears twice" in words:
        lines.insert(line, SECTIONED[3])
    if "no reach line" in words:
        del lines[2:5]
    path = tmp_path / "result.csv"
    path.write_text("\n".join(lines) + "\n")
    err = _refused(capsys, "--query-result", path, "--mean", "spend")
    assert words in err


def test_a_second_window_of_the_same_days_is_refused(tmp_path, capsys):
    path = tmp_path / "result.csv"
    path.write_text("\n".join([*SECTIONED, "window,5,,6,6,3.0,2.0"]) + "\n")
    assert "the 5-day window appears twice (line 7)" in _refused(
        capsys, "--query-result", path, "--mean", "spend")


def test_a_window_whose_figures_cannot_size_a_test_is_a_problem_not_a_refusal():
    from fourfold.history.warehouse import read_warehouse_result

    lines = [*SECTIONED[:-1], "window,5,,6,1,3.0,NULL"]  # one value: no sd, but no bad cell
    summary = read_warehouse_result("\n".join(lines), [ColumnMap("mean", "spend")])
    (window,) = summary.windows
    assert window.get("spend") is None and "same value" in window.problems["spend"]


NAMES = ["section", "at", "day_one", "rows", "m1_spend_n", "m1_spend_mean", "m1_spend_var"]
GOOD = [("all", 5, "2026-03-01", 12, 10, 2.5, 4.0), ("reach", 1, None, 3, None, None, None),
        ("reach", 2, None, 2, None, None, None), ("window", 2, None, 4, 4, 3.0, 2.0)]


@pytest.mark.parametrize("row, value, words", [
    (0, ("all", 5, "2026-03-01", None, 10, 2.5, 4.0),
     "column 'rows' on result row 1 must be a count (a whole number, 0 or more), not empty"),
    (0, ("all", 5, "2026-03-01", 12, 13, 2.5, 4.0), "counts 13 values, more than the 12 rows"),
    (0, ("all", 5, "2026-03-01", 12, 10, math.inf, 4.0),
     "'m1_spend_mean' on result row 1 has 'inf', which is infinite or beyond the largest "
     "number a double holds (about ±1.8e308) (does the data hold such a value?)"),
    (0, ("all", 5, "2026-03-01", 12, 10, 2.5, math.nan),
     "'m1_spend_var' on result row 1 has 'nan', which is not a number (does the data hold"),
    (0, ("all", 5, "2026-03-01", 12, 10, 2.5, -1e-3), "a variance cannot be negative"),
    (1, ("reach", None, None, 3, None, None, None), "column 'at' on result row 2 is empty"),
    (1, ("reach", 6, None, 3, None, None, None), "is day 6, past the 5 days of the history"),
    (3, ("window", 2, None, 9, 4, 3.0, 2.0), "more than the 5 units the reach counts"),
    (3, ("window", 2, None, 4, 4, None, 2.0), "'m1_spend_mean' on result row 4 is empty"),
    (3, ("window", 2, None, 4, True, 3.0, 2.0), None),  # a boolean count is 1: no sd, a problem
    (3, ("window", 2), "result row 4 has 2 of the 7 cells the header names"),
])
def test_fetched_rows_get_the_same_checks_naming_the_result_row(row, value, words):
    from fourfold.history.errors import HistoryError
    from fourfold.history.warehouse import read_warehouse_rows

    rows = list(GOOD)
    rows[row] = value
    mapping = [ColumnMap("mean", "spend")]
    if words is None:
        assert read_warehouse_rows(NAMES, rows, mapping).windows[0].get("spend") is None
        return
    with pytest.raises(HistoryError) as caught:
        read_warehouse_rows(NAMES, rows, mapping, source="warehouse")
    message = str(caught.value)
    assert message.startswith("warehouse: ") and "\n" not in message
    assert words in message
