"""From history to plan: the JSON that ``fourfold history DATA --unit COL --time COL … --json``
writes — from a file, and from a warehouse query's result — is what the plan's traffic files
read (``read_reach``, ``history_windows``), and a plan with that reach curve and those windows
gets the duration they give.

Reference figures: pandas 3.x ``nunique`` of units by first day (the reach curve); units per
arm n = ⌈2σ²(1 − ρ²)(z₀.₉₇₅ + z₀.₈)²/δ²⌉ (Lehr 1992, Statistics in Medicine 11:1099, with
CUPED's (1 − ρ²) of Deng, Xu, Kohavi & Walker 2013; z from scipy.special.ndtri), and the first
day whose share of the curve holds both arms, by hand. The sample plan's scenario: its curve
scaled by the plan's daily visitors over pandas' distinct visitors per day of the sample history.
"""

import importlib.util
import json
import math
from pathlib import Path

import pandas as pd
import pytest
from scipy.special import ndtri

from fourfold import cli
from fourfold.plan import Metric, Plan, Settings, compute, effective, load
from fourfold.plan.traffic_files import history_windows, read_reach

Z2 = float(ndtri(0.975) + ndtri(0.8)) ** 2
OPTIONS = ["--mean", "spend", "--pre", "spend:pre_spend", "--proportion", "bought",
           "--ratio", "clicks:sessions", "--count", "contacts"]
UNITS = ["--unit", "visitor", "--time", "time"]
SHARE = 0.5


def _json_file(capsys, tmp_path, name: str, arguments: list[str]):
    """Run ``fourfold history ARGUMENTS`` and keep its stdout in a file, as ``> name`` would."""
    assert cli.main(["history", *arguments]) == 0
    path = tmp_path / name
    path.write_text(capsys.readouterr().out, encoding="utf-8")
    return path


def _days_by_hand(reach, sd: float, effect: float, rho: float = 0.0) -> float:
    """Both arms' units (CUPED's variance × (1 − ρ²), Deng et al. 2013) over the share of the
    curve: the first day that holds them."""
    total = 2 * math.ceil(2 * sd**2 * (1 - rho**2) * Z2 / effect**2)
    return float(next(day for day, units in reach if SHARE * units >= total))


def _plan(reach, *rows: Metric) -> Plan:
    return Plan(Settings(traffic="reach", reach=reach, share=SHARE, arms=1, whole_weeks=False),
                list(rows))


def _spend(effect: float, **fields) -> Metric:
    return Metric(name="Spend", role="primary", kind="mean", baseline=1.0, sd=1.0,
                  effect=effect, relative=False, **fields)


def test_the_cli_json_gives_the_plan_its_reach_curve(visits_csv, visits, capsys, tmp_path):
    path = _json_file(capsys, tmp_path, "history.json", [str(visits_csv), *UNITS, *OPTIONS,
                                                         "--json"])
    reach = read_reach(path)
    first = visits.assign(day=visits["time"].str[:10]).groupby("visitor")["day"].min()
    by_day = first.value_counts().sort_index().cumsum()
    assert reach == tuple((day, float(units)) for day, units in
                          enumerate(by_day.tolist(), start=1))
    result = compute(_plan(reach, _spend(0.5)))
    assert result.duration_days == _days_by_hand(reach, 1.0, 0.5)
    assert result.duration_days < 30  # inside the curve: no extrapolation


def test_rows_follow_the_windows_of_the_cli_json_to_a_settled_duration(visits_csv, capsys,
                                                                        tmp_path):
    path = _json_file(capsys, tmp_path, "history.json", [str(visits_csv), *UNITS, *OPTIONS,
                                                         "--json"])
    data = json.loads(path.read_text(encoding="utf-8"))
    windows = history_windows(data, "spend")
    assert [w["days"] for w in windows] == [7, 14, 21, 28, 30]
    for window, written in zip(windows, data["spend"]["windows"], strict=True):
        assert (window["baseline"], window["sd"], window["rho"]) == (
            written["mean"], written["sd"], written["rho"])
    # A proportion's and a ratio's sd follow from their other inputs: the windows give none.
    assert all("sd" not in w for w in history_windows(data, "bought"))
    assert {"denominator", "numerator_sd", "denominator_sd", "correlation"} <= set(
        history_windows(data, "clicks:sessions")[0])
    reach = read_reach(path)
    row = _spend(windows[0]["sd"] / 2.45, windowed=True, windows=windows)
    result = compute(_plan(reach, row))
    days = result.duration_days
    assert 7 < days < 14 and result.window_days == days
    # Between the 7- and 14-day windows the figures are read linearly in days; with them the
    # plan needs the very days they were read for: the duration settled on its own window.
    share = (days - 7) / 7
    sd, rho = ((1 - share) * windows[0][key] + share * windows[1][key] for key in ("sd", "rho"))
    assert days == _days_by_hand(reach, sd, row.effect, rho)


def test_a_warehouse_result_gives_the_plan_the_same_curve_and_windows(visits, visits_csv,
                                                                     capsys, tmp_path):
    duckdb = pytest.importorskip("duckdb")  # DuckDB 2.0, test-only
    assert cli.main(["history", "--sql", "visits", "--dialect", "duckdb", *UNITS,
                     *OPTIONS]) == 0
    sql = capsys.readouterr().out
    con = duckdb.connect()
    con.register("visits_view", visits)
    con.execute("CREATE TABLE visits AS SELECT * FROM visits_view")
    result = tmp_path / "result.csv"
    con.execute(sql).df().to_csv(result, index=False)
    con.close()
    from_query = _json_file(capsys, tmp_path, "query.json",
                            [str(result), "--query-result", *UNITS, *OPTIONS, "--json"])
    from_file = _json_file(capsys, tmp_path, "file.json",
                           [str(visits_csv), *UNITS, *OPTIONS, "--json"])
    reach = read_reach(from_query)
    assert reach == read_reach(from_file)
    query_data = json.loads(from_query.read_text(encoding="utf-8"))
    file_data = json.loads(from_file.read_text(encoding="utf-8"))
    for name in ("spend", "bought", "clicks:sessions", "contacts"):
        a, b = history_windows(query_data, name), history_windows(file_data, name)
        assert [w["days"] for w in a] == [w["days"] for w in b]
        for wa, wb in zip(a, b, strict=True):
            assert wa == pytest.approx(wb, rel=1e-9)
    windows = history_windows(query_data, "spend")
    row = _spend(windows[0]["sd"] / 2.45, windowed=True, windows=windows)
    same = _spend(row.effect, windowed=True, windows=history_windows(file_data, "spend"))
    assert compute(_plan(reach, row)).duration_days == compute(_plan(reach, same)).duration_days


def test_the_sample_plans_returning_visitors_are_the_sample_historys_json():
    samples = Path(__file__).resolve().parents[2] / "samples"
    spec = importlib.util.spec_from_file_location("make_sample_traffic",
                                                  samples / "make_sample_traffic.py")
    make = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(make)
    # The shipped JSON is what the command line prints for the sample history today.
    shipped = samples / "quillmoss-history.json"
    data = json.loads(make.history_json())
    assert json.loads(shipped.read_text(encoding="utf-8")) == data
    plan = load(samples / "quillmoss-checkout.json")
    shown = effective(plan, make.SCENARIO)
    # Scaled to the plan's daily visitors: pandas' distinct visitors per calendar day.
    visits = pd.read_csv(samples / "quillmoss-history.csv", usecols=["visitor", "time"])
    per_day = visits.groupby(visits["time"].str[:10])["visitor"].nunique().mean()
    factor = round(plan.settings.daily_units / per_day, 2)
    assert shown.settings.reach == tuple((day, float(round(units * factor)))
                                         for day, units in read_reach(shipped))
    assert f"× {factor:g}" in shown.settings.reach_source
    for metric in shown.metrics:
        name = make.ROWS.get(metric.id)
        assert metric.windowed == (name is not None)
        if name is not None:
            assert metric.windows == history_windows(data, name)
    assert plan.settings.traffic == "constant" and not any(m.windows for m in plan.metrics)
