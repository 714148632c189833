"""Bad history files give a HistoryError naming the column (and line), never a crash.

What counts as bad (a non-number in a numeric column, a constant column, a zero denominator)
is common practice, no source.
"""

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fourfold.errors import FourfoldError
from fourfold.history import ColumnMap, HistoryError, read_history


def _write(tmp_path, text, name="h.csv", mode="w"):
    path = tmp_path / name
    if mode == "wb":
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return path


def _error(path, mapping):
    with pytest.raises(HistoryError) as caught:
        read_history(path, mapping)
    assert isinstance(caught.value, FourfoldError)
    return str(caught.value)


def test_non_numeric_cell_names_column_and_line(tmp_path):
    path = _write(tmp_path, "spend,other\n1.5,a\n2.0,b\nlots,c\n3,d\n")
    message = _error(path, [ColumnMap("mean", "spend")])
    assert "'spend'" in message and "line 4" in message and "'lots'" in message


def test_non_numeric_cell_in_a_later_chunk_has_the_right_line(tmp_path):
    rows = "".join(f"{i}\n" for i in range(50))
    path = _write(tmp_path, "spend\n" + rows + "oops\n")
    with pytest.raises(HistoryError, match="line 52"):
        read_history(path, [ColumnMap("mean", "spend")], chunk_rows=7)


def test_empty_column(tmp_path):
    path = _write(tmp_path, "spend,x\n,1\n,2\n,3\n")
    assert "no values" in _error(path, [ColumnMap("mean", "spend")])


def test_column_with_one_value_everywhere(tmp_path):
    path = _write(tmp_path, "spend,bought\n4,1\n4,1\n4,1\n")
    assert "'spend'" in _error(path, [ColumnMap("mean", "spend")])
    assert "same value" in _error(path, [ColumnMap("proportion", "bought")])


def test_constant_pre_period_column(tmp_path):
    path = _write(tmp_path, "spend,pre\n1,0\n2,0\n5,0\n")
    assert "'pre'" in _error(path, [ColumnMap("mean", "spend", pre="pre")])


def test_denominator_summing_to_zero(tmp_path):
    path = _write(tmp_path, "items,orders\n0,0\n0,0\n0,0\n")
    message = _error(path, [ColumnMap("ratio", "items", denominator="orders")])
    assert "'orders'" in message and "zero" in message


def test_proportion_with_other_values(tmp_path):
    path = _write(tmp_path, "bought\n0\n1\n2\n")
    message = _error(path, [ColumnMap("proportion", "bought")])
    assert "'bought'" in message and "line 4" in message


def test_negative_or_fractional_count(tmp_path):
    path = _write(tmp_path, "contacts\n0\n1\n-1\n")
    assert "line 4" in _error(path, [ColumnMap("count", "contacts")])
    path = _write(tmp_path, "contacts\n0\n1.5\n1\n")
    assert "line 3" in _error(path, [ColumnMap("count", "contacts")])


def test_binary_file(tmp_path):
    path = _write(tmp_path, b"\x89PNG\r\n\x1a\n\x00\x00\x00", name="h.png", mode="wb")
    assert "not a CSV" in _error(path, [ColumnMap("mean", "spend")])


def test_not_utf8(tmp_path):
    path = _write(tmp_path, "spend\n1\n\xe9t\xe9\n".encode("latin-1"), mode="wb")
    assert "UTF-8" in _error(path, [ColumnMap("mean", "spend")])


def test_json_instead_of_csv(tmp_path):
    path = _write(tmp_path, '{"spend": [1, 2, 3]}\n', name="h.json")
    assert "no column 'spend'" in _error(path, [ColumnMap("mean", "spend")])


def test_truncated_mid_line(tmp_path):
    path = _write(tmp_path, "spend,pre,other\n1,2,3\n4,5,6\n7,8")
    assert "truncated" in _error(path, [ColumnMap("mean", "spend")])


def test_unclosed_quote(tmp_path):
    path = _write(tmp_path, 'spend,note\n1,"open\n2,x\n')
    _error(path, [ColumnMap("mean", "spend")])


def test_missing_file_and_missing_column(tmp_path):
    assert "no such file" in _error(tmp_path / "none.csv", [ColumnMap("mean", "spend")])
    path = _write(tmp_path, "a,b\n1,2\n")
    message = _error(path, [ColumnMap("mean", "spend")])
    assert "'spend'" in message and "'a', 'b'" in message


def test_empty_file_and_no_mapping(tmp_path):
    assert "empty" in _error(_write(tmp_path, ""), [ColumnMap("mean", "spend")])
    assert "map at least one column" in _error(_write(tmp_path, "a\n1\n2\n"), [])


def test_cap_that_leaves_no_spread(tmp_path):
    path = _write(tmp_path, "spend\n" + "0\n" * 97 + "5\n9\n12\n")
    message = _error(path, [ColumnMap("mean", "spend", cap=95.0)])
    assert "'spend'" in message and "cap" in message


@pytest.mark.parametrize("kwargs, words", [
    (dict(kind="median", column="x"), "kind"),
    (dict(kind="ratio", column="x"), "denominator"),
    (dict(kind="mean", column="x", denominator="y"), "denominator"),
    (dict(kind="ratio", column="x", denominator="y", pre="z"), "pre-period"),
    (dict(kind="proportion", column="x", cap=99.0), "capped"),
    (dict(kind="mean", column="x", cap=100.0), "between 50 and 100"),
    (dict(kind="mean", column="x", pre="x"), "own pre-period"),
])
def test_impossible_mappings(kwargs, words):
    with pytest.raises(HistoryError, match=words):
        ColumnMap(**kwargs)


def test_the_same_metric_twice(tmp_path):
    path = _write(tmp_path, "a\n1\n2\n")
    assert "more than one" in _error(path, [ColumnMap("mean", "a"), ColumnMap("count", "a")])


def test_header_names_are_taken_as_written(tmp_path):
    path = _write(tmp_path, "id, spend\nu1, 2\nu2, 3\n")
    assert "' spend'" in _error(path, [ColumnMap("mean", "spend")])
    assert read_history(path, [ColumnMap("mean", " spend")])[" spend"].mean == 2.5


def test_a_parquet_name_on_something_else(tmp_path):
    pytest.importorskip("pyarrow")
    path = _write(tmp_path, "spend\n1\n2\n", name="h.parquet")
    assert "Parquet" in _error(path, [ColumnMap("mean", "spend")])


CELLS = ["", "1", "0", "2.5", "-3", "x", "true", "NA", '"', "1e400", " 7", "\x00", "é"]


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(body=st.lists(st.lists(st.sampled_from(CELLS), max_size=4), max_size=12),
       tail=st.booleans())
def test_any_small_file_gives_numbers_or_a_history_error(tmp_path, body, tail):
    # Common practice, no source: a reader must never crash on what users feed it.
    text = "a,b,c\n" + "\n".join(",".join(row) for row in body) + ("\n" if tail else "")
    path = tmp_path / "fuzz.csv"
    path.write_text(text, encoding="utf-8")
    mapping = [ColumnMap("mean", "a", pre="b"), ColumnMap("proportion", "b"),
               ColumnMap("count", "c", cap=90.0), ColumnMap("ratio", "a", denominator="c")]
    for spec in mapping:
        try:
            result = read_history(path, [spec], chunk_rows=3)
        except HistoryError:
            continue
        metric = result.metrics[0]
        assert metric.n >= 2 and metric.sd > 0
