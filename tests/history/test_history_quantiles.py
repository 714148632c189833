"""Quantiles from a history file: the quantile against numpy 2.4's ``percentile`` (linear), the
density at it against a Gaussian kernel estimate of the whole column in memory (Silverman
1986, eq. 3.31, the rule written out here) and against the true density from scipy 1.17's
``scipy.stats.lognorm`` on generated data; the command line's ``--quantile``.
"""

import json

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from fourfold.cli import main
from fourfold.history import ColumnMap, HistoryError, read_history, warehouse_sql
from fourfold.plan import Metric, Plan, Settings, compute
from fourfold.plan.kinds import unit_sd


def _load_times(rows, seed=5):
    rng = np.random.default_rng(seed)
    load = np.round(rng.lognormal(np.log(1.7), 0.36, rows), 4)
    load[rng.random(rows) < 0.02] = np.nan
    return pd.DataFrame({"visitor": np.arange(rows), "load_s": load})


def _in_memory(x, level):
    """Silverman's rule and the kernel estimate at numpy's linear percentile, by hand."""
    q = np.percentile(x, 100 * level)
    low, high = np.percentile(x, [25, 75])
    h = 0.9 * min(x.std(ddof=1), (high - low) / 1.34) * x.size ** -0.2
    return q, np.exp(-0.5 * ((q - x) / h) ** 2).sum() / (x.size * h * np.sqrt(2 * np.pi))


@pytest.mark.parametrize("level", [0.05, 0.5, 0.95, 0.99])
def test_quantile_and_density_match_the_column_in_memory(tmp_path, level):
    frame = _load_times(20_000)
    path = tmp_path / "load.csv"
    frame.to_csv(path, index=False)
    result = read_history(path, [ColumnMap("quantile", "load_s", level=level)], chunk_rows=3_000)
    metric = result.metrics[0]
    x = frame["load_s"].dropna().to_numpy()
    q, density = _in_memory(x, level)
    assert metric.n == x.size and metric.missing == len(frame) - x.size
    assert metric.mean == pytest.approx(q, rel=1e-12)
    assert metric.parts["density"] == pytest.approx(density, rel=1e-9)
    assert metric.parts["exact"]
    fields = metric.plan_fields()
    assert fields == {"kind": "quantile", "baseline": metric.mean, "sd": None,
                      "quantile_level": level, "density": metric.parts["density"]}
    row = Metric(name="Load", role="guardrail", effect=0.0, relative=False, alternative="less",
                 margin=0.02, **fields)
    assert unit_sd(row) == pytest.approx(metric.sd, rel=1e-12)
    assert compute(Plan(Settings(), [row])).rows[0].reason == ""


def test_density_is_close_to_the_true_density(tmp_path):
    frame = _load_times(400_000, seed=6)
    x = frame["load_s"].dropna()
    path = tmp_path / "load.csv"
    frame.to_csv(path, index=False)
    metric = read_history(path, [ColumnMap("quantile", "load_s", level=0.95)]).metrics[0]
    truth = stats.lognorm(s=0.36, scale=1.7)
    assert metric.mean == pytest.approx(truth.ppf(0.95), rel=0.01)
    assert metric.parts["density"] == pytest.approx(truth.pdf(metric.mean), rel=0.03)
    assert x.size == metric.n


def test_a_long_file_estimates_the_quantile_from_a_sample(tmp_path):
    frame = _load_times(30_000, seed=7)
    path = tmp_path / "load.csv"
    frame.to_csv(path, index=False)
    metric = read_history(path, [ColumnMap("quantile", "load_s", level=0.5)],
                          tail_capacity=1_000).metrics[0]
    x = frame["load_s"].dropna().to_numpy()
    assert not metric.parts["exact"] and "estimated from a sample" in metric.describe()
    assert metric.mean == pytest.approx(np.median(x), rel=0.01)


def test_mapping_rules_and_the_warehouse(tmp_path):
    with pytest.raises(HistoryError, match="a level goes with kind 'quantile'"):
        ColumnMap("quantile", "load_s")
    with pytest.raises(HistoryError, match="must be between 0 and 1"):
        ColumnMap("quantile", "load_s", level=95)
    with pytest.raises(HistoryError, match="not to a quantile"):
        ColumnMap("quantile", "load_s", level=0.95, cap=99.0)
    with pytest.raises(HistoryError, match="import a per-unit file instead"):
        warehouse_sql([ColumnMap("quantile", "load_s", level=0.95)], "visits")
    flat = pd.DataFrame({"load_s": [1.0] * 50 + [2.0]})
    flat.to_csv(tmp_path / "flat.csv", index=False)
    metric = read_history(tmp_path / "flat.csv",
                          [ColumnMap("quantile", "load_s", level=0.5)]).metrics[0]
    assert np.isfinite(metric.parts["density"])  # IQR 0: the sd sets the bandwidth


def test_command_line_quantile(tmp_path, capsys):
    frame = _load_times(2_000)
    path = tmp_path / "load.csv"
    frame.to_csv(path, index=False)
    assert main(["history", str(path), "--quantile", "load_s:0.95", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)["load_s p95"]
    assert out["plan_kind"] == "quantile" and out["quantile_level"] == 0.95
    assert out["density"] > 0 and out["exact"] is True
    assert main(["history", str(path), "--quantile", "load_s:p95"]) == 2
    assert "the level must be a number such as 0.95" in capsys.readouterr().err
