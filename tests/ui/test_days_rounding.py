"""One rule for days everywhere: whole days, rounded up (a test runs whole days).

A row needing 29.03 days of traffic shows 30 in the table, the summary, the plot's design-point
label, the PDF and the CSV (before: "needs 29 d" on the plot beside "30" in the table). The
arithmetic is the evaluation's own (days = total units ÷ daily units in the test); the rule is
common practice, no source.
"""

from __future__ import annotations

import csv

import pypdf
import pytest

from fourfold.export.csv import write_csv
from fourfold.export.pdf import write_pdf
from fourfold.plan import Metric, Plan, Settings, compute
from fourfold.ui.columns import column_index

pytestmark = pytest.mark.qt


def _plan() -> Plan:
    row = Metric(name="Basket value", role="primary", kind="mean", baseline=40.0, sd=10.0,
                 effect=1.0, relative=False)
    plan = Plan(Settings(title="Days", whole_weeks=False, daily_units=1000.0), [row])
    total = compute(plan).rows[0].units_total  # 3,140 units in all
    plan.settings.daily_units = total / 29.03
    return plan


def test_29_03_days_read_30_everywhere(make_window, qtbot, tmp_path):
    plan = _plan()
    assert compute(plan).rows[0].days == 30.0
    window = make_window(plan)
    window.table.setCurrentIndex(window.model.index(0, 0))
    qtbot.waitUntil(lambda: window.plots.tradeoffs is not None, timeout=3000)
    assert window.model.data(window.model.index(0, column_index("days"))) == "30"
    assert window.summary.texts()[0] == "Duration 30 days (4.3 weeks)"
    runtime = window.plots.grid.plots["runtime"]
    legend = [label.text for _, label in runtime.legend.items]
    assert any(text.endswith("needs 30 d") for text in legend), legend
    pdf = write_pdf(plan, tmp_path / "plan.pdf")
    text = " ".join(" ".join(page.extract_text().split()) for page in pypdf.PdfReader(pdf).pages)
    assert "30 days" in text and "29 d" not in text
    path, *_ = write_csv(plan, tmp_path / "plan.csv")
    with open(path, encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.reader(handle))
    assert rows[1][rows[0].index("days")] == "30.0"
