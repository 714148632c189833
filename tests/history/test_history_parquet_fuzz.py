"""Hostile Parquet files and ``--quantile``, generated and named. The only outcomes allowed:
the right answer, or a one-line :class:`HistoryError` (``fourfold history`` prints it with exit
status 2, no traceback).

Right answers: a mean column's count, missing count, mean and sample sd against exact
``fractions`` arithmetic and mpmath 1.3 (square root at 40 digits), a null or a NaN cell
counting as missing (as pandas 3.1 reads a CSV's ``NaN`` text); a quantile against numpy 2.4's
``percentile`` with ``method="linear"`` (Hyndman & Fan 1996, definition 7), its density against
the Gaussian kernel estimate with Silverman's rule written out by hand (Silverman 1986,
eq. 3.31: h = 0.9·min(s, IQR/1.34)·n^(−1/5), the IQR falling back to s when it is 0) and
summed with mpmath 1.3 at 40 digits. Parquet files are written with pyarrow (an optional extra,
so these tests skip without it).
"""

from __future__ import annotations

import math
import subprocess
import sys
import warnings

import mpmath
import numpy as np
import pytest
from history_frames import exact_moments
from hypothesis import HealthCheck, assume, example, given, settings
from hypothesis import strategies as st

from fourfold.history import ColumnMap, read_history
from fourfold.history.errors import HistoryError
from fourfold.history.sources import summarise

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

FUZZ = settings(deadline=5000, suppress_health_check=[HealthCheck.too_slow,
                                                      HealthCheck.function_scoped_fixture])


def _history(*argv, cwd) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "fourfold", "history", *argv],
                          capture_output=True, text=True, cwd=cwd, timeout=120)


def _refused(result: subprocess.CompletedProcess, *words: str) -> str:
    """The one line of a refusal, with exit status 2 and no traceback."""
    assert result.returncode == 2, (result.returncode, result.stderr)
    assert "Traceback" not in result.stderr and result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("fourfold: error: "), result.stderr
    for word in words:
        assert word in lines[0], lines[0]
    return lines[0]


def _one_line(error: HistoryError) -> None:
    message = str(error)
    assert message and "\n" not in message and len(message) < 600, message


# --- Parquet, generated -----------------------------------------------------------------------

cells = st.one_of(st.none(), st.just(math.nan), st.floats(-1e6, 1e6, allow_nan=False),
                  st.integers(-10**6, 10**6).map(float),
                  st.sampled_from([0.0, 1e300, -1e300, 1e-300, 5e-324]))


def _column(xs: list[float | None], form: str):
    """The cells as an Arrow array of one of the forms a writer might choose."""
    if form == "float64":
        return pa.array(xs, pa.float64())
    if form == "float32":
        return pa.array(xs, pa.float64()).cast(pa.float32(), safe=False)
    if form == "int64":
        return pa.array([int(x) if x is not None and abs(x) < 2**53 else None for x in xs],
                        pa.int64())
    text = pa.array([None if x is None else repr(x) for x in xs], pa.string())
    return text.dictionary_encode() if form == "dictionary" else text


def _cells(array) -> list[float | None]:
    values = array.cast(pa.string()) if pa.types.is_dictionary(array.type) else array
    return [None if v is None else float(v) for v in values.to_pylist()]


def _expected(array) -> list[float | None]:
    """What the writer stored, as Python floats (None for null and NaN: missing)."""
    return [None if x is None or x != x else x for x in _cells(array)]


@st.composite
def parquet_files(draw):
    """A Parquet file of one column ``x`` in any of several types, split into row groups (some
    empty), and maybe damaged: cut, bytes flipped, or text named .parquet."""
    xs = draw(st.lists(cells, min_size=0, max_size=25))
    form = draw(st.sampled_from(["float64", "float32", "int64", "string", "dictionary"]))
    array = _column(xs, form)
    groups = draw(st.lists(st.integers(0, max(len(xs), 1)), max_size=3))
    damage = draw(st.sampled_from(["none", "none", "none", "cut", "flip", "text"]))
    return array, sorted(groups), damage, draw(st.randoms(use_true_random=False))


def _write(path, array, groups) -> None:
    table = pa.table({"id": pa.array(range(len(array))), "x": array})
    with pq.ParquetWriter(path, table.schema) as writer:
        start = 0
        for end in [*groups, len(array)]:
            writer.write_table(table.slice(start, max(end - start, 0)))
            start = max(start, end)


def _damage(path, damage: str, rng) -> None:
    data = bytearray(path.read_bytes())
    if damage == "cut":
        path.write_bytes(bytes(data[: rng.randrange(len(data))]))
    elif damage == "flip":
        for _ in range(rng.randint(1, 4)):
            data[rng.randrange(len(data))] ^= rng.randrange(1, 256)
        path.write_bytes(bytes(data))
    elif damage == "text":
        path.write_text("id,x\n1,2\n")


@FUZZ
@given(parquet_files(), st.sampled_from(["stream", "auto"]))
def test_a_parquet_file_is_read_right_or_refused_in_one_line(tmp_path_factory, drawn, engine):
    array, groups, damage, rng = drawn
    path = tmp_path_factory.mktemp("pq") / "history.parquet"
    _write(path, array, groups)
    _damage(path, damage, rng)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            summary = summarise(path, [ColumnMap("mean", "x")], engine=engine)
        except HistoryError as error:
            _one_line(error)
            present = [x for x in _expected(array) if x is not None]
            # Text cells reading "nan" are refused (not a number); in a float column NaN is
            # missing, as pandas reads the text "nan" in a CSV file.
            text = not pa.types.is_floating(array.type)
            text_nan = text and any(x is not None and x != x for x in _cells(array))
            infinite = any(math.isinf(x) for x in present)  # 1e300 as float32
            if damage == "none" and engine == "stream" and not (text_nan or infinite):
                assert len(set(present)) < 2, str(error)
            return
    assume(damage == "none")  # flipped bytes may still decode: no answer to check then
    xs = _expected(array)
    present = [x for x in xs if x is not None]
    assert not any(math.isinf(x) for x in present)
    metric = summary["x"]
    assert (metric.n, metric.missing) == (len(present), len(xs) - len(present))
    mean, sd = exact_moments(present)
    scale = max(abs(x) for x in present)
    assert math.isclose(metric.mean, mean, rel_tol=1e-9, abs_tol=max(1e-300, 1e-12 * scale))
    assert math.isclose(metric.sd, sd, rel_tol=1e-9, abs_tol=max(1e-300, 1e-12 * scale))


# --- Parquet, named files through the command line ---------------------------------------------

def test_a_column_named_twice_in_the_schema_is_refused(tmp_path):
    # The stream reader took both columns as one (n 4, missing -2); DuckDB took the first.
    table = pa.Table.from_arrays([pa.array([1.0, 2.0]), pa.array([3.0, 5.0])], names=["x", "x"])
    pq.write_table(table, tmp_path / "twice.parquet")
    for engine in ("stream", "auto"):
        _refused(_history("twice.parquet", "--mean", "x", "--engine", engine, cwd=tmp_path),
                 "twice.parquet", "names column 'x' twice (columns 1 and 2)")


def test_a_binary_value_column_is_refused_naming_it(tmp_path):
    pq.write_table(pa.table({"x": pa.array([b"1", b"\x00\xff"], pa.binary())}),
                   tmp_path / "bytes.parquet")
    _refused(_history("bytes.parquet", "--mean", "x", "--engine", "stream", cwd=tmp_path),
             "bytes.parquet", "column 'x'", "binary data")


@pytest.mark.parametrize("values", [pa.array([[1.0], [2.0]]), pa.array([{"a": 1}, {"a": 2}]),
                                    pa.array([[("k", 1)], [("k", 2)]],
                                             pa.map_(pa.string(), pa.int64()))],
                         ids=["list", "struct", "map"])
def test_a_nested_column_is_refused_naming_its_type(tmp_path, values):
    for column in ("u", "x"):
        cells = {"u": ["a", "b"], "t": [1, 2], "x": [1.0, 2.0]} | {column: values}
        pq.write_table(pa.table(cells), tmp_path / "nested.parquet")
        argv = ["--unit", "u", "--time", "t", "--mean", "x"]
        _refused(_history("nested.parquet", *argv, "--engine", "stream", cwd=tmp_path),
                 "nested.parquet", f"column {column!r} holds", str(values.type).split("<")[0])


def test_dates_beyond_what_pandas_holds_are_refused_naming_the_column(tmp_path):
    dates = pa.array([0, 2**31 - 1], pa.date32())  # day 2³¹ − 1: the year 5,881,580
    pq.write_table(pa.table({"u": ["a", "b"], "t": dates, "x": [1.0, 2.0]}),
                   tmp_path / "far.parquet")
    _refused(_history("far.parquet", "--unit", "u", "--time", "t", "--mean", "x",
                      cwd=tmp_path), "far.parquet", "column 't'", "cannot be read")


def test_binary_unit_ids_are_read_as_distinct_ids(tmp_path):
    # Ids of bytes that are not UTF-8 (0xff) raised pyarrow's ArrowInvalid from the id hash.
    rows = 60
    common = {"t": pa.array(np.arange(rows) // 3, pa.int64()),
              "x": pa.array(np.arange(rows) % 7, pa.float64())}
    pq.write_table(pa.table({"u": pa.array([bytes([i % 9, 0xFF]) for i in range(rows)],
                                           pa.binary()), **common}), tmp_path / "bytes.parquet")
    pq.write_table(pa.table({"u": pa.array(np.arange(rows) % 9), **common}),
                   tmp_path / "numbers.parquet")
    mapping = [ColumnMap("mean", "x")]
    as_bytes = read_history(tmp_path / "bytes.parquet", mapping, unit="u", time="t").to_dict()
    as_numbers = read_history(tmp_path / "numbers.parquet", mapping, unit="u", time="t").to_dict()
    assert as_bytes | {"source": ""} == as_numbers | {"source": ""}
    assert as_numbers["reach"][-1]["units"] == 9


def test_text_that_is_not_utf8_is_refused_naming_the_column(tmp_path):
    data = pa.py_buffer(b"1.0\xb0.0")
    offsets = pa.py_buffer(np.array([0, 3, 6], np.int32).tobytes())
    cells = pa.Array.from_buffers(pa.string(), 2, [None, offsets, data])
    pq.write_table(pa.table({"x": cells}), tmp_path / "latin.parquet")
    _refused(_history("latin.parquet", "--mean", "x", "--engine", "stream", cwd=tmp_path),
             "latin.parquet", "column 'x'", "UTF8")


@pytest.mark.parametrize("option", [["--mean", "x"], ["--quantile", "x:0.5"]])
def test_one_value_repeated_has_no_spread(tmp_path, option):
    # numpy's mean of three copies of 699051.1722337848 misses it by an ulp: the column got an
    # sd of 1.4e-10 (and a quantile a density of 3.9e9) instead of being refused.
    pq.write_table(pa.table({"x": [699051.1722337848] * 3}), tmp_path / "same.parquet")
    _refused(_history("same.parquet", *option, "--engine", "stream", cwd=tmp_path),
             "column 'x'", "same value")


def test_without_pyarrow_the_message_names_the_extra(tmp_path, monkeypatch):
    pq.write_table(pa.table({"x": [1.0, 2.0]}), tmp_path / "h.parquet")
    monkeypatch.setitem(sys.modules, "pyarrow", None)
    monkeypatch.setitem(sys.modules, "pyarrow.parquet", None)
    with pytest.raises(HistoryError, match=r"h\.parquet: .*pip install 'fourfold\[parquet\]'"):
        read_history(tmp_path / "h.parquet", [ColumnMap("mean", "x")])


# --- Quantiles ----------------------------------------------------------------------------------

def _reference(x: np.ndarray, level: float) -> tuple[float, float]:
    """numpy's linear percentile and the kernel density there, summed at 40 digits."""
    q = float(np.quantile(x, level, method="linear"))
    low, high = np.percentile(x, [25, 75], method="linear")
    with mpmath.workdps(40):
        values = [mpmath.mpf(v) for v in x]
        mean = mpmath.fsum(values) / x.size
        sd = mpmath.sqrt(mpmath.fsum((v - mean) ** 2 for v in values) / (x.size - 1))
        iqr = mpmath.mpf(high) - mpmath.mpf(low)
        spread = min(sd, iqr / mpmath.mpf("1.34")) if iqr > 0 else sd
        h = mpmath.mpf("0.9") * spread * mpmath.mpf(x.size) ** mpmath.mpf("-0.2")
        total = mpmath.fsum(mpmath.exp(-(mpmath.mpf(q) - v) ** 2 / (2 * h ** 2))
                            for v in values)
        density = total / (x.size * h * mpmath.sqrt(2 * mpmath.pi))
        unit_sd = mpmath.sqrt(mpmath.mpf(level) * (1 - mpmath.mpf(level))) / density
        return q, float(density), float(unit_sd)


def _fits(value: float) -> bool:
    """Well inside a double's normal range (common practice, no source)."""
    return 1e-290 < value < 1e290


moderate = st.one_of(st.floats(-1e6, 1e6, allow_nan=False), st.integers(-5, 5).map(float))
levels = st.one_of(st.floats(0.0, 1.0, exclude_min=True, exclude_max=True),
                   st.sampled_from([0.5, 0.95, 0.99, 1e-300, 1 - 2**-53, 0.01]))


@FUZZ
@given(st.lists(st.one_of(st.none(), moderate), min_size=0, max_size=40), levels,
       st.sampled_from(["csv", "parquet"]))
def test_a_quantile_is_right_or_refused_in_one_line(tmp_path_factory, xs, level, form):
    folder = tmp_path_factory.mktemp("q")
    if form == "csv":
        path = folder / "h.csv"
        path.write_text("x\n" + "".join("\n" if x is None else f"{x!r}\n" for x in xs))
    else:
        path = folder / "h.parquet"
        pq.write_table(pa.table({"x": pa.array(xs, pa.float64())}), path)
    present = np.array([x for x in xs if x is not None], dtype=float)
    spread = np.unique(present).size >= 2
    q, density, unit_sd = _reference(present, level) if spread else (0.0, 0.0, 0.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            summary = read_history(path, [ColumnMap("quantile", "x", level=level)])
        except HistoryError as error:
            _one_line(error)
            assert not (spread and _fits(density) and _fits(unit_sd)), str(error)
            return
    metric = summary.metrics[0]
    scale = float(np.max(np.abs(present)))
    assert (metric.n, metric.missing) == (present.size, len(xs) - present.size)
    assert math.isclose(metric.mean, q, rel_tol=1e-12, abs_tol=1e-12 * scale)
    assert math.isclose(metric.parts["density"], density, rel_tol=1e-6), (metric, density)
    assert metric.parts["exact"] and math.isfinite(metric.sd) and metric.sd > 0


@FUZZ
@given(st.lists(st.floats(allow_nan=False, allow_infinity=False), min_size=0, max_size=30),
       levels)
# quartiles more than a double apart: the IQR's subtraction and numpy's interpolation
# between them overflowed with a RuntimeWarning on stderr beside the one line
@example(xs=[0.0, 2.497931900280866e300, -1.797693128617486e308, -1.797693128617486e308],
         level=0.5)
@example(xs=[2.4979318903016644e300, -1.797693109882997e308], level=0.5)
def test_extreme_values_give_a_finite_quantile_row_or_one_line(tmp_path_factory, xs, level):
    path = tmp_path_factory.mktemp("qx") / "h.csv"
    path.write_text("x\n" + "".join(f"{x!r}\n" for x in xs))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            metric = read_history(path, [ColumnMap("quantile", "x", level=level)]).metrics[0]
        except HistoryError as error:
            _one_line(error)
            return
    assert metric.n == len(xs) >= 2
    assert metric.mean == pytest.approx(np.quantile(xs, level), rel=1e-9, abs=1e-300)
    assert 0 < metric.parts["density"] < math.inf and 0 < metric.sd < math.inf


@pytest.mark.parametrize("cells, words", [
    (["1e308", "-1e308", "1.7e308", "0", "5"], None),  # n·h overflowed: "density must be > 0"
    (["5e-324", "1e-323", "0"], "spread so narrowly"),   # h subnormal: the density overflows
])
def test_a_quantile_of_extreme_values_is_a_row_or_one_line(tmp_path, cells, words):
    (tmp_path / "h.csv").write_text("x\n" + "\n".join(cells) + "\n")
    result = _history("h.csv", "--quantile", "x:0.5", "--json", cwd=tmp_path)
    if words is None:
        assert result.returncode == 0, result.stderr
        x = np.array([float(c) for c in cells])
        assert f'"mean": {float(np.percentile(x, 50))!r}' in result.stdout  # numpy 2.4, linear
        assert '"density": ' in result.stdout and "Infinity" not in result.stdout
    else:
        _refused(result, "column 'x'", words)


@pytest.mark.parametrize("level", ["1e-300", "1e-17"])
def test_a_level_within_a_rounding_of_zero_gives_the_minimum(tmp_path, level):
    # 1 − level rounds to 1: the tail's percentile of 100 raised a ValueError.
    (tmp_path / "h.csv").write_text("x\n3\n1\n4\n1\n5\n9\n2\n6\n")
    result = _history("h.csv", "--quantile", f"x:{level}", "--json", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert '"mean": 1.0' in result.stdout  # numpy 2.4: percentile(x, 1e-298) is the minimum


@pytest.mark.parametrize("level", ["0", "1", "-0.5", "95", "nan", "inf", "p95", ""])
def test_a_level_outside_zero_to_one_is_refused(tmp_path, level):
    (tmp_path / "h.csv").write_text("x\n1\n2\n3\n")
    _refused(_history("h.csv", "--quantile", f"x:{level}", cwd=tmp_path), "x")


@pytest.mark.parametrize("cells, words", [
    ([], "no values"), (["", "", ""], "no values"), (["7"], "same value"),
    (["7"] * 30, "same value"), (["1", "abc"], "'abc' on line 3"),
    (["1", "inf"], "infinite"), (["1", "2", "1e999"], "beyond the largest"),
])
def test_a_quantile_column_that_cannot_size_a_test_is_refused(tmp_path, cells, words):
    (tmp_path / "h.csv").write_text("x\n" + "".join(c + "\n" for c in cells))
    _refused(_history("h.csv", "--quantile", "x:0.95", cwd=tmp_path), "'x'", words)
