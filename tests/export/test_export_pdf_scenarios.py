"""The report's scenario sections, read back with pypdf 7.1 (an independent PDF reader): the
alternatives considered with one sentence per scenario, the scenario reported, and the chart of
what moves the duration with the numbers of plan.sensitivity."""

from __future__ import annotations

import datetime
import re
import unicodedata

import pytest
from pypdf import PdfReader

from fourfold import cli
from fourfold.export.pdf import write_pdf
from fourfold.plan import compute, effective, load, sample_path
from fourfold.plan.scenarios import describe
from fourfold.plan.sensitivity import sensitivity

pytestmark = pytest.mark.qt

ARM_B = "Without arm B"


def _text(path) -> str:
    """The report's words (ligatures such as "ﬀ" undone by NFKC, whitespace single)."""
    text = " ".join(page.extract_text() for page in PdfReader(path).pages)
    return re.sub(r"-\s+", "-", " ".join(unicodedata.normalize("NFKC", text).split()))


@pytest.fixture(scope="module")
def arm_b_pdf(qapp, tmp_path_factory):
    path = tmp_path_factory.mktemp("pdf") / "arm-b.pdf"
    write_pdf(load(sample_path()), path, today=datetime.date(2026, 3, 14), scenario=ARM_B)
    return _text(path)


def test_the_report_names_the_scenario_it_documents_and_shows_its_numbers(arm_b_pdf):
    plan = load(sample_path())
    shown = compute(effective(plan, ARM_B))
    assert f"Scenario {ARM_B}: {describe(plan, ARM_B)}" in arm_b_pdf
    assert f"This report documents {ARM_B}." in arm_b_pdf
    assert f"{shown.rows[0].units_control:,.0f}" in arm_b_pdf
    assert f"{shown.duration_days:.0f} days" in arm_b_pdf


def test_alternatives_considered_compares_every_scenario_with_one_sentence_each(arm_b_pdf):
    plan = load(sample_path())
    section = arm_b_pdf[arm_b_pdf.index("Alternatives considered"):]
    for scenario in plan.scenarios:
        assert f"{scenario.name} {describe(plan, scenario.name)}" in section, scenario.name
    assert "21 days (−14 d)" in section and "35 days" in section
    assert "Units per arm" in section and "Detectable effect" in section


def test_what_moves_the_duration_draws_the_bars_of_the_reported_scenario(arm_b_pdf):
    found = sensitivity(effective(load(sample_path()), ARM_B))
    section = arm_b_pdf[arm_b_pdf.index("What moves the duration"):]
    assert f"binding: {found.binding}" in section
    for swing in found.swings:
        assert swing.label in section
    assert f"planned: {found.days:.0f} d" in section
    assert "input 20 % lower" in section and "input 20 % higher" in section


def test_a_plan_without_scenarios_has_no_alternatives_but_its_sensitivity(qapp, tmp_path):
    plan = load(sample_path())
    plan.scenarios = []
    path = tmp_path / "plain.pdf"
    write_pdf(plan, path)
    text = _text(path)
    assert "Alternatives considered" not in text and "Scenario " not in text
    assert "What moves the duration" in text


def test_export_scenario_from_the_command_line(qapp, tmp_path, capsys):
    path = tmp_path / "lift.pdf"
    assert cli.main(["export", str(sample_path()), "-o", str(path),
                     "--scenario", "Accept +7 % conversion lift"]) == 0
    assert "This report documents Accept +7 % conversion lift." in _text(path)
