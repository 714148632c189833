"""Reach curve and per-unit windows from a file of visits (``read_history(unit=, time=)``).

Reference figures: pandas 3.1 on the same generated visits — ``Series.nunique`` of the
visitors up to each day for the reach curve; ``groupby(...).sum(min_count=1)``, ``.max()``,
``.mean()``, ``Series.std`` and ``numpy.corrcoef`` over each unit's first d days for the
windows; ``numpy.percentile`` (linear, Hyndman & Fan 1996 definition 7) for a cap.
"""

import json

import numpy as np
import pandas as pd
import pytest
from history_frames import VISIT_MAPPING as MAPPING

from fourfold import cli
from fourfold.history import ColumnMap, HistoryError, read_history
from fourfold.history.exposure import window_days


def _day_index(frame):
    day = pd.to_datetime(frame["time"]).dt.normalize()
    return (day - day.min()).dt.days + 1


def _pandas_reach(frame):
    day = _day_index(frame)
    return [frame.loc[day <= d, "visitor"].nunique() for d in range(1, day.max() + 1)]


def _pandas_window(frame, d):
    """Per-unit values over each unit's first d days, for units whose window is complete."""
    day = _day_index(frame)
    last = day.max()
    first = day.groupby(frame["visitor"]).transform("min")
    complete = first + d - 1 <= last
    inside = frame[complete & (day - first < d)]
    units = frame.loc[complete, "visitor"].nunique()
    by = inside.groupby("visitor")
    both = inside.dropna(subset=["clicks", "sessions"]).groupby("visitor")[["clicks",
                                                                             "sessions"]].sum()
    return units, {
        "spend": by["spend"].sum(min_count=1),
        "pre_spend": by["pre_spend"].mean(),
        "bought": by["bought"].max(),
        "contacts": by["contacts"].sum(),
        "clicks": both["clicks"],
        "sessions": both["sessions"],
    }


def _check_windows(summary, frame):
    days = int(_day_index(frame).max())
    assert [w.days for w in summary.windows] == list(window_days(days))
    for window in summary.windows:
        units, ref = _pandas_window(frame, window.days)
        assert window.units == units
        spend = window["spend"]
        values = ref["spend"].dropna()
        assert (spend.n, spend.missing) == (len(values), units - len(values))
        assert spend.mean == pytest.approx(values.mean(), rel=1e-12)
        assert spend.sd == pytest.approx(values.std(), rel=1e-12)
        assert spend.rho == pytest.approx(
            np.corrcoef(ref["pre_spend"][values.index], values)[0, 1], rel=1e-10)
        assert window["bought"].mean == pytest.approx(ref["bought"].mean(), rel=1e-12)
        assert window["contacts"].sd == pytest.approx(ref["contacts"].std(), rel=1e-12)
        ratio = window["clicks:sessions"]
        assert ratio.mean == pytest.approx(ref["clicks"].sum() / ref["sessions"].sum(),
                                           rel=1e-12)
        assert ratio.n == len(ref["clicks"])


def test_reach_curve_equals_pandas_nunique_by_day(visits_csv, visits):
    summary = read_history(visits_csv, MAPPING, unit="visitor", time="time", chunk_rows=500)
    assert summary.reach.exact
    assert list(summary.reach.units) == _pandas_reach(visits)
    assert summary.reach.start == "2026-03-01"
    assert summary.rows == len(visits)


def test_window_moments_equal_pandas(visits_csv, visits):
    summary = read_history(visits_csv, MAPPING, unit="visitor", time="time", chunk_rows=500)
    _check_windows(summary, visits)
    # The whole-history figures stay per row, as without a unit column.
    plain = read_history(visits_csv, MAPPING, chunk_rows=500)
    assert summary.metrics == plain.metrics


def test_rows_out_of_time_order_take_a_second_pass_with_the_same_result(tmp_path, visits):
    shuffled = visits.sample(frac=1.0, random_state=11)
    path = tmp_path / "shuffled.csv"
    shuffled.to_csv(path, index=False)
    seen = []
    summary = read_history(path, MAPPING, unit="visitor", time="time", chunk_rows=400,
                           progress=lambda done, rows: seen.append(rows))
    assert seen[-1] == 2 * len(visits)  # both passes read every row
    assert list(summary.reach.units) == _pandas_reach(visits)
    _check_windows(summary, visits)


def test_a_cap_applies_to_the_per_unit_window_values(visits_csv, visits):
    summary = read_history(visits_csv, [ColumnMap("mean", "spend", cap=95.0)], unit="visitor",
                           time="time")
    window = summary.windows[1]
    _, ref = _pandas_window(visits, window.days)
    values = ref["spend"].dropna().to_numpy()
    threshold = np.percentile(values, 95.0)
    spend = window["spend"]
    assert spend.cap.threshold == pytest.approx(threshold, rel=1e-12)
    assert spend.cap.capped == int((values > threshold).sum())
    assert spend.sd == pytest.approx(np.minimum(values, threshold).std(ddof=1), rel=1e-12)
    assert spend.cap.sd_uncapped == pytest.approx(values.std(ddof=1), rel=1e-12)


def test_parquet_timestamps_and_numeric_ids(tmp_path, visits):
    pytest.importorskip("pyarrow")
    frame = visits.assign(
        visitor=visits["visitor"].str.slice(10).astype(int),
        time=pd.to_datetime(visits["time"]),
    )
    path = tmp_path / "visits.parquet"
    frame.to_parquet(path)
    from_parquet = read_history(path, MAPPING, unit="visitor", time="time", chunk_rows=700)
    assert list(from_parquet.reach.units) == _pandas_reach(visits)
    _check_windows(from_parquet, visits)


def test_day_numbers_count_as_given(tmp_path):
    frame = pd.DataFrame({"u": ["a", "b", "a", "c", "b", "d"], "day": [3, 3, 4, 6, 6, 6],
                          "x": [1.0, 2.0, 3.0, 4.0, 5.0, 6.0]})
    path = tmp_path / "days.csv"
    frame.to_csv(path, index=False)
    summary = read_history(path, [ColumnMap("mean", "x")], unit="u", time="day")
    assert summary.reach.units == (2, 2, 2, 4)  # days 3, 4, 5, 6 (day 5 has no visits)
    assert summary.reach.start == "day 3"
    whole = summary.windows[-1]
    assert (whole.days, whole.units) == (4, 2)  # a and b were there on day 1
    assert whole["x"].mean == pytest.approx((4.0 + 7.0) / 2, rel=1e-12)


def test_past_the_memory_budget_reach_is_estimated_and_windows_sampled(tmp_path):
    rng = np.random.default_rng(5)
    units = 60_000
    frame = pd.DataFrame({
        "u": [f"synthetic-{i}" for i in rng.integers(0, units, 150_000)],
        "day": np.sort(rng.integers(1, 15, 150_000)),
        "x": rng.gamma(2.0, 1.0, 150_000),
    })
    path = tmp_path / "many.csv"
    frame.to_csv(path, index=False)
    exact = read_history(path, [ColumnMap("mean", "x")], unit="u", time="day")
    small = read_history(path, [ColumnMap("mean", "x")], unit="u", time="day",
                         unit_memory=200_000)
    truth = np.array(_pandas_reach(frame.rename(columns={"u": "visitor"}).assign(
        time=pd.Timestamp("2026-01-01") + pd.to_timedelta(frame["day"], unit="D"))))
    assert list(exact.reach.units) == truth.tolist()
    assert not small.reach.exact and small.reach.relative_error == pytest.approx(0.0081, 0.01)
    # Within four standard errors at every day (Flajolet et al. 2007, 1.04/√m with m = 2¹⁴).
    error = np.abs(np.array(small.reach.units) / truth - 1)
    assert error.max() < 4 * small.reach.relative_error
    assert np.all(np.diff(small.reach.units) >= 0)
    window = small.windows[0]
    assert window.share < 1
    assert window["x"].n < exact.windows[0]["x"].n
    # The sample is by unit: its mean agrees with all units' within its sampling error.
    spread = exact.windows[0]["x"].sd / np.sqrt(window["x"].n)
    assert abs(window["x"].mean - exact.windows[0]["x"].mean) < 5 * spread


@pytest.mark.parametrize("rows, words", [
    (["u,t,x", "a,2026-03-01,1", ",2026-03-02,2"], "column 'u' is empty on line 3"),
    (["u,t,x", "a,2026-03-01,1", "b,yesterday,2"], "'yesterday' on line 3"),
    (["u,t,x", "a,2026-03-01,1", "b,2026-02-30,2"], "'2026-02-30' on line 3"),
    (["u,t,x", "a,2026-03-01,1", "b,,2"], "column 't' is empty on line 3"),
    (["u,t,x", "a,1,1", "b,1.5,2"], "not a whole day number"),
    (["u,t,x", "a,2026-03-01,1", "b,1999-03-01,2"], "spans more than 3,660 days"),
])
def test_bad_unit_or_time_cells_name_the_line(tmp_path, rows, words):
    path = tmp_path / "bad.csv"
    path.write_text("\n".join(rows) + "\n")
    with pytest.raises(HistoryError, match=words):
        read_history(path, [ColumnMap("mean", "x")], unit="u", time="t")


def test_dates_and_day_numbers_do_not_mix(tmp_path):
    path = tmp_path / "mixed.csv"
    path.write_text("u,t,x\na,2026-03-01,1\nb,2026-03-02,2\nc,5,3\n")
    with pytest.raises(HistoryError, match="mixes dates and day numbers"):
        read_history(path, [ColumnMap("mean", "x")], unit="u", time="t", chunk_rows=2)


def test_unit_and_time_go_together_and_must_exist(visits_csv):
    with pytest.raises(HistoryError, match="both a unit column and a time column"):
        read_history(visits_csv, MAPPING, unit="visitor")
    with pytest.raises(HistoryError, match="no column 'when'"):
        read_history(visits_csv, MAPPING, unit="visitor", time="when")
    with pytest.raises(HistoryError, match="both the unit and the time"):
        read_history(visits_csv, MAPPING, unit="time", time="time")


def test_json_carries_the_reach_curve_and_windows(visits_csv, visits, capsys):
    assert cli.main(["history", str(visits_csv), "--unit", "visitor", "--time", "time",
                     "--mean", "spend", "--pre", "spend:pre_spend", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    reach = _pandas_reach(visits)
    assert out["reach"] == [{"day": d, "units": n} for d, n in enumerate(reach, start=1)]
    assert out["traffic"]["reach_exact"] is True
    windows = out["spend"]["windows"]
    assert [w["days"] for w in windows] == [7, 14, 21, 28, 30]
    units, ref = _pandas_window(visits, 14)
    assert windows[1]["units"] == units
    assert windows[1]["mean"] == pytest.approx(ref["spend"].mean(), rel=1e-12)
    assert out["spend"]["mean"] == pytest.approx(visits["spend"].mean(), rel=1e-12)


def test_readable_output_names_the_reach_and_windows(visits_csv, capsys):
    assert cli.main(["history", str(visits_csv), "--unit", "visitor", "--time", "time",
                     "--proportion", "bought"]) == 0
    out = capsys.readouterr().out
    assert "Reach from 2026-03-01 (exact)" in out
    assert "first d days" in out


def test_the_bundled_sample_has_visitors_who_come_back():
    from pathlib import Path

    sample = Path(__file__).resolve().parents[2] / "samples" / "quillmoss-history.csv"
    summary = read_history(sample, [ColumnMap("mean", "revenue", pre="pre_revenue")],
                           unit="visitor", time="time")
    reach = summary.reach
    assert reach.days == 28 and reach.start == "2026-03-02"
    # Returning visitors: far fewer distinct visitors than visits, and a concave curve.
    assert reach.units[-1] < 0.6 * summary.rows
    assert reach.units[6] / 7 > (reach.units[-1] - reach.units[20]) / 7
    assert summary.window("revenue", 28).mean > summary.window("revenue", 7).mean


def test_ids_and_dates_read_the_same_without_pyarrow(monkeypatch):
    from fourfold.history.days import DayReader
    from fourfold.history.ids import hash_ids

    ids = pd.Series(["synthetic-1", "synthétique-2", "17", "synthetic-1"], dtype=object)
    times = pd.Series(["2026-03-01 08:00:00", "2026-03-02", "2026-03-02T23:59:59",
                       "2026-03-04"], dtype=object)
    with_arrow = hash_ids(ids, "u", str), DayReader("t")(times, str)
    monkeypatch.setitem(__import__("sys").modules, "pyarrow", None)
    without = hash_ids(ids, "u", str), DayReader("t")(times, str)
    assert with_arrow[0].tolist() == without[0].tolist()
    assert with_arrow[1].tolist() == without[1].tolist() == [20513, 20514, 20514, 20516]
    assert hash_ids(pd.Series([17]), "u", str)[0] == without[0][2]


def test_a_metric_named_like_the_reach_is_refused_with_units(tmp_path):
    from fourfold.history.warehouse import warehouse_sql

    path = tmp_path / "h.csv"
    path.write_text("u,t,reach\na,2026-03-01,1\nb,2026-03-02,2\n")
    for read in (lambda: read_history(path, [ColumnMap("mean", "reach")], unit="u", time="t"),
                 lambda: warehouse_sql([ColumnMap("mean", "reach")], "t", unit="u", time="t")):
        with pytest.raises(HistoryError, match="cannot go with a unit and a time column"):
            read()
    assert read_history(path, [ColumnMap("mean", "reach")])["reach"].n == 2


def test_a_quantile_alone_has_reach_but_no_windows(visits_csv, visits):
    summary = read_history(visits_csv, [ColumnMap("quantile", "spend", level=0.9)],
                           unit="visitor", time="time")
    assert list(summary.reach.units) == _pandas_reach(visits)
    assert all(w.get("spend p90") is None and "quantile" in w.problems["spend p90"]
               for w in summary.windows)
