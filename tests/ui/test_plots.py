"""The trade-off plot panel and the painter for the PDF (offscreen Qt).

The numbers on the plots are checked against fourfold.engine called directly (the engine is
the reference here; it is checked against published tables in tests/engine) and against the
plan's own evaluation (what the table shows).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QColor, QImage, QPainter

from fourfold import engine
from fourfold.figures.axes import compact
from fourfold.figures.tradeoffs import paint_tradeoffs
from fourfold.formatting import format_count
from fourfold.plan.evaluation import compute
from fourfold.plan.model import Metric, Plan, Settings
from fourfold.ui import theme

pytestmark = pytest.mark.qt


def make_plan(effect: float = 0.05) -> Plan:
    return Plan(
        Settings(daily_units=42_000, share=0.6, arms=2),
        [
            Metric(name="Conversion", role="primary", kind="proportion", baseline=0.031,
                   effect=effect, relative=True),
            Metric(name="Page load", role="guardrail", kind="mean", baseline=1.84, sd=0.61,
                   effect=0.02, relative=False, alternative="greater"),
            Metric(name="Broken", role="secondary", kind="proportion", baseline=1.5),
        ],
    )


def show(qtbot, panel, plan, index):
    before = panel.tradeoffs
    panel.show_row(plan, compute(plan), index)
    qtbot.waitUntil(lambda: panel.tradeoffs is not before or index is None, timeout=2000)


def curve_data(panel, name):
    plot = panel.grid.plots[name]
    return plot.points("curve")


def test_show_row_reuses_plot_items_and_follows_edits(qtbot, panel):
    plan = make_plan()
    show(qtbot, panel, plan, 0)
    plots = panel.grid.plots
    ids = {name: (id(p.item), id(p.layer), id(p.legend)) for name, p in plots.items()}
    edited = dataclasses.replace(plan, metrics=[
        dataclasses.replace(plan.metrics[0], effect=0.08), *plan.metrics[1:]])
    show(qtbot, panel, edited, 0)
    assert {name: (id(p.item), id(p.layer), id(p.legend))
            for name, p in panel.grid.plots.items()} == ids
    x, y = curve_data(panel, "effect")
    direct = engine.sample_size("proportion", 0.031, x / 100.0, alpha=0.05, power=0.8,
                                relative=True)
    np.testing.assert_allclose(y, direct, rtol=1e-9)
    px, py = plots["effect"].points("point")
    assert px[0] == pytest.approx(8.0)
    assert py[0] == compute(edited).rows[0].units_control


def test_bursts_of_show_row_are_coalesced(qtbot, panel, monkeypatch):
    import fourfold.plan.tradeoffs as tradeoffs_module

    calls = []
    real = tradeoffs_module.tradeoffs
    monkeypatch.setattr(tradeoffs_module, "tradeoffs",
                        lambda *args, **kwargs: calls.append(args[1]) or real(*args, **kwargs))
    plan = make_plan()
    result = compute(plan)
    for index in (0, 1, 0, 1):
        panel.show_row(plan, result, index)
    qtbot.waitUntil(lambda: panel.tradeoffs is not None, timeout=2000)
    assert calls == [1]


def test_dragging_the_effect_marker_emits_the_effect(qtbot, panel):
    show(qtbot, panel, make_plan(), 0)
    handle = panel.grid.handle
    assert handle.isVisible() and handle.value() == pytest.approx(5.0)
    with qtbot.waitSignal(panel.effect_dragged, timeout=1000) as during:
        handle.setValue(6.5)
        handle.sigDragged.emit(handle)
    assert during.args == [0, pytest.approx(0.065)]
    with qtbot.waitSignal(panel.effect_dragged, timeout=1000) as released:
        handle.setValue(7.26)
        handle.sigPositionChangeFinished.emit(handle)
    # snapped to the slider's steps of 0.1 %: the marker, its label and the value agree
    assert released.args == [0, 0.073]
    assert handle.value() == pytest.approx(7.3) and handle.label.toPlainText().startswith(
        "+7.3 %")
    with qtbot.waitSignal(panel.effect_dragged, timeout=1000) as tidy:
        handle.setValue(100 * 0.07000000000000001 + 1e-7)
        handle.sigPositionChangeFinished.emit(handle)
    assert tidy.args == [0, 0.07]  # rounded to a pixel's worth, no float dust in the file


def test_slider_changes_the_effect_from_the_keyboard(qtbot, panel):
    show(qtbot, panel, make_plan(), 0)
    assert panel.slider.value() == 50  # +5 % in steps of 0.1 % (slider_step of 2 %–12.5 %)
    with qtbot.waitSignal(panel.effect_dragged, timeout=1000) as signal:
        qtbot.keyClick(panel.slider, Qt.Key.Key_Right)
    assert signal.args == [0, 0.051]  # one round step up, exactly
    assert panel.slider_value.text().endswith("%")


def test_rows_that_cannot_be_computed_show_the_reason(qtbot, panel):
    plan = make_plan()
    show(qtbot, panel, plan, 2)
    effect = panel.grid.plots["effect"]
    assert effect.message.isVisible()
    assert effect.message.textItem.toPlainText() == compute(plan).rows[2].reason
    assert curve_data(panel, "effect")[0].size == 0
    assert not panel.grid.handle.isVisible() and not panel.slider.isEnabled()


def test_rows_that_solve_for_the_effect_cannot_be_dragged(qtbot, panel):
    plan = make_plan()
    plan.metrics[1] = dataclasses.replace(plan.metrics[1], solve="detectable_effect", n=9000.0)
    show(qtbot, panel, plan, 1)
    assert not panel.grid.handle.isVisible() and not panel.slider.isEnabled()
    assert curve_data(panel, "effect")[0].size > 0


def test_text_scale_and_dark_palette(qtbot, panel):
    show(qtbot, panel, make_plan(), 0)
    axis = panel.grid.plots["power"].axes["left"]
    normal = axis.style["tickFont"].pointSizeF()
    panel.set_text_scale(1.5)
    assert axis.style["tickFont"].pointSizeF() == pytest.approx(normal * 1.5)
    with pytest.raises(ValueError, match="factor"):
        panel.set_text_scale(0)
    panel.setPalette(theme.palette(dark=True))
    assert panel.grid.backgroundBrush().color().lightness() < 100
    panel.setPalette(theme.palette(dark=False))
    assert panel.grid.backgroundBrush().color().lightness() > 200


def test_clearing_the_panel(qtbot, panel):
    plan = make_plan()
    show(qtbot, panel, plan, 0)
    panel.show_row(plan, None, None)
    qtbot.waitUntil(lambda: panel.tradeoffs is None, timeout=2000)
    assert curve_data(panel, "effect")[0].size == 0


def test_painting_onto_an_image_draws_the_figures(qapp):
    image = QImage(900, 700, QImage.Format.Format_ARGB32)
    image.fill(QColor("white"))
    painter = QPainter(image)
    paint_tradeoffs(painter, QRectF(0, 0, 900, 700), make_plan(), None, 0, dpi=96)
    painter.end()
    pixels = np.frombuffer(image.constBits(), dtype=np.uint8).reshape(700, 900, 4)
    inked = np.any(pixels[..., :3] < 200, axis=-1)
    assert inked.mean() > 0.02
    for top, left in ((0, 0), (0, 450), (350, 0), (350, 450)):  # all four figures drawn
        assert inked[top:top + 350, left:left + 450].mean() > 0.01


def test_a_panel_that_changed_rows_paints_like_a_fresh_one(qtbot, panel):
    # The window keeps axes, titles and legends as pixmaps: a stale pixmap would keep the old
    # row's ticks, and an axis label left where the old, shorter text was centred would sit
    # off-centre. The panel that switched rows must paint exactly what a fresh panel paints.
    from PySide6.QtWidgets import QGraphicsItem

    from fourfold.ui.plots import PlotPanel

    axis = panel.grid.plots["effect"].axes["left"]
    assert axis.cacheMode() == QGraphicsItem.CacheMode.DeviceCoordinateCache
    plan = make_plan()
    show(qtbot, panel, plan, 0)
    panel.grab()
    show(qtbot, panel, plan, 1)
    fresh = PlotPanel()
    qtbot.addWidget(fresh)
    fresh.resize(panel.size())
    fresh.show()
    show(qtbot, fresh, plan, 1)
    assert panel.grab().toImage() == fresh.grab().toImage()


def test_the_runtime_legend_is_one_line_when_it_fits(qtbot, panel):
    plan = make_plan()
    plot = panel.grid.plots["runtime"]
    for width, columns in ((1400, 3), (520, 1)):
        panel.resize(width, 640)
        qtbot.waitUntil(lambda w=width: panel.width() == w, timeout=2000)
        show(qtbot, panel, plan, 0)
        panel.grid.settle()
        plot.legend.updateSize()
        assert plot.legend.columnCount == columns
        assert plot.legend.width() <= plot.item.vb.width()
        show(qtbot, panel, make_plan(effect=0.08), 0)  # a new design-point text


def test_point_and_week_labels_show_the_figures_numbers(qtbot, panel):
    from fourfold.formatting import format_count, format_number

    plan = make_plan()
    show(qtbot, panel, plan, 0)
    data = panel.tradeoffs
    effect, runtime = panel.grid.plots["effect"], panel.grid.plots["runtime"]
    assert effect.layer.labels("point") == [format_count(data.effect.point[1])]
    assert runtime.layer.labels("point") == []  # read from the legend instead
    weeks = [format_number(float(v)) for v in data.runtime.marks.y]
    wide = runtime.layer.labels("marks")
    assert wide and set(wide) <= set(weeks) and wide[-1] == weeks[-1]
    panel.resize(360, 640)  # too narrow for every week: every second or third is labelled
    qtbot.waitUntil(lambda: len(runtime.layer.labels("marks")) < len(wide), timeout=2000)
    assert runtime.layer.labels("marks")[-1] == weeks[-1]


def test_compact_tick_labels():
    assert [compact(v) for v in (950.0, 12_500.0, 3e6, -0.5)] == ["950", "12.5k", "3M", "−0.5"]


def test_repainting_does_not_use_up_references_to_none(qtbot, panel):
    # PySide6 6.12.0 on Python 3.11 dropped one reference to None per call of a method that
    # returns nothing, so every repaint brought a fatal "none_dealloc" closer (pyproject pins
    # PySide6 below 6.12). On Python ≥ 3.12 None is immortal and its count does not move.
    import sys

    show(qtbot, panel, make_plan(), 0)
    panel.grid.grab()
    before = sys.getrefcount(None)
    for _ in range(20):
        panel.grid.grab()
    assert sys.getrefcount(None) - before > -20


def test_effect_range_holds_while_dragging_and_recentres_after(qtbot, panel):
    plan = make_plan()
    show(qtbot, panel, plan, 0)
    low, high = panel.tradeoffs.effect_span
    near_top = dataclasses.replace(plan, metrics=[
        dataclasses.replace(plan.metrics[0], effect=high), *plan.metrics[1:]])
    panel.grid.handle.moving = True  # the user holds the marker at the end of its range
    show(qtbot, panel, near_top, 0)
    assert panel.tradeoffs.effect_span == (low, high)
    panel.grid.handle.moving = False
    show(qtbot, panel, near_top, 0)
    assert panel.tradeoffs.effect_span == pytest.approx((0.4 * high, 2.5 * high))


def test_pdf_figures_are_vector_text_in_points(qapp, tmp_path):
    # QPdfWriter at 1200 dpi: logical and device resolution differ from the screen's, the trap
    # where point-sized text comes out 12.5 times too large. Read back with pypdf (test-only).
    import math
    import unicodedata

    import pypdf
    from PySide6.QtGui import QPageSize, QPdfWriter

    path = tmp_path / "figures.pdf"
    writer = QPdfWriter(str(path))
    writer.setPageSize(QPageSize(QPageSize.PageSizeId.A4))
    writer.setResolution(1200)
    painter = QPainter(writer)
    paint_tradeoffs(painter, QRectF(0, 0, 7 * 1200, 5 * 1200), make_plan(), None, 0)
    painter.end()
    sizes = {}

    def visit(text, cm, tm, font, size):
        if text.strip():
            scale = math.hypot(tm[0], tm[1]) * math.hypot(cm[0], cm[1])
            words = " ".join(unicodedata.normalize("NFKC", text).split())  # "ﬀ" → "ff"
            sizes.setdefault(words, size * scale)

    page = pypdf.PdfReader(str(path)).pages[0]
    page.extract_text(visitor_text=visit)
    assert sizes["Sample size against effect"] == pytest.approx(10.5, abs=0.5)
    assert sizes["What each week can detect"] == pytest.approx(10.5, abs=0.5)
    assert sizes["80"] == pytest.approx(9.0, abs=0.5)  # a tick of the power axis
    point = format_count(compute(make_plan()).rows[0].units_control)
    assert sizes[point] == pytest.approx(9.5, abs=0.5)  # a label drawn by the figure layer
    # markers, axes and legends are vector: the window's pixmaps never reach a page
    assert not page.get("/Resources", {}).get("/XObject")
