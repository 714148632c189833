"""What the PDF report says about incomplete plans, margins, α and power at the duration, read
back with pypdf 7.1 through ``fourfold export``, as a user makes it.

Hand calculations beside each check: a relative margin of +10 % on a baseline of 0.018 is
0.0018 in the metric's unit; an absolute margin of 0.02 s on 1.84 s is +1.09 %; Bonferroni over
two treatment arms (set here; the sample plan uses Dunnett's) tests each comparison at
0.05 / 2 = 0.025. The powers at the plan's duration
are checked against statsmodels in tests/plan/test_plan_duration_power.py.
"""

from __future__ import annotations

import re

import pytest
from pypdf import PdfReader
from PySide6.QtGui import QImage

from fourfold import cli
from fourfold.export.pdf.flow import Flow
from fourfold.export.report import Table
from fourfold.plan import dumps, load, sample_path

pytestmark = pytest.mark.qt


def _pages(path) -> list[str]:
    return [re.sub(r"-\s+", "-", " ".join(page.extract_text().split()))
            for page in PdfReader(path).pages]


def _bonferroni(tmp_path):
    """The sample plan with Bonferroni's correction (α 0.05 / 2 arms = 0.025), as a file."""
    plan = load(sample_path())
    plan.settings.correction = "bonferroni"
    path = tmp_path / "bonferroni.json"
    path.write_text(dumps(plan), encoding="utf-8")
    return path


def _export(tmp_path, plan_path, *extra) -> list[str]:
    out = tmp_path / "plan.pdf"
    assert cli.main(["export", str(plan_path), "-o", str(out), *extra]) == 0
    return _pages(out)


def test_the_report_speaks_of_margins_sides_and_power_at_the_duration(qapp, tmp_path):
    pages = _export(tmp_path, _bonferroni(tmp_path))
    text = " ".join(pages)
    assert "7 metric rows (1 primary, 3 secondaries, 3 guardrails)" in pages[0]
    assert "+10 % (+0.0018 contacts)" in text and "+0.02 s (+1.09 %)" in text
    assert "0.025 (two-sided)" in text and "0.025 (one-sided)" in text
    assert "Power at duration" in text
    assert "Checkout conversion +5 % (+0.155 pp) — 0.025 (two-sided) 0.80 0.8743" in text
    assert "Revenue per visitor +4 % (+0.094 $) — 0.025 (two-sided) 0.80 0.6399" in text
    assert "primary rows for 2 arms × 1 primary metric, other rows for 2 arms" in pages[0]


def test_a_fixed_runtime_report_gives_a_guardrails_tightest_margin(qapp, tmp_path):
    plan = load(sample_path())
    plan.settings.runtime_days = 14.0
    plan.settings.correction = "bonferroni"
    path = tmp_path / "runtime.json"
    path.write_text(dumps(plan), encoding="utf-8")
    text = " ".join(_export(tmp_path, path))
    # the page-load guardrail rules out +0.00705 s (0.38 %) in 14 days (the engine's
    # detectable_margin, checked against the closed form in tests/engine/test_margin.py)
    assert "Page load time (s) 0 s (0 %) +0.007048 s (+0.383 %) 0.025 (one-sided)" in text


def test_an_incomplete_plan_exported_anyway_reads_incomplete(qapp, tmp_path, capsys):
    text = dumps(load(sample_path())).replace('"baseline": 0.031', '"baseline": 1.5')
    path = tmp_path / "broken.json"
    path.write_text(text, encoding="utf-8")
    pages = _export(tmp_path, path, "--allow-incomplete")
    assert capsys.readouterr().err.startswith("fourfold: warning: the plan is incomplete")
    first = pages[0]
    assert first.startswith("SAMPLE-SIZE PLAN — INCOMPLETE")
    assert "DURATION incomplete 1 row cannot be computed" in first
    assert ("Incomplete plan: it has no duration until every primary and guardrail row can be "
            "computed. Not computed: row 1 (Checkout conversion): baseline must be between 0 "
            "and 1 (exclusive) for a proportion.") in first
    assert "35 days" not in " ".join(pages)
    for page in pages[1:]:
        assert "Incomplete sample-size plan" in page


def _rows_per_page(rows: int, fit: int) -> list[int]:
    """Lay out a table of ``rows`` rows on pages that hold its header and ``fit`` rows."""
    device = QImage(600, 800, QImage.Format.Format_RGB32)
    table = Table(header=("#", "Metric"), rows=tuple((str(i), f"row {i}") for i in range(rows)),
                  align=("r", "l"))
    probe = Flow(device, width=500, top_first=0, top=0, bottom=10_000)
    probe.table(Table(header=table.header, rows=table.rows[:1], align=table.align))
    header_and_row = probe.y
    probe.table(Table(header=table.header, rows=table.rows[:1], align=table.align),
                header=False)
    row = probe.y - header_and_row
    flow = Flow(device, width=500, top_first=0, top=0,
                bottom=header_and_row + row * (fit - 1) + row / 2)
    flow.table(table)
    return [len(ops) - 1 for ops in flow.pages]  # each page: one header, then its rows


def test_no_table_row_is_left_alone_on_a_page(qapp):
    assert _rows_per_page(5, 5) == [5]
    assert _rows_per_page(6, 5) == [4, 2]  # not [5, 1]: the last row keeps one company
    assert _rows_per_page(11, 5) == [5, 4, 2]


def test_the_comparison_gives_a_guardrails_margin_not_its_assumed_effect(tmp_path, capsys):
    """With a 14-day runtime the support-contacts guardrail rules out +8.61 % (the engine's
    detectable_margin; before, the comparison showed its assumed effect, "0 %")."""
    plan = load(sample_path())
    plan.settings.runtime_days = 14.0
    plan.settings.correction = "bonferroni"
    path = tmp_path / "runtime.json"
    path.write_text(dumps(plan), encoding="utf-8")
    assert cli.main(["compare", str(path)]) == 0
    lines = capsys.readouterr().out.splitlines()
    at = next(i for i, line in enumerate(lines) if line.startswith("Support contacts"))
    assert lines[at + 2].split()[:4] == ["Detectable", "effect", "margin", "+8.61"]


def test_a_report_with_two_looks_on_one_day_says_so(qapp, tmp_path):
    # the sample at 12 looks: its 7-day guardrails look on days 1, 2, 2, 3, 3, … (12 equal
    # shares of 7 days, rounded up to whole days; counted by hand)
    plan = load(sample_path())
    plan.settings.looks = 12
    path = tmp_path / "twelve.json"
    path.write_text(dumps(plan), encoding="utf-8")
    text = " ".join(_export(tmp_path, path))
    assert ("Two looks or more on one day (Page load time (s), Page load time, p95): each is "
            "taken when its share of the units is in, part-way through that day.") in text
