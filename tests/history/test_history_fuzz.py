"""Hostile history files and warehouse results, generated. The only outcomes allowed: the
right answer, or a one-line :class:`HistoryError` (which ``fourfold history`` prints with exit
status 2).

Right answers: the count, missing count, mean and sample sd of the numbers written, computed
exactly with ``fractions`` and mpmath 1.3 (square root at 40 digits); a warehouse result's
partitions must merge to the moments of all its values (Chan, Golub & LeVeque 1983).
"""

from __future__ import annotations

import math
import warnings
from fractions import Fraction

import mpmath
import pytest
from history_frames import exact_moments
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from fourfold.history import ColumnMap, read_history
from fourfold.history.errors import HistoryError
from fourfold.history.warehouse import read_warehouse_result, read_warehouse_rows, warehouse_sql

FUZZ = settings(deadline=5000, suppress_health_check=[HealthCheck.too_slow,
                                                      HealthCheck.function_scoped_fixture])

values = st.one_of(
    st.floats(-1e6, 1e6, allow_nan=False),
    st.floats(allow_nan=False, allow_infinity=False),
    st.integers(-10**9, 10**9).map(float),
    st.sampled_from([0.0, 1e308, -1e308, 1e-300, 5e-324, 1.7976931348623157e308]),
)


def _close(found: float, expected: float, scale: float) -> bool:
    """Equal as far as doubles can tell: within 1e-9 relative, or 1e-12 of the largest value
    (a sum of doubles of mixed signs cancels to that; common practice, no source)."""
    if math.isinf(expected):
        return found is None or math.isinf(found)
    return math.isclose(found, expected, rel_tol=1e-9, abs_tol=max(1e-300, 1e-12 * scale))


def _cell(value: float | None, quote: bool) -> str:
    if value is None:
        return ""
    text = repr(value)
    return f'"{text}"' if quote else text


@st.composite
def history_files(draw):
    """A file of numbers ``x`` (some cells empty) beside a text column, as bytes: any line
    ending, quoting, BOM, delimiter and encoding."""
    xs = draw(st.lists(st.one_of(st.none(), values), min_size=1, max_size=30))
    ending = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    delimiter = draw(st.sampled_from([",", ",", ",", ";", "\t", "|"]))
    quote = draw(st.booleans())
    lines = [delimiter.join(["id", "x"])]
    lines += [delimiter.join([f"u{i}", _cell(x, quote)]) for i, x in enumerate(xs)]
    text = ending.join(lines) + (ending if draw(st.booleans()) else "")
    encoding = draw(st.sampled_from(["utf-8", "utf-8", "utf-8-sig", "utf-16", "latin-1"]))
    data = text.encode(encoding)
    damage = draw(st.sampled_from(["none", "none", "bytes", "cut", "nul"]))
    if damage == "bytes":
        at = draw(st.integers(0, len(data)))
        data = data[:at] + draw(st.binary(max_size=8)) + data[at:]
    elif damage == "cut":
        data = data[: draw(st.integers(0, len(data)))]
    elif damage == "nul":
        at = draw(st.integers(0, len(data)))
        data = data[:at] + b"\x00" * draw(st.integers(1, 64)) + data[at:]
    plain = damage == "none" and delimiter == "," and encoding in ("utf-8", "utf-8-sig")
    return data, xs, plain


@FUZZ
@given(history_files())
def test_a_history_file_is_read_right_or_refused_in_one_line(tmp_path_factory, drawn):
    data, xs, plain = drawn
    path = tmp_path_factory.mktemp("fuzz") / "history.csv"
    path.write_bytes(data)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            summary = read_history(path, [ColumnMap("mean", "x")])
        except HistoryError as error:
            message = str(error)
            assert message and "\n" not in message and len(message) < 600, message
            present = [x for x in xs if x is not None]
            assert not plain or len(present) < 2 or len(set(present)) == 1, message
            return
    present = [x for x in xs if x is not None]
    assume(plain)  # damaged bytes may still make a readable file: no answer to check then
    metric = summary["x"]
    assert (metric.n, metric.missing) == (len(present), len(xs) - len(present))
    mean, sd = exact_moments(present)
    scale = max(abs(x) for x in present)
    assert _close(metric.mean, mean, scale) and _close(metric.sd, sd, scale), (metric, mean, sd)


@FUZZ
@given(st.binary(max_size=400), st.sampled_from(["mean", "proportion", "count"]))
def test_any_bytes_are_read_or_refused_in_one_line(tmp_path_factory, data, kind):
    path = tmp_path_factory.mktemp("bytes") / "noise.csv"
    path.write_bytes(b"a,b\n" + data)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            read_history(path, [ColumnMap(kind, "a"), ColumnMap("ratio", "a",
                                                                denominator="b")])
        except HistoryError as error:
            assert "\n" not in str(error) and len(str(error)) < 600


def _reported(part: list[float]) -> tuple[int, float | None, float | None]:
    """n, mean and sample variance of a partition as a warehouse reports them (doubles, None
    for SQL NULL); a variance beyond a double is reported as inf."""
    n = len(part)
    if n == 0:
        return 0, None, None
    exact = [Fraction(v) for v in part]
    mean = sum(exact) / n
    if n == 1:
        return 1, float(mean), None
    variance = sum((v - mean) ** 2 for v in exact) / (n - 1)
    try:
        return n, float(mean), float(variance)
    except OverflowError:
        return n, float(mean), math.inf


def _pooled(reported) -> tuple[int, Fraction, Fraction] | None:
    """Exact count, mean and m2 of the union of reported partitions (None: no finite m2)."""
    total = sum(n for n, _, _ in reported)
    if total == 0 or any(v is not None and math.isinf(v) for _, _, v in reported):
        return None
    grand = sum(n * Fraction(m) for n, m, _ in reported if n) / total
    m2 = sum((n - 1) * Fraction(v) for n, _, v in reported if n > 1)
    m2 += sum(n * (Fraction(m) - grand) ** 2 for n, m, _ in reported if n)
    return total, grand, m2


@st.composite
def warehouse_results(draw):
    """Partitions of values and the moments a warehouse reports for each, as a result text
    (any delimiter, line ending and header case), perhaps with one cell damaged."""
    parts = draw(st.lists(st.lists(values, min_size=0, max_size=6), min_size=1, max_size=5))
    reported = [_reported(part) for part in parts]
    delimiter = draw(st.sampled_from([",", "\t", ";", "|"]))
    ending = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    header = ["rows", "m1_x_n", "m1_x_mean", "m1_x_var"]
    if draw(st.booleans()):
        header = [name.upper() for name in header]
    lines = [delimiter.join(header)]
    for n, mean, var in reported:
        cells = [str(n + draw(st.integers(0, 3))), str(n)]
        cells += ["NULL" if v is None else repr(v) for v in (mean, var)]
        lines.append(delimiter.join(cells))
    damage = draw(st.sampled_from(["none", "none", "cell", "cut"]))
    if damage == "cell":
        row = draw(st.integers(1, len(lines) - 1))
        cells = lines[row].split(delimiter)
        cells[draw(st.integers(0, 3))] = draw(st.sampled_from(
            ["nan", "NULL", "", "inf", "-1", "1e400", "x", "2.5", "-inf", "1" * 500]))
        lines[row] = delimiter.join(cells)
    text = ending.join(lines)
    if damage == "cut":
        text = text[: draw(st.integers(0, len(text)))]
    return text, reported, damage == "none"


@FUZZ
@given(warehouse_results())
def test_a_warehouse_result_merges_right_or_is_refused_in_one_line(drawn):
    text, reported, intact = drawn
    pooled = _pooled(reported)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            summary = read_warehouse_result(text, [ColumnMap("mean", "x")])
        except HistoryError as error:
            message = str(error)
            assert "\n" not in message and len(message) < 600, message
            assert not intact or pooled is None or pooled[0] < 2 or pooled[2] == 0, message
            return
    assume(intact)
    assert pooled is not None
    total, grand, m2 = pooled
    metric = summary["x"]
    assert metric.n == total
    with mpmath.workdps(40):
        sd = float(mpmath.sqrt(mpmath.mpf(m2.numerator) / m2.denominator / (total - 1)))
        mean = float(mpmath.mpf(grand.numerator) / grand.denominator)
    assert math.isclose(metric.mean, mean, rel_tol=1e-9, abs_tol=1e-300)
    assert math.isclose(metric.sd, sd, rel_tol=1e-9, abs_tol=1e-300), (metric.sd, sd)


def test_the_query_names_the_columns_the_fuzzed_results_use():
    sql = warehouse_sql([ColumnMap("mean", "x")], "t")
    for alias in ("rows", "m1_x_n", "m1_x_mean", "m1_x_var"):
        assert f'"{alias}"' in sql
    with pytest.raises(HistoryError):
        read_warehouse_result("rows\n", [ColumnMap("mean", "x")])


DAMAGE = ["nan", "NULL", "", "inf", "-1", "0", "1e400", "x", "2.5", "-inf", "1" * 500, "reach",
          "window", "9999", "2026-13-01"]


@st.composite
def sectioned_results(draw):
    """A result with the reach and window sections: the whole history's line, new units on
    some days, and windows with the moments a warehouse reports for drawn values; perhaps one
    cell damaged, or the text cut."""
    length = draw(st.integers(1, 40))
    new = draw(st.dictionaries(st.integers(1, length), st.integers(1, 50), min_size=1,
                               max_size=6))
    reached = sum(new.values())
    fits = sorted({days for days in (7, 14, 21, 28, length) if days <= length})
    windows = {days: draw(st.lists(values, max_size=min(6, reached)))
               for days in draw(st.lists(st.sampled_from(fits), unique=True, max_size=3))}
    lines = ["section,at,day_one,rows,m1_x_n,m1_x_mean,m1_x_var",
             f"all,{length},2026-03-01,{max(reached, 10)},10,2.5,4.0"]
    lines += [f"reach,{day},,{units},,," for day, units in new.items()]
    reported = {}
    for days, part in windows.items():
        n, mean, var = reported[days] = _reported(part)
        units = min(reached, n + draw(st.integers(0, 3)))
        cells = ["NULL" if v is None else repr(v) for v in (mean, var)]
        lines.append(f"window,{days},,{units},{n},{cells[0]},{cells[1]}")
    order = draw(st.permutations(range(2, len(lines))))
    lines = lines[:2] + [lines[i] for i in order]
    damage = draw(st.sampled_from(["none", "none", "cell", "cut"]))
    if damage == "cell":
        row = draw(st.integers(1, len(lines) - 1))
        cells = lines[row].split(",")
        cells[draw(st.integers(0, 6))] = draw(st.sampled_from(DAMAGE))
        lines[row] = ",".join(cells)
    text = "\n".join(lines)
    if damage == "cut":
        text = text[: draw(st.integers(0, len(text)))]
    return text, length, new, reported, damage == "none"


@FUZZ
@given(sectioned_results())
def test_a_sectioned_result_reads_right_or_is_refused_in_one_line(drawn):
    text, length, new, reported, intact = drawn
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            summary = read_warehouse_result(text, [ColumnMap("mean", "x")])
        except HistoryError as error:
            message = str(error)
            assert "\n" not in message and len(message) < 600, message
            infinite = any(v is not None and math.isinf(v) for _, _, v in reported.values())
            assert not intact or infinite, message
            return
    assume(intact)
    running, reach = 0, []
    for day in range(1, length + 1):
        running += new.get(day, 0)
        reach.append(running)
    assert summary.reach.units == tuple(reach)
    assert [window.days for window in summary.windows] == sorted(reported)
    for window in summary.windows:
        n, mean, var = reported[window.days]
        metric = window.get("x")
        if n < 2 or not var:
            assert metric is None and "x" in window.problems
            continue
        assert metric.n == n and math.isclose(metric.mean, mean, rel_tol=1e-12)
        assert math.isclose(metric.sd, math.sqrt(var), rel_tol=1e-9), (metric.sd, var)


fetched = st.one_of(st.none(), st.booleans(), st.integers(-10**20, 10**20), st.floats(),
                    st.decimals(), st.dates(), st.text(max_size=12),
                    st.sampled_from(["all", "reach", "window", "2026-03-01"]))


@FUZZ
@given(st.lists(st.lists(fetched, min_size=5, max_size=8), max_size=5))
def test_fetched_rows_of_any_values_are_read_or_refused_in_one_line(records):
    names = ["section", "at", "day_one", "rows", "m1_x_n", "m1_x_mean", "m1_x_var"]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            read_warehouse_rows(names, records, [ColumnMap("mean", "x")])
        except HistoryError as error:
            assert "\n" not in str(error) and len(str(error)) < 600
