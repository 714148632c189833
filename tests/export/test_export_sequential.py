"""Interim looks in the exports: the CSV settings file and the PDF carry the looks table and
the method references; a fixed design carries neither.

Reference values: Lan–DeMets O'Brien–Fleming-type boundaries for K = 5 equally spaced looks at
two-sided α = 0.05 are 4.877, 3.357, 2.680, 2.290, 2.031 (widely tabled, e.g. Jennison &
Turnbull 2000, ch. 7 — from memory). Five unadjusted looks at 0.05 give a false-positive rate
of 0.142 (Armitage, McPherson & Rowe 1969 — from memory).
"""

from __future__ import annotations

import csv

import pytest
from pypdf import PdfReader

from fourfold.export import report
from fourfold.export.csv import settings_path, write_csv
from fourfold.plan.evaluation import compute
from fourfold.plan.model import Metric, Plan, Settings

LD_OBF_5 = [4.877, 3.357, 2.680, 2.290, 2.031]


def _plan(**settings) -> Plan:
    metric = Metric(name="Checkout conversion", role="primary", kind="proportion",
                    baseline=0.031, effect=0.05, relative=True)
    return Plan(Settings(title="Looks test", daily_units=30_000, **settings), [metric])


def _settings_file(plan: Plan, tmp_path) -> dict[str, str]:
    path = tmp_path / "plan.csv"
    write_csv(plan, path)
    with open(settings_path(path), encoding="utf-8-sig", newline="") as handle:
        return {row["key"]: row["value"] for row in csv.DictReader(handle)}


def test_csv_carries_the_boundaries_per_look(tmp_path):
    values = _settings_file(_plan(looks=5), tmp_path)
    assert values["looks_row"] == "1"
    got = [round(float(values[f"look_{k}_efficacy_z"]), 3) for k in range(1, 6)]
    assert got == LD_OBF_5
    assert values["look_5_futility_z"] == ""
    assert float(values["look_5_alpha_spent_frac"]) == pytest.approx(0.05, abs=1e-9)
    total = compute(_plan(looks=5)).rows[0].units_total
    assert float(values["look_5_units"]) == total
    assert "false-positive rate of 14 %" in " ".join(v for k, v in values.items()
                                                       if k.startswith("note_"))


def test_csv_of_a_fixed_design_has_no_look_rows(tmp_path):
    values = _settings_file(_plan(), tmp_path)
    assert not any(key.startswith("look") for key in values if key != "looks")


def test_report_table_and_references():
    plan = _plan(looks=3, futility=True, spending="pocock")
    result = compute(plan)
    name, table = report.looks_table(plan, result)
    assert name == "Checkout conversion"
    assert "Futility z" in table.header
    assert len(table.rows) == 3
    # Pocock C_P(3, 0.05) = 2.289, Jennison & Turnbull (2000) Table 2.1 — from memory.
    efficacy = table.header.index("Efficacy z")
    assert {row[efficacy] for row in table.rows} == {"2.289"}
    references = " ".join(m.reference for m in report.methods(plan))
    assert "Armitage" in references and "Pocock, S. J. (1977)" in references
    assert report.looks_table(_plan(), compute(_plan())) is None


@pytest.mark.qt
def test_pdf_has_the_looks_section_only_with_looks(tmp_path):
    from fourfold.export.pdf import write_pdf

    texts = {}
    for looks in (1, 5):
        path = tmp_path / f"plan-{looks}.pdf"
        write_pdf(_plan(looks=looks), path)
        text = " ".join(page.extract_text() for page in PdfReader(path).pages)
        texts[looks] = " ".join(text.split())
    assert "Stopping boundaries" in texts[5] and "Armitage" in texts[5]
    assert "4.877" in texts[5]
    assert "Stopping boundaries" not in texts[1] and "Armitage" not in texts[1]


@pytest.mark.qt
@pytest.mark.parametrize("whole_weeks", [True, False])
def test_pdf_methods_say_where_the_looks_fall(tmp_path, whole_weeks):
    # The looks table of a plan in whole weeks shows its looks at week ends (40, 80, 100 % of
    # the units for 3 looks in 5 weeks); the methods must say so, not "equal shares".
    from fourfold.export.pdf import write_pdf

    plan = _plan(looks=3, whole_weeks=whole_weeks)
    path = tmp_path / "plan.pdf"
    write_pdf(plan, path)
    text = " ".join(" ".join(page.extract_text() for page in PdfReader(path).pages).split())
    if whole_weeks:
        assert "3 looks, at week ends" in text and "equal shares of the maximum" not in text
    else:
        assert "3 looks, at equal shares of the maximum units" in text
