"""No text of a figure lies on another or outside its axes, in the window and in the PDF.

The trade-off figures report where their texts went (``TradeoffFigures.label_boxes``): the
legend, the design point's label, the effect marker's label, the guide's "test runs N d" and
the week labels; the boundaries figure returns what it drew (``paint_boundaries``). Every row
of the sample plan is checked at several sizes, on screen and on an A4 page at 1200 dpi. That
readable figures do not overprint their labels is common practice, no source.
"""

from __future__ import annotations

import dataclasses
import itertools

import pytest
from PySide6.QtCore import QRectF
from PySide6.QtGui import QColor, QImage, QPageSize, QPainter, QPdfWriter

from fourfold.figures.boundaries import BoundaryStyle, paint_boundaries
from fourfold.figures.tradeoffs import paint_tradeoffs
from fourfold.plan import load, sample_path
from fourfold.plan.evaluation import compute
from fourfold.plan.sequential import row_looks

LABELS = ("legend", "point label", "marker label", "guide label", "mark labels")


def _sample(looks: int = 1):
    plan = load(sample_path())
    return dataclasses.replace(plan, settings=dataclasses.replace(plan.settings, looks=looks))


def _problems(figures: dict[str, dict[str, list[QRectF]]]) -> list[str]:
    found = []
    for name, boxes in figures.items():
        (area,) = boxes["area"]
        texts = [(kind, box) for kind in LABELS for box in boxes.get(kind, [])]
        for kind, box in texts:
            if not area.contains(box):
                found.append(f"{name}: {kind} leaves the axes")
        for (kind, box), (other, other_box) in itertools.combinations(texts, 2):
            if box.intersects(other_box):
                found.append(f"{name}: {kind} on {other}")
        for kind, box in texts:
            if kind != "legend" and any(box.intersects(dot) for dot in boxes["markers"]):
                found.append(f"{name}: {kind} on a marker")
        for box in boxes.get("axis titles", []):
            (whole,) = boxes["figure"]
            if not whole.contains(box):
                found.append(f"{name}: an axis title leaves its figure")
    return found


@pytest.mark.parametrize("size", [(1400, 900), (1000, 700), (760, 620)])
def test_window_figures_keep_their_texts_apart(make_window, qtbot, size):
    window = make_window(_sample())
    window.resize(*size)
    window.show()
    qtbot.waitExposed(window)
    problems = {}
    for row in range(window.model.rowCount()):
        window.select_cell(row, 0)
        qtbot.waitUntil(lambda row=row: window.plots.tradeoffs is not None
                        and window.plots.tradeoffs.index == row)
        window.plots.grid.settle()
        found = _problems(window.plots.grid.figures.label_boxes())
        if size == (1400, 900):  # the default window has room for every axis title
            found += [f"{name}: {side} axis title left out" for name, plot
                      in window.plots.grid.plots.items() for side in plot.hidden_axis_titles()]
        if found:
            problems[window.model.metric(row).name] = found
    assert problems == {}


@pytest.mark.parametrize("looks", [1, 3])
def test_pdf_figures_keep_their_texts_apart(qapp, tmp_path, looks):
    plan = _sample(looks)
    result = compute(plan)
    writer = QPdfWriter(str(tmp_path / "figures.pdf"))
    writer.setPageSize(QPageSize(QPageSize.PageSizeId.A4))
    writer.setResolution(1200)
    painter = QPainter(writer)
    problems = {}
    width = writer.width()
    try:
        for row, metric in enumerate(plan.metrics):
            found = []
            paint_tradeoffs(painter, QRectF(0, 0, width, width * 0.66), plan, result, row,
                            inspect=lambda grid, found=found: found.extend(
                                _problems(grid.label_boxes())))
            if found:
                problems[metric.name] = found
            writer.newPage()
    finally:
        painter.end()
    assert problems == {}


def _boundary_problems(drawn: list[tuple[str, QRectF]]) -> list[str]:
    (plot,) = [box for kind, box in drawn if kind == "plot"]
    texts = [(kind, box) for kind, box in drawn if kind != "plot"]
    found = [f"a label leaves the axes: {box}" for kind, box in texts
             if kind == "label" and not plot.contains(box)]
    found += [f"{kind} on {other}" for (kind, box), (other, other_box)
              in itertools.combinations(texts, 2) if box.intersects(other_box)]
    return found


@pytest.mark.parametrize("device", ["screen", "page"])
@pytest.mark.parametrize("looks, futility", [(3, False), (4, True), (8, False)])
def test_boundary_figure_keeps_its_texts_apart(qapp, tmp_path, device, looks, futility):
    settings = dataclasses.replace(_sample().settings, looks=looks, futility=futility)
    plan = dataclasses.replace(_sample(), settings=settings)
    result = compute(plan)
    style = BoundaryStyle(QColor("black"), QColor("gray"), QColor("lightgray"), QColor("blue"),
                          QColor("red"), 9.0)
    if device == "screen":
        target = QImage(520, 300, QImage.Format.Format_ARGB32)
        target.fill(QColor("white"))
        rect = QRectF(8, 6, 504, 288)
    else:
        target = QPdfWriter(str(tmp_path / "boundaries.pdf"))
        target.setResolution(1200)
        rect = QRectF(0, 0, target.width(), target.width() * 0.34)
    painter = QPainter(target)
    try:
        drawn = paint_boundaries(painter, rect, row_looks(plan, result, 0), style,
                                 "Stopping boundaries — Checkout conversion",
                                 "Checking at p < α at every look would inflate the rate.")
    finally:
        painter.end()
    assert [kind for kind, _ in drawn].count("label") >= 2
    assert _boundary_problems(drawn) == []


def test_the_check_sees_a_collision():
    area = QRectF(0, 0, 100, 100)
    boxes = {"effect": {"area": [area], "legend": [QRectF(60, 0, 40, 20)],
                        "guide label": [QRectF(70, 10, 20, 10)], "markers": []}}
    assert _problems(boxes) == ["effect: legend on guide label"]
