"""The plan as a PDF report to attach to a test proposal (Qt's PDF writer, no other library).

``write_pdf(plan, "plan.pdf", page="a4")`` lays out, in this order: the title, description and
date; the key figures (duration, total units, binding metric, arms and split) and the
evaluation's notes; the assumptions (α, power, correction, traffic, share, rounding, interim
looks); the metric rows as entered; the results, with the solved quantity of each row in bold
and the binding row highlighted; for a plan with scenarios the alternatives considered
(:mod:`fourfold.export.pdf.alternatives`); what moves the duration; interim looks when the
plan has them; variance reduction and
clustering per row; each row's notes; the trade-off figures of every primary metric; and the
published methods the rows use, with references. Every page carries ``fourfold.CAUTION`` and
"page i of n" in its footer.

The page is laid out from the writer's resolution with fonts in points, so it looks the same at
any resolution; tables continue over pages under a repeated header. Painting text needs a
``QGuiApplication``; when none exists (a headless ``fourfold export``) an offscreen application
is created once and kept for the life of the process.

References
----------
The methods section's sources are listed in :mod:`fourfold.export.report`.
"""

from __future__ import annotations

import datetime
import os
import re
from pathlib import Path

from PySide6.QtCore import QMarginsF, Qt
from PySide6.QtGui import (
    QColor,
    QFontMetricsF,
    QGuiApplication,
    QPageLayout,
    QPageSize,
    QPainter,
    QPdfWriter,
)

from fourfold import CAUTION, __version__, atomic
from fourfold.export import report
from fourfold.export.files import ExportError, replacing
from fourfold.export.pdf.flow import (
    ACCENT,
    INK,
    MUTED,
    RULE,
    WARNING,
    Flow,
    Text,
    clean,
    font,
    hline,
)

PAGES = {"a4": QPageSize.PageSizeId.A4, "letter": QPageSize.PageSizeId.Letter}
RESOLUTION = 300
MARGINS_MM = QMarginsF(18.0, 15.0, 18.0, 12.0)
_APPLICATIONS: list[QGuiApplication] = []
_STARTXREF = re.compile(rb"startxref\s+(\d+)\s+%%EOF\s*$")
_OBJECT = re.compile(rb"\d+\s+\d+\s+obj")


def application() -> QGuiApplication:
    """The running Qt application, or a new offscreen one kept for the rest of the process."""
    running = QGuiApplication.instance()
    if running is not None:
        return running
    from PySide6.QtWidgets import QApplication

    created = QApplication(["fourfold", "-platform", "offscreen"])
    _APPLICATIONS.append(created)
    return created


def write_pdf(plan, path: os.PathLike | str, page: str = "a4",
              today: datetime.date | None = None, scenario: str | None = None) -> Path:
    """Write the plan's report to ``path``.

    Parameters
    ----------
    plan : fourfold.plan.Plan
        The plan; it is evaluated here with :func:`fourfold.plan.evaluation.compute`.
    scenario : str, optional
        The scenario the report documents (default: the base); the alternatives section
        compares every scenario of ``plan``.
    path : path-like
        The PDF file; replaced only when the report is complete.
    page : {"a4", "letter"}
        Paper size (portrait).
    today : datetime.date, optional
        The date printed on the report (default: today).

    Returns
    -------
    pathlib.Path
        ``path``.

    Raises
    ------
    fourfold.export.files.ExportError
        For an unknown page size or a file that cannot be written; an existing file at
        ``path`` is then left as it was.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from fourfold.plan import load, sample_path
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "plan.pdf"
    >>> write_pdf(load(sample_path()), out).read_bytes()[:5]
    b'%PDF-'
    """
    if page not in PAGES:
        raise ExportError(f"page must be one of {', '.join(PAGES)}; got {page!r}")
    from fourfold.plan.evaluation import compute
    from fourfold.plan.scenarios import effective
    from fourfold.plan.windows import evaluated

    whole, plan = plan, effective(plan, scenario)
    result = compute(plan)
    plan = evaluated(plan, result)  # rows that follow their windows: the figures used
    application()
    path = Path(path)
    when = today or datetime.date.today()
    with replacing(path, verify=pdf_problem) as (part,):
        writer = QPdfWriter(str(part))
        writer.setPageSize(QPageSize(PAGES[page]))
        writer.setPageOrientation(QPageLayout.Orientation.Portrait)
        writer.setPageMargins(MARGINS_MM, QPageLayout.Unit.Millimeter)
        writer.setResolution(RESOLUTION)
        writer.setTitle(plan.settings.title)
        writer.setCreator(f"Fourfold {__version__}")
        painter = QPainter()
        try:
            if not painter.begin(writer):
                raise ExportError(f"cannot write {path}: the PDF writer could not open the file")
            _render(painter, writer, plan, result, when, (whole, scenario))
        finally:  # also when interrupted: a writer must not outlive its active painter
            ended = painter.end() if painter.isActive() else False
            del painter, writer
        if not ended:
            raise ExportError(f"cannot write {path}: "
                              f"{atomic.incomplete('PDF', part.parent)}")
    return path


def pdf_problem(path: Path) -> str | None:
    """What is wrong with a written PDF file, or None when it is complete.

    A complete file starts with ``%PDF-``, ends with ``%%EOF``, and the byte offset after
    its last ``startxref`` points at its cross-reference table: a file cut off by a full disk
    (or missing bytes anywhere before the table) fails one of these.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> broken = pathlib.Path(tempfile.mkdtemp()) / "cut.pdf"
    >>> _ = broken.write_bytes(b"%PDF-1.4 1 0 obj")
    >>> pdf_problem(broken)
    'the PDF came out incomplete (it does not end with %%EOF)'
    """
    size = path.stat().st_size
    with open(path, "rb") as handle:
        head = handle.read(8)
        handle.seek(max(0, size - 2048))
        tail = handle.read()
        found = _STARTXREF.search(tail)
        offset = int(found.group(1)) if found else -1
        if 0 <= offset < size:
            handle.seek(offset)
            table = handle.read(32)
        else:
            table = b""
    cut = atomic.incomplete("PDF", path.parent)
    if not head.startswith(b"%PDF-"):
        return f"{cut} (it does not start with %PDF-)"
    if not tail.rstrip().endswith(b"%%EOF"):
        return f"{cut} (it does not end with %%EOF)"
    if not (table.startswith(b"xref") or _OBJECT.match(table)):
        return f"{cut} (its cross-reference table is not where the file says)"
    return None


def _render(painter: QPainter, writer: QPdfWriter, plan, result, when: datetime.date,
            reported: tuple) -> None:
    width, height = float(writer.width()), float(writer.height())

    def pt(points: float) -> float:
        return points * writer.resolution() / 72.0

    footer_caution = Text(CAUTION, font(6.5), width * 0.8, writer, spacing=1.1)
    footer_height = footer_caution.height + pt(9)
    header_height = pt(24)
    flow = Flow(writer, width=width, top_first=0.0, top=header_height,
                bottom=height - footer_height)
    _content(flow, plan, result, when, reported)
    dated = f"{when.day} {when:%B %Y}"
    small = font(7.5)
    split = 0.58 if result.incomplete else 0.7  # the right side says "incomplete" too
    title = QFontMetricsF(small, writer).elidedText(clean(plan.settings.title),
                                                    Qt.TextElideMode.ElideRight,
                                                    width * (split - 0.02))
    running = (Text(title, small, width * split, writer),
               Text(f"{'Incomplete s' if result.incomplete else 'S'}ample-size plan · {dated}",
                    small, width * (1 - split), writer, Qt.AlignmentFlag.AlignRight))

    def decorate(p: QPainter, index: int, count: int) -> None:
        rule_y = height - footer_height + pt(3)
        hline(p, 0, width, rule_y, RULE, pt(0.5))
        footer_caution.draw(p, 0, rule_y + pt(4), MUTED)
        label = Text(f"page {index + 1} of {count}", small, width * 0.18, writer,
                     Qt.AlignmentFlag.AlignRight)
        label.draw(p, width * 0.82, rule_y + pt(4), MUTED)
        if index:
            left, right = running
            left.draw(p, 0, 0, MUTED)
            right.draw(p, width * split, 0, WARNING if result.incomplete else MUTED)
            hline(p, 0, width, max(left.height, right.height) + pt(3), RULE, pt(0.5))

    flow.paint(painter, writer.newPage, decorate)


def _content(flow: Flow, plan, result, when: datetime.date, reported: tuple) -> None:
    s = plan.settings
    whole, scenario = reported
    if result.incomplete:
        flow.paragraph("SAMPLE-SIZE PLAN — INCOMPLETE", font(8, bold=True), WARNING, after=2)
    else:
        flow.paragraph("SAMPLE-SIZE PLAN", font(8, bold=True), ACCENT, after=2)
    flow.paragraph(s.title, font(19, bold=True), INK, spacing=1.1, after=5)
    if whole.scenarios:
        from fourfold.plan.scenarios import describe

        shown = ("Base: the plan as entered" if scenario is None
                 else f"Scenario {scenario}: {describe(whole, scenario)}")
        flow.paragraph(shown, font(10, bold=True), ACCENT, spacing=1.2, after=5)
    flow.paragraph(f"Prepared {when.day} {when:%B %Y} with Fourfold {__version__} · "
                   f"{report.roles_text(plan)}", font(8), MUTED, after=8)
    flow.paragraph(s.description, font(9.5), INK, spacing=1.3, after=10)
    flow.cards(report.summary(plan, result))
    flow.space(8)
    if result.incomplete:
        flow.paragraph(report.incomplete_text(result), font(9, bold=True), WARNING,
                       spacing=1.25, after=6)
    for note in result.notes:
        flow.paragraph(f"• {note}", font(8.5), MUTED, indent=2, spacing=1.25, after=2)

    flow.heading("Assumptions")
    flow.key_values(report.assumptions(plan, result))
    _traffic(flow, plan, result)
    flow.heading("Variance reduction and clustering per row", level=2)
    flow.paragraph("The variance factor multiplies the units a row needs: (1 − ρ²) from CUPED "
                   "times the design effect of clustered units.", font(8), MUTED, spacing=1.25)
    design = report.design_table(plan, result)
    if design.rows:
        flow.table(design)
    others = len(plan.metrics) - len(design.rows)
    if others:
        rows = "row uses" if others == 1 else "rows use"
        flow.space(4)
        flow.paragraph(f"{'The other' if design.rows else 'All'} {others} {rows} neither CUPED "
                       "nor clustering (variance factor 1).", font(8), MUTED)

    flow.heading("Metric rows")
    window = ("" if result.window_days is None else
              f" (rows that follow their history windows: their figures over each unit's "
              f"first {result.window_days:g} days)")
    flow.paragraph(f"As entered{window}. Effects are treatment minus control: “%” is relative "
                   "to the baseline, “pp” percentage points. “H0 margin” is the difference "
                   "under the null hypothesis of a non-inferiority or superiority-by-margin "
                   "test.", font(8), MUTED, spacing=1.25)
    if not plan.metrics:
        flow.paragraph("The plan has no metric rows yet.", font(9), INK)
    flow.table(report.inputs_table(plan))
    _kinds(flow, plan)

    flow.heading("Results")
    flow.paragraph("Units are rounded up to whole units, days to whole days. The quantity each "
                   "row solves for is in bold; the binding row, which sets the duration, is "
                   "highlighted. Effects and margins read as entered, then the other way in "
                   "brackets. α is the level each comparison is tested at, after any "
                   "correction, one- or two-sided as the row's test. “Power at duration” is the "
                   "row's power with the traffic of the plan's whole duration. A guardrail or "
                   "non-inferiority row that solves for what it can detect reports the tightest "
                   "margin it rules out, its effect held as the true difference assumed.",
                   font(8), MUTED, spacing=1.25)
    flow.table(report.results_table(plan, result))
    flow.space(6)
    flow.table(report.units_table(plan, result))

    from fourfold.export.pdf.alternatives import alternatives, what_moves

    if whole.scenarios:
        alternatives(flow, whole, scenario)
    what_moves(flow, plan, result, scenario or "the base")

    sequential = report.sequential_table(plan, result)
    if sequential is not None:
        flow.heading("Interim looks")
        flow.table(sequential)
        _looks(flow, plan, result)

    _simulation(flow, plan, result)
    _figures(flow, plan, result)

    row_notes = report.notes(plan)
    if row_notes:
        flow.heading("Notes on the rows")
        for label, text in row_notes:
            entry = [(label, font(8.5, bold=True), INK, 0, 1),
                     (text, font(8.5), INK, 10, 5)]
            _entry(flow, entry)

    flow.heading("Methods and references")
    for method in report.methods(plan):
        used = ""
        if method.rows:
            names = ", ".join(method.rows) if len(method.rows) <= 8 else f"{len(method.rows)} rows"
            used = f" Used by: {names}."
        _entry(flow, [(method.name, font(8.5, bold=True), INK, 0, 1),
                      (method.text + used, font(8.5), INK, 10, 1),
                      (method.reference, font(8, italic=True), MUTED, 10, 6)])


def _traffic(flow: Flow, plan, result) -> None:
    """The traffic model's curve, for a plan that uses more than constant daily units."""
    from fourfold.export import traffic

    if not traffic.uses(plan):
        return
    curve = traffic.curve(plan, result)
    if not curve:
        return
    from fourfold.figures.traffic import TrafficStyle, paint_traffic

    flow.heading("Traffic over the test", level=2)
    flow.paragraph(traffic.figure_caption(plan), font(8), MUTED, spacing=1.25)
    style = TrafficStyle(INK, MUTED, RULE, ACCENT, QColor("#b0532c"), points=8.0)
    flow.space(4)
    flow.figure(flow.width * 0.36, lambda p, rect: paint_traffic(p, rect, curve, style))


def _kinds(flow: Flow, plan) -> None:
    """Ratio and quantile rows' own inputs, and each guardrail's test in words."""
    own = report.kind_inputs_table(plan)
    if own.rows:
        flow.heading("Ratio and quantile rows", level=2)
        flow.paragraph("Their per-unit sd comes from their own inputs: a ratio's by the delta "
                       "method, a quantile's from the density at the quantile.", font(8), MUTED,
                       spacing=1.25)
        flow.table(own)
    guardrails = report.direction_lines(plan)
    if guardrails:
        flow.heading("Guardrails in words", level=2)
        flow.key_values(guardrails)


def _simulation(flow: Flow, plan, result) -> None:
    """Rows checked by simulation (stored in the plan): power beside the closed form."""
    from fourfold.simulation import summary

    rows = summary.report_rows(plan, result)
    if not rows:
        return
    flow.heading("Checked by simulation")
    flow.paragraph("Each checked row's experiment was simulated with the replicates and seed "
                   "shown (they reproduce the check) and its final test run on every replicate; "
                   "the simulated power, with its 95 % Wilson interval, is set beside the closed "
                   "form, and the false-positive rate under H0 beside α.",
                   font(8), MUTED, spacing=1.25)
    flow.table(report.Table(header=summary.HEADER, rows=tuple(rows), align=summary.ALIGN))
    flow.space(6)
    for label, text in summary.report_messages(plan, result):
        _entry(flow, [(label, font(8.5, bold=True), INK, 0, 1), (text, font(8.5), INK, 10, 5)])


def _looks(flow: Flow, plan, result) -> None:
    """The looks of the binding row: a table of boundaries and nominal p-values, and a figure."""
    looks = report.looks_table(plan, result)
    if looks is None:
        return
    from fourfold.figures.boundaries import BoundaryStyle, paint_boundaries
    from fourfold.plan.sequential import looks_row, row_looks

    name, table = looks
    flow.heading(f"Stopping boundaries: {name}", level=2)
    flow.paragraph("At each look the test stops for efficacy when the z statistic, oriented in "
                   "the direction of the effect (|z| for a two-sided test), reaches the "
                   "efficacy boundary, i.e. when the p-value is below the nominal p"
                   + (", and for futility when z falls below the futility boundary"
                      if plan.settings.futility else "")
                   + ". Checking at p < α at every look instead would inflate the "
                   "false-positive rate (see the notes).", font(8), MUTED, spacing=1.25)
    flow.table(table)
    drawn = row_looks(plan, result, looks_row(plan, result))
    style = BoundaryStyle(INK, MUTED, RULE, ACCENT, QColor("#b0532c"), points=8.0)
    flow.space(6)
    flow.figure(flow.width * 0.34, lambda p, rect: paint_boundaries(p, rect, drawn, style))


def _entry(flow: Flow, parts) -> None:
    """Paragraphs (text, font, colour, indent, space after) kept together on one page."""
    flow.keep(sum(flow.measure(text, face, indent=indent, spacing=1.25, after=after)
                  for text, face, _, indent, after in parts))
    for text, face, color, indent, after in parts:
        flow.paragraph(text, face, color, indent=indent, spacing=1.25, after=after)


def _figures(flow: Flow, plan, result) -> None:
    from fourfold.figures.tradeoffs import paint_tradeoffs

    for index, metric in enumerate(plan.metrics):
        if metric.role != "primary":
            continue
        height = flow.width * 0.66
        flow.keep(height + flow.pt(80))
        flow.heading(f"Trade-offs: {metric.name}")
        flow.paragraph("Units needed against the effect, the power and α, and the effect the "
                       "test can detect against its runtime; the solid curve is this row's "
                       "design, the dashed one a neighbouring choice.",
                       font(8), MUTED, spacing=1.25)

        def paint(p, rect, index=index):
            paint_tradeoffs(p, rect, plan, result, index)

        flow.figure(height, paint)
