"""CSV export of ratio and quantile rows, units, direction and the √k allocation.

Read back with pandas 3.1 (``read_csv``). The sd used is checked against the delta method's
formula written out here with numpy (Deng, Knoblich & Lu 2018) and against the sample
quantile's p(1 − p)/f² (Serfling 1980, §2.3) with the density from ``scipy.stats.lognorm``.
"""

from __future__ import annotations

import csv

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from fourfold.export.csv import write_csv
from fourfold.plan import Metric, Plan, Settings
from fourfold.plan.evaluation import compute


def _plan(**settings):
    rows = [
        Metric(name="Items per order", role="primary", kind="ratio", baseline=2.6,
               denominator=0.034, numerator_sd=0.61, denominator_sd=0.19, correlation=0.8,
               effect=0.04, unit="items"),
        Metric(name="Page load p95", role="guardrail", kind="quantile", baseline=3.1,
               quantile_level=0.95, second_level=0.5, second_value=1.7, effect=0.0,
               relative=False, alternative="less", margin=0.05, better="lower", unit="s"),
        Metric(name="Broken ratio", kind="ratio", baseline=2.6),
    ]
    return Plan(Settings(daily_units=42_000, **settings), rows)


def test_kind_columns_read_back(tmp_path):
    path, _ = write_csv(_plan(), tmp_path / "plan.csv")
    back = pd.read_csv(path, keep_default_na=False, na_values=[""])
    assert list(back["unit"].fillna("")) == ["items", "s", ""]
    assert list(back["better"]) == ["higher", "lower", "higher"]
    assert back["ratio_correlation"][0] == 0.8 and np.isnan(back["ratio_correlation"][1])
    assert back["quantile_level_frac"][1] == 0.95
    delta = np.sqrt(0.61**2 - 2 * 2.6 * 0.8 * 0.61 * 0.19 + 2.6**2 * 0.19**2) / 0.034
    assert back["sd_used"][0] == pytest.approx(delta, rel=1e-12)
    sigma = np.log(3.1 / 1.7) / stats.norm.ppf(0.95)
    density = stats.lognorm(s=sigma, scale=1.7).pdf(3.1)
    assert back["sd_used"][1] == pytest.approx(np.sqrt(0.95 * 0.05) / density, rel=1e-9)
    assert np.isnan(back["sd_used"][2]) and np.isnan(back["units_control"][2])
    assert "denominator" in back["reason"][2]


def test_sqrt_k_settings_and_the_equal_allocation_beside_them(tmp_path):
    plan = _plan(arms=3, allocation="sqrt-k", correction="dunnett")
    _, extra = write_csv(plan, tmp_path / "plan.csv")
    with open(extra, encoding="utf-8-sig", newline="") as handle:
        values = {key: value for key, value, _ in list(csv.reader(handle))[1:]}
    assert values["allocation"] == "sqrt-k" and values["correction"] == "dunnett"
    assert float(values["treatment_ratio"]) == pytest.approx(1 / np.sqrt(3), rel=1e-15)
    assert float(values["equal_allocation_total_units"]) > float(values["total_units"])
    assert float(values["total_units"]) == compute(plan).total_units
    _, plain = write_csv(_plan(arms=3), tmp_path / "equal.csv")
    assert "equal_allocation_total_units" not in plain.read_text(encoding="utf-8-sig")
