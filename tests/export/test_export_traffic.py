"""The traffic model out of the program: ``fourfold export`` to CSV and PDF and
``fourfold compare`` on the sample's returning-visitors scenario (a reach curve, a ramp-up and
rows that follow their history windows; on per-visit figures, a duration past the curve), a
plain plan's files as before, rows that follow their history windows. CSV read back with
pandas and checked against the plan layer's own evaluation (fourfold.plan.traffic, tested by
hand in tests/plan); PDF text read back with pypdf. No outside source."""

from __future__ import annotations

import re
import unicodedata

import numpy as np
import pandas as pd
import pytest

from fourfold import cli
from fourfold.plan import (
    Metric,
    Plan,
    Settings,
    compute,
    effective,
    load,
    sample_path,
    save,
    traffic,
)
from fourfold.plan.windows import figures

RETURNING = "Returning visitors, ramp-up to all traffic"


def _run(capsys, *argv) -> tuple[int, str, str]:
    code = cli.main([*map(str, argv)])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _per_visit(tmp_path):
    """The sample with its returning visitors on the rows' per-visit figures (they do not
    follow their windows): a duration past the reach curve's 28 days."""
    plan = load(sample_path())
    scenario = next(s for s in plan.scenarios if s.name == RETURNING)
    for fields in scenario.rows.values():
        fields.pop("windowed")
    save(plan, tmp_path / "per-visit.json")
    return tmp_path / "per-visit.json"


def _settings(path) -> dict:
    frame = pd.read_csv(path, keep_default_na=False, dtype=str)
    return dict(zip(frame["key"], frame["value"], strict=True))


def test_the_csv_export_of_a_reach_curve_writes_the_day_by_day_traffic(capsys, tmp_path):
    code, out, _ = _run(capsys, "export", _per_visit(tmp_path), "-o", tmp_path / "plan.csv",
                        "--scenario", RETURNING)
    assert code == 0 and "plan-traffic.csv" in out
    shown = effective(load(_per_visit(tmp_path)), RETURNING)
    result = compute(shown)
    settings = _settings(tmp_path / "plan-settings.csv")
    assert settings["traffic"] == "reach" and settings["reach_days"] == "28"
    assert settings["ramp"] == "days 1–2 at 5 %, days 3–4 at 25 %, then 100 %"
    assert settings["duration_extrapolated"] == "true"
    error = float(traffic.model(shown.settings).fit.error(result.duration_days))
    assert float(settings["duration_stated_error_frac"]) == error
    days = pd.read_csv(tmp_path / "plan-traffic.csv")
    assert list(days["day"]) == list(range(1, int(result.duration_days) + 1))
    np.testing.assert_array_equal(days["analysed_units"],
                                  traffic.units_after(shown.settings, days["day"]))
    assert list(days["share_frac"][:5]) == [0.05, 0.05, 0.25, 0.25, 1.0]
    assert not days["extrapolated"][27] and days["extrapolated"][28]
    assert list(days["eligible_units"][:28]) == [units for _, units in shown.settings.reach]
    rows = pd.read_csv(tmp_path / "plan.csv")
    assert list(rows["days"]) == [row.days for row in result.rows]


def test_the_samples_returning_visitors_are_written_over_their_own_window(capsys, tmp_path):
    code, _, _ = _run(capsys, "export", sample_path(), "-o", tmp_path / "plan.csv",
                      "--scenario", RETURNING)
    assert code == 0
    shown = effective(load(sample_path()), RETURNING)
    result = compute(shown)
    settings = _settings(tmp_path / "plan-settings.csv")
    assert settings["duration_extrapolated"] == "false"
    assert float(settings["window_days"]) == result.window_days == result.duration_days
    rows = pd.read_csv(tmp_path / "plan.csv", keep_default_na=False)
    following = [metric.windowed for metric in shown.metrics]
    assert following == [True] * 5 + [False] * 2  # page load is per visit
    assert list(rows["window_days"]) == [f"{result.window_days}"] * 5 + ["", ""]
    conversion = figures(shown.metrics[0], result.window_days)[0]["baseline"]
    assert rows["baseline"][0] == pytest.approx(conversion, rel=1e-12)


def test_a_plain_plan_has_no_traffic_file_and_no_traffic_settings(capsys, tmp_path):
    plan = load(sample_path())
    plan.scenarios = []
    save(plan, tmp_path / "plain.json")
    code, out, _ = _run(capsys, "export", tmp_path / "plain.json", "-o", tmp_path / "p.csv")
    assert code == 0 and "traffic" not in out
    assert not (tmp_path / "p-traffic.csv").exists()
    assert "traffic" not in _settings(tmp_path / "p-settings.csv")


def test_compare_sets_the_reach_curve_beside_constant_traffic(capsys, tmp_path):
    code, out, _ = _run(capsys, "compare", _per_visit(tmp_path), "-o", tmp_path / "c.csv")
    assert code == 0
    table = pd.read_csv(tmp_path / "c.csv", keep_default_na=False)
    returning = table[table["scenario"] == RETURNING].iloc[0]
    everything = table[table["scenario"] == "All eligible traffic"].iloc[0]
    assert float(returning["duration_days"]) > float(everything["duration_days"])
    assert "beyond the reach curve's 28 days" in returning["notes"]
    code, out, _ = _run(capsys, "compare", _per_visit(tmp_path))
    traffic_line = next(line for line in out.splitlines() if line.startswith("Traffic"))
    assert traffic_line.split()[1] == "Constant"
    assert "Reach curve, ramp-up (extrapolated ±" in traffic_line


def _pdf_text(path) -> str:
    from pypdf import PdfReader

    text = " ".join(page.extract_text() for page in PdfReader(path).pages)
    return re.sub(r"-\s+", "-", " ".join(unicodedata.normalize("NFKC", text).split()))


@pytest.mark.qt
def test_the_report_names_the_model_shows_the_curve_and_flags_the_duration(capsys, tmp_path):
    code, _, _ = _run(capsys, "export", _per_visit(tmp_path), "-o", tmp_path / "r.pdf",
                      "--scenario", RETURNING)
    assert code == 0
    text = _pdf_text(tmp_path / "r.pdf")
    assert "Traffic model Reach curve (quillmoss-history.json" in text
    assert "Ramp-up Days 1–2 at 5 %, days 3–4 at 25 %, then 100 %" in text
    assert "Traffic over the test" in text and "curve ends, day 28" in text
    assert "beyond the reach curve (extrapolated)" in text
    assert "Reach beyond the curve" in text and "Ehrenberg" in text


def test_rows_that_follow_their_windows_are_written_with_the_figures_used(capsys, tmp_path):
    row = Metric(name="Spend", role="primary", kind="mean", baseline=10.0, sd=1.0, effect=0.5,
                 relative=False, windowed=True,
                 windows=({"days": 7, "baseline": 9.0, "sd": 5.0},
                          {"days": 14, "baseline": 9.5, "sd": 7.0},
                          {"days": 21, "baseline": 10.0, "sd": 8.0}))
    save(Plan(Settings(daily_units=400), [row]), tmp_path / "w.json")
    code, out, _ = _run(capsys, "export", tmp_path / "w.json", "-o", tmp_path / "w.csv")
    assert code == 0 and "w-traffic.csv" in out
    rows = pd.read_csv(tmp_path / "w.csv")
    assert (rows["window_days"][0], rows["sd"][0], rows["baseline"][0]) == (21, 8.0, 10.0)
    assert _settings(tmp_path / "w-settings.csv")["window_days"] == "21.0"


@pytest.mark.qt
def test_the_report_says_which_rows_show_their_windows_figures(capsys, tmp_path):
    code, _, _ = _run(capsys, "export", sample_path(), "-o", tmp_path / "w.pdf", "--scenario",
                      RETURNING)
    assert code == 0
    text = _pdf_text(tmp_path / "w.pdf")
    assert ("As entered (rows that follow their history windows: their figures over each "
            "unit's first 21 days)") in text
    assert ("Checkout conversion, Revenue per visitor, Add-to-cart rate, Items per order, "
            "Support contacts per visitor: figures by window yes (base no)") in text
    assert "Metrics over the test's own window" in text and "fixed point" in text
