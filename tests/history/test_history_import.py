"""The streaming import against pandas 3.1 / numpy 2.4 computed on the whole table in memory.

References: pandas ``Series.mean``/``Series.std`` (ddof 1), ``numpy.corrcoef``,
``numpy.percentile`` (linear); the delta-method sd of a ratio of sums from Deng, Knoblich & Lu
(2018, KDD), recomputed here directly with numpy from the formula.
"""

import numpy as np
import pytest
from history_frames import make_frame

from fourfold.history import (
    ColumnMap,
    HistoryCancelled,
    read_history,
)
from fourfold.plan import Metric
from fourfold.plan.kinds import unit_sd

MAPPING = [
    ColumnMap("mean", "spend", pre="pre_spend"),
    ColumnMap("proportion", "bought"),
    ColumnMap("count", "contacts"),
    ColumnMap("ratio", "clicks", denominator="sessions"),
]


def _delta_sd(y, x):
    r = y.sum() / x.sum()
    var = np.var(y, ddof=1) - 2 * r * np.cov(x, y)[0, 1] + r * r * np.var(x, ddof=1)
    return np.sqrt(var) / x.mean()


def test_every_kind_matches_the_in_memory_figures(history_csv, frame):
    result = read_history(history_csv, MAPPING, chunk_rows=500)
    assert result.rows == len(frame)

    spend = result["spend"]
    present = frame["spend"].notna()
    assert spend.n == present.sum() and spend.missing == (~present).sum()
    assert spend.mean == pytest.approx(frame["spend"].mean(), rel=1e-12)
    assert spend.sd == pytest.approx(frame["spend"].std(), rel=1e-12)
    both = frame[present]
    assert spend.rho == pytest.approx(np.corrcoef(both["pre_spend"], both["spend"])[0, 1],
                                      rel=1e-10)

    bought = result["bought"]
    assert bought.mean == pytest.approx(frame["bought"].mean(), rel=1e-12)
    assert bought.plan_fields() == {"kind": "proportion", "baseline": bought.mean, "sd": None}

    contacts = result["contacts"]
    assert contacts.plan_kind == "rate"
    assert contacts.sd == pytest.approx(frame["contacts"].std(), rel=1e-12)
    assert contacts.dispersion == pytest.approx(
        frame["contacts"].var() / frame["contacts"].mean(), rel=1e-12)

    ratio = result["clicks:sessions"]
    pairs = frame.dropna(subset=["clicks", "sessions"])
    assert ratio.n == len(pairs) and ratio.missing == len(frame) - len(pairs)
    assert ratio.mean == pytest.approx(pairs["clicks"].sum() / pairs["sessions"].sum(), rel=1e-12)
    assert ratio.sd == pytest.approx(
        _delta_sd(pairs["clicks"].to_numpy(), pairs["sessions"].to_numpy().astype(float)),
        rel=1e-10)
    fields = ratio.plan_fields()
    assert fields["kind"] == "ratio" and fields["sd"] is None
    clicks, sessions = pairs["clicks"].astype(float), pairs["sessions"].astype(float)
    assert fields["denominator"] == pytest.approx(sessions.mean(), rel=1e-12)
    assert fields["numerator_sd"] == pytest.approx(clicks.std(), rel=1e-12)
    assert fields["denominator_sd"] == pytest.approx(sessions.std(), rel=1e-12)
    assert fields["correlation"] == pytest.approx(clicks.corr(sessions), rel=1e-10)
    # The ratio row built from these fields has the delta-method sd of the summary.
    assert unit_sd(Metric(name="r", **fields)) == pytest.approx(ratio.sd, rel=1e-10)


@pytest.mark.parametrize("chunk_rows", [1, 7, 10_000])
def test_results_do_not_depend_on_the_chunk_size(tmp_path, chunk_rows):
    small = make_frame(rows=240, seed=8)
    path = tmp_path / "small.csv"
    small.to_csv(path, index=False)
    reference = read_history(path, MAPPING, chunk_rows=240)
    got = read_history(path, MAPPING, chunk_rows=chunk_rows)
    for a, b in zip(reference.metrics, got.metrics, strict=True):
        assert (a.n, a.missing) == (b.n, b.missing)
        assert b.mean == pytest.approx(a.mean, rel=1e-12)
        assert b.sd == pytest.approx(a.sd, rel=1e-12)
        if a.rho is not None:
            assert b.rho == pytest.approx(a.rho, rel=1e-12)


def test_cap_matches_numpy_winsorising(history_csv, frame):
    spec = ColumnMap("mean", "spend", pre="pre_spend", cap=99.0)
    result = read_history(history_csv, [spec], chunk_rows=700)
    spend = result["spend"]
    values = frame["spend"].dropna().to_numpy()
    threshold = np.percentile(values, 99.0)
    capped = np.minimum(values, threshold)
    assert spend.cap.exact
    assert spend.cap.threshold == pytest.approx(threshold, rel=1e-12)
    assert spend.cap.capped == (values > threshold).sum()
    assert spend.sd == pytest.approx(np.std(capped, ddof=1), rel=1e-12)
    assert spend.cap.sd_uncapped == pytest.approx(np.std(values, ddof=1), rel=1e-12)
    assert spend.cap.variance_ratio(spend.sd) < 1.0
    pre_threshold = np.percentile(frame["pre_spend"], 99.0)
    assert spend.cap.pre_threshold == pytest.approx(pre_threshold, rel=1e-12)
    pairs = frame[frame["spend"].notna()]
    assert spend.rho == pytest.approx(np.corrcoef(np.minimum(pairs["pre_spend"], pre_threshold),
                                                  np.minimum(pairs["spend"], threshold))[0, 1],
                                      rel=1e-10)


def test_capped_ratio_reports_the_variance_change(history_csv):
    spec = ColumnMap("ratio", "clicks", denominator="sessions", cap=99.5)
    ratio = read_history(history_csv, [spec])["clicks:sessions"]
    uncapped = read_history(history_csv, [ColumnMap("ratio", "clicks",
                                                    denominator="sessions")])["clicks:sessions"]
    assert ratio.cap.sd_uncapped == pytest.approx(uncapped.sd, rel=1e-12)
    assert ratio.cap.mean_uncapped == pytest.approx(uncapped.mean, rel=1e-12)
    assert ratio.mean <= uncapped.mean


def test_parquet_gives_the_same_numbers(tmp_path, frame, history_csv):
    pytest.importorskip("pyarrow")
    path = tmp_path / "history.parquet"
    frame.to_parquet(path, index=False)
    from_csv = read_history(history_csv, MAPPING)
    from_parquet = read_history(path, MAPPING, chunk_rows=333)
    for a, b in zip(from_csv.metrics, from_parquet.metrics, strict=True):
        assert (a.n, a.missing) == (b.n, b.missing)
        assert b.mean == pytest.approx(a.mean, rel=1e-12)
        assert b.sd == pytest.approx(a.sd, rel=1e-12)


def test_progress_is_reported_and_reaches_the_end(history_csv, frame):
    calls = []
    read_history(history_csv, [ColumnMap("mean", "spend", cap=99.0)], chunk_rows=400,
                 progress=lambda done, rows: calls.append((done, rows)))
    fractions = [done for done, _ in calls]
    assert fractions == sorted(fractions)
    assert fractions[-1] == pytest.approx(1.0)
    assert calls[-1][1] == 2 * len(frame)  # two passes with a cap


def test_cancel_stops_the_import(history_csv):
    seen = []

    def cancel():
        return len(seen) >= 2

    with pytest.raises(HistoryCancelled):
        read_history(history_csv, MAPPING, chunk_rows=100,
                     progress=lambda done, rows: seen.append(rows), cancel=cancel)
    assert len(seen) == 2


def test_the_bundled_sample_reads_with_every_metric_of_the_demo_plan():
    from pathlib import Path

    sample = Path(__file__).resolve().parents[2] / "samples" / "quillmoss-history.csv"
    result = read_history(sample, [
        ColumnMap("proportion", "converted"),
        ColumnMap("mean", "revenue", pre="pre_revenue", cap=99.9),
        ColumnMap("proportion", "added_to_cart"),
        ColumnMap("ratio", "items", denominator="orders"),
        ColumnMap("count", "support_contacts"),
        ColumnMap("mean", "page_load_s", pre="pre_page_load_s"),
    ])
    assert result.rows == 19_814
    assert result["page_load_s"].missing > 0
    # Invented scenario: the generator aims near the demo plan's 3.1 % and 11.4 % (loose).
    assert 0.02 < result["converted"].mean < 0.045
    assert 0.08 < result["added_to_cart"].mean < 0.15


def test_a_column_capped_in_one_metric_stays_whole_in_another(history_csv, frame):
    mapping = [ColumnMap("mean", "clicks", cap=90.0),
               ColumnMap("ratio", "clicks", denominator="sessions"),
               ColumnMap("count", "sessions", cap=99.0)]
    result = read_history(history_csv, mapping)
    assert result["clicks"].cap.threshold == pytest.approx(
        np.percentile(frame["clicks"].dropna(), 90.0), rel=1e-12)
    assert result["sessions"].cap.threshold == pytest.approx(
        np.percentile(frame["sessions"], 99.0), rel=1e-12)
    whole = read_history(history_csv, mapping[1:2])["clicks:sessions"]
    assert result["clicks:sessions"].mean == whole.mean
    assert result["clicks:sessions"].sd == whole.sd
