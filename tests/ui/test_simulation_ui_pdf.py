"""Stored simulation checks in the window's table and in the PDF report.

Reference: the stored check itself (fourfold.simulation.check_metric, tested against
statsmodels 0.15.0 and published tables in tests/simulation); pypdf reads the PDF back. The
plan is the invented Quillmoss demo.
"""

from __future__ import annotations

from pypdf import PdfReader

from fourfold.export.pdf import write_pdf
from fourfold.plan import load, sample_path
from fourfold.plan.commands import SetField, SetFields
from fourfold.simulation import check_plan
from fourfold.ui.columns import column_index
from fourfold.ui.simulation_cells import KEY


def test_the_pdf_lists_checked_rows_with_seed_and_replicates(tmp_path):
    plan = load(sample_path())
    outcome = check_plan(plan, rows=[0, 5], reps=300, seed=4)
    for row, check in outcome.checks:
        plan.metrics[row].simulation = check
    path = tmp_path / "plan.pdf"
    write_pdf(plan, path)
    text = " ".join(" ".join(page.extract_text().split()) for page in PdfReader(path).pages)
    assert "Checked by simulation" in text
    assert text.count("300, seed 4") == 2
    first = plan.metrics[0].simulation
    assert f"{100 * first['power']:.1f} %" in text


def test_a_plan_without_checks_has_no_simulation_section(tmp_path):
    path = tmp_path / "plan.pdf"
    write_pdf(load(sample_path()), path)
    text = " ".join(" ".join(page.extract_text().split()) for page in PdfReader(path).pages)
    assert "Checked by simulation" not in text


def test_the_table_shows_the_check_beside_the_power(make_window):
    window = make_window()
    plan = window.document.plan
    outcome = check_plan(plan, rows=[2], reps=300, seed=1)
    window.document.apply(SetFields(outcome.edits(), text="Check by simulation"))
    window.document.recompute_now()
    cell = window.model.index(2, column_index(KEY))
    check = window.document.plan.metrics[2].simulation
    assert window.model.data(cell).startswith(f"{100 * check['power']:.1f} %")
    assert "300 replicates, seed 1" in window.model.data(cell, 3)  # Qt.ToolTipRole
    window.document.apply(SetField(2, "baseline", 0.12))
    window.document.recompute_now()
    assert window.model.data(cell).endswith("(stale)")
    window.document.undo()
    window.document.undo()
    window.document.recompute_now()
    assert window.model.data(cell) == ""
