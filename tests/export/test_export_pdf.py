"""PDF report: read back with pypdf 7.1 (an independent PDF reader) for text and page sizes.

Page sizes: ISO 216 A4 is 210 × 297 mm = 595.3 × 841.9 pt; US Letter is 8.5 × 11 in =
612 × 792 pt (1 pt = 1/72 in; common practice, no source needed beyond the standards' sizes).
"""

from __future__ import annotations

import dataclasses
import datetime
import re

import pytest
from pypdf import PdfReader

import fourfold
from fourfold.export.files import ExportError
from fourfold.export.pdf import write_pdf
from fourfold.plan import load, sample_path
from fourfold.plan.evaluation import compute

pytestmark = pytest.mark.qt


def _words(text: str) -> str:
    """Whitespace as single spaces; a line broken after a hyphen joined again."""
    return re.sub(r"-\s+", "-", " ".join(text.split()))


def _pages(path) -> list[str]:
    return [_words(page.extract_text()) for page in PdfReader(path).pages]


@pytest.fixture(scope="module")
def sample_pdf(qapp, tmp_path_factory):
    """The sample plan's report (A4) and its text per page, made once for this module."""
    path = tmp_path_factory.mktemp("pdf") / "plan.pdf"
    write_pdf(load(sample_path()), path, today=datetime.date(2026, 3, 14))
    return path, _pages(path)


def test_report_text_has_title_metrics_duration_and_cautions(sample_pdf):
    plan = load(sample_path())
    result = compute(plan)
    _, pages = sample_pdf
    text = " ".join(pages)
    assert _words(plan.settings.title) in text
    assert "14 March 2026" in text
    for metric in plan.metrics:
        assert _words(metric.name) in text, metric.name
    assert f"{result.duration_days:.0f} days" in pages[0]
    assert result.binding_name in pages[0]
    for number, page in enumerate(pages, 1):
        assert _words(fourfold.CAUTION) in page, number
        assert f"page {number} of {len(pages)}" in page
    for method in ("Fleiss, J. L., Levin, B. & Paik", "Deng, A., Xu, Y., Kohavi",
                   "Dunnett, C. W. (1955)", "Deng, A., Knoblich, U. & Lu",
                   "Serfling, R. J. (1980)"):
        assert method in text, method


def test_report_reads_the_new_kinds_guardrails_and_the_split(qapp, tmp_path, sample_pdf):
    _, pages = sample_pdf
    text = " ".join(pages)
    assert "Ratio and quantile rows" in text and "delta method" in text
    assert "log-normal through the p95 and the p50 = 1.74 s" in text
    assert "quantile (p95), asymptotic" in text
    assert "must not get worse (higher) by more than 0.05 s; lower is better" in text
    assert "must not get worse (higher) by more than 10 % of the baseline" in text
    assert "Dunnett's many-to-one correction" in text
    plan = load(sample_path())
    plan.settings = dataclasses.replace(plan.settings, arms=3, allocation="sqrt-k")
    path = tmp_path / "sqrt-k.pdf"
    write_pdf(plan, path)
    first = _pages(path)[0]
    assert "1 : 0.577 : 0.577 : 0.577 (√k rule)" in first
    assert "What the √k split saves" in first and "units fewer than an equal split" in first


def test_a4_and_letter_page_sizes(sample_pdf, tmp_path):
    small = load(sample_path())
    small.metrics = small.metrics[2:3]
    letter = write_pdf(small, tmp_path / "letter.pdf", page="letter")
    a4_box = PdfReader(sample_pdf[0]).pages[0].mediabox
    letter_box = PdfReader(letter).pages[0].mediabox
    assert float(a4_box.width) == pytest.approx(595.3, abs=0.6)
    assert float(a4_box.height) == pytest.approx(841.9, abs=0.6)
    assert float(letter_box.width) == pytest.approx(612, abs=0.6)
    assert float(letter_box.height) == pytest.approx(792, abs=0.6)


def test_two_hundred_rows_spread_over_more_pages_without_losing_one(sample_pdf, tmp_path):
    plan = load(sample_path())
    template = plan.metrics[2]
    plan.metrics = [dataclasses.replace(template, name=f"Row{i:03d} metric", notes="")
                    for i in range(200)]
    plan.metrics[7] = dataclasses.replace(
        plan.metrics[7], name="Row007 " + "a very long metric name that has to wrap " * 4)
    path = write_pdf(plan, tmp_path / "long.pdf")
    pages = _pages(path)
    assert len(pages) > len(sample_pdf[1]) + 3
    text = " ".join(pages)
    for i in range(200):
        assert f"Row{i:03d}" in text, i
    header_pages = [p for p in pages if "Units per treatment arm" in p]
    assert len(header_pages) >= 3, "the results header repeats on every page of the table"


def test_unknown_page_and_failed_write_leave_the_old_file(qapp, tmp_path, monkeypatch):
    target = tmp_path / "plan.pdf"
    target.write_bytes(b"previous report")
    with pytest.raises(ExportError, match="letter"):
        write_pdf(load(sample_path()), target, page="a3")

    def broken(*_):
        raise RuntimeError("layout failed")

    monkeypatch.setattr("fourfold.export.pdf._content", broken)
    with pytest.raises(RuntimeError):
        write_pdf(load(sample_path()), target)
    assert target.read_bytes() == b"previous report"
    assert [p.name for p in tmp_path.iterdir()] == ["plan.pdf"]


def test_primary_metric_figures_are_vector_drawings(sample_pdf):
    """The trade-off figures are painted as vectors (no raster image on their page), so they
    stay sharp at any zoom; their page carries far more drawing than a text-only page."""
    path, pages = sample_pdf
    plan = load(sample_path())
    reader = PdfReader(path)
    text_only = min(len(page.get_contents().get_data())
                    for page, text in zip(reader.pages, pages, strict=True)
                    if "Trade-offs" not in text)
    for metric in (m for m in plan.metrics if m.role == "primary"):
        number = next(i for i, text in enumerate(pages) if f"Trade-offs: {metric.name}" in text)
        page = reader.pages[number]
        assert not page.images
        drawing = len(page.get_contents().get_data())
        assert drawing > 2 * text_only
