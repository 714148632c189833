"""The live trade-off plots of the selected metric row, and the same figures for the PDF.

Four small plots answer the questions a planning meeting asks about one row: how many units a
smaller or larger effect needs, what more power costs, what a stricter α costs, and what each
extra week of runtime buys. The curves come from :func:`fourfold.plan.tradeoffs.tradeoffs`
(which asks the engine); this module only draws them. Each plot shows the row's own design as
a solid curve with its design point, and one neighbouring choice as a faint dashed curve.

:class:`PlotPanel` is the window's widget: it reuses its plot items on every update, coalesces
bursts of updates into one redraw, and lets the user drag the effect marker (or move the slider
below the plots) to change the row's effect. :func:`paint_tradeoffs` draws the same figures
with any :class:`~PySide6.QtGui.QPainter` (a PDF page, an image).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QEvent, QRectF, Qt, QTimer, Signal
from PySide6.QtGui import QColor, QFont, QFontMetricsF, QPainter, QPalette
from PySide6.QtWidgets import (
    QApplication,
    QGraphicsItem,
    QHBoxLayout,
    QLabel,
    QSlider,
    QVBoxLayout,
    QWidget,
)

from fourfold.plan.evaluation import compute
from fourfold.plan.tradeoffs import Figure, Tradeoffs, tradeoffs
from fourfold.ui.figure_layer import SERIES, SeriesLayer, Swatch
from fourfold.ui.formatting import MINUS, format_count, format_number
from fourfold.ui.simulation_marks import show_simulation

TICK_POINTS = 9.0
LABEL_POINTS = 9.5
TITLE_POINTS = 10.5
MARK_ANCHOR = (1.0, -0.1)  # a week's label sits below its point, to the left
DRAG_INTERVAL_MS = 40
SLIDER_STEPS = 200
SCREEN_DPI = 96.0
WIDEST_TICK = "−00.0k"
PADDING = 0.03
HEADROOM = 0.2  # room left beyond data that grew past a kept range
LEGEND_GAP = 3.0  # pyqtgraph's LegendItem adds 3 px after each sample and label

_GRID = ((0, 0), (0, 1), (1, 0), (1, 1))
LEGEND_LEFT = (8, 8)
LEGEND_RIGHT = (-8, 8)
LEGEND_LOW_RIGHT = (-8, -8)
_POINT_ANCHOR = {"effect": (1.08, -0.15), "power": (-0.08, -0.15), "alpha": (1.08, -0.15),
                 "runtime": (0.0, 0.0)}


def compact(value: float) -> str:
    """A short tick label: 1,500 → "1.5k", 2,000,000 → "2M", −0.25 → "−0.25".

    Examples
    --------
    >>> compact(1500.0), compact(2e6), compact(-0.25), compact(40.0)
    ('1.5k', '2M', '−0.25', '40')
    """
    magnitude = abs(value)
    for size, suffix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if magnitude >= size:
            text = f"{value / size:.3g}{suffix}"
            break
    else:
        text = f"{value:.3g}" if magnitude >= 1e-4 or value == 0 else f"{value:.1e}"
    return text.replace("-", MINUS)


class _CompactAxis(pg.AxisItem):
    """An axis whose ticks read "20k" and "1.5M"; log axes tick at 1, 2 and 5 per decade.

    With ``direct`` set, the axis paints straight onto the painter instead of replaying its
    cached ``QPicture`` (a picture replayed on a high-resolution device such as a PDF page is
    laid out for the wrong resolution).
    """

    direct = False

    def paint(self, p, opt, widget):
        if not self.direct:
            super().paint(p, opt, widget)
            return
        p.save()
        if self.style["tickFont"]:
            p.setFont(self.style["tickFont"])
        specs = self.generateDrawSpecs(p)
        if specs is not None:
            self.drawPicture(p, *specs)
        p.restore()

    def tickStrings(self, values, scale, spacing):  # noqa: N802 (pyqtgraph's name)
        if self.logMode:
            return [compact(10.0 ** v) for v in values]
        if spacing * scale >= 1000:
            return [compact(v * scale) for v in values]
        decimals = max(0, math.ceil(-math.log10(spacing * scale))) if spacing > 0 else 0
        return [f"{v * scale:.{decimals}f}".replace("-", MINUS) for v in values]

    def logTickValues(self, minVal, maxVal, size, stdTicks):  # noqa: N802, N803
        decades = maxVal - minVal
        font = self.style["tickFont"] or QFont()
        metrics = QFontMetricsF(font)
        # room a label needs along the axis: its width across, its height up
        need = (metrics.horizontalAdvance("0.005") * 1.3 if self.orientation in ("top", "bottom")
                else metrics.height() * 1.2)
        mantissas = _log_mantissas(decades, size / decades if decades > 0 else math.inf, need)
        values = [
            e + math.log10(m)
            for e in range(math.floor(minVal), math.ceil(maxVal) + 1)
            for m in mantissas
            if minVal <= e + math.log10(m) <= maxVal
        ]
        return [(None, values)]


_MANTISSAS = (  # ticks per decade, with the narrowest gap between two of them, in decades
    ((1, 1.5, 2, 3, 4, 5, 6, 8), math.log10(6 / 5), 0.8),
    ((1, 2, 5), math.log10(2), 2.5),
    ((1, 3), math.log10(10 / 3), math.inf),
)


def _log_mantissas(decades: float, per_decade: float, need: float) -> tuple:
    """Tick mantissas for a log axis spanning ``decades`` at ``per_decade`` pixels each, with
    labels that need ``need`` pixels along the axis: the densest set whose labels keep clear
    of each other (1, 1.5, 2 … 8 only within one decade; 1, 2, 5 up to 2.5 decades).

    Examples
    --------
    >>> _log_mantissas(2.3, 260.0, 45.0), _log_mantissas(2.3, 100.0, 45.0)
    ((1, 2, 5), (1, 3))
    >>> _log_mantissas(0.5, 800.0, 20.0), _log_mantissas(4.0, 40.0, 45.0)
    ((1, 1.5, 2, 3, 4, 5, 6, 8), (1,))
    """
    for mantissas, gap, widest in _MANTISSAS:
        if decades <= widest and gap * per_decade >= need:
            return mantissas
    return (1,)


@dataclass(frozen=True)
class Style:
    """Colours, text sizes and line widths of the figures.

    ``pen_scale`` multiplies line widths, for painting onto devices with more dots per inch
    than a screen (lines are drawn in device pixels; markers are scaled by the export mode of
    :func:`paint_tradeoffs`). ``pixel_dpi``, when set, gives fonts a pixel size for that many
    pixels per inch instead of a point size: text that the axes draw straight onto a page's
    painter would otherwise be sized for the page's resolution (1200 dpi for a PDF) and then
    scaled once more by the painter's transform, while pixel-sized text follows the transform
    like every other part of the figure.
    """

    background: QColor
    foreground: QColor
    muted: QColor
    grid: QColor
    curve: QColor
    neighbour: QColor
    point: QColor
    marks: QColor
    text_scale: float = 1.0
    pen_scale: float = 1.0
    pixel_dpi: float | None = None

    def font(self, points: float) -> QFont:
        font = QFont()
        if self.pixel_dpi is None:
            font.setPointSizeF(points * self.text_scale)
        else:
            font.setPixelSize(max(1, round(points * self.text_scale * self.pixel_dpi / 72.0)))
        return font

    def size(self, points: float) -> str:
        return f"{points * self.text_scale:.1f}pt"


def style_from_palette(palette: QPalette, text_scale: float = 1.0, pen_scale: float = 1.0,
                       pixel_dpi: float | None = None) -> Style:
    """The figures' style for a widget palette: light or dark follows the palette's base colour.

    The curves take the palette's highlight colour (the application's accent); the design point
    is a warm amber and the weekly marks a violet, both lighter on dark backgrounds.
    """
    background = palette.color(QPalette.ColorRole.Base)
    foreground = palette.color(QPalette.ColorRole.WindowText)
    dark = background.lightness() < 128
    curve = QColor(palette.color(QPalette.ColorRole.Highlight))
    if dark:
        curve = curve.lighter(125)
    neighbour = QColor(curve)
    neighbour.setAlpha(120)
    muted = QColor(foreground)
    muted.setAlpha(170)
    grid = QColor(foreground)
    grid.setAlpha(60)
    return Style(
        background=background,
        foreground=foreground,
        muted=muted,
        grid=grid,
        curve=curve,
        neighbour=neighbour,
        point=QColor("#f4b045") if dark else QColor("#b5560d"),
        marks=QColor("#b8a4ef") if dark else QColor("#5b3f9e"),
        text_scale=text_scale,
        pen_scale=pen_scale,
        pixel_dpi=pixel_dpi,
    )


def _view(values: np.ndarray | float, log: bool) -> np.ndarray:
    """Data values as ViewBox coordinates (log10 on log axes; nan where not positive)."""
    values = np.asarray(values, dtype=float)
    if not log:
        return values
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(values > 0, np.log10(np.where(values > 0, values, 1.0)), np.nan)


def _point_text(figure: Figure, unit: str) -> str:
    x, y = figure.point
    if figure.name == "runtime":
        effect = format_number(y, signed=True) + (f" {unit}" if unit else "")
        return f"{effect} needs {format_number(x)} d"
    return format_count(y)


class _Plot:
    """One figure's plot item and the items on it, created once and updated with ``setData``."""

    def __init__(self, layout: pg.GraphicsLayout, row: int, col: int, name: str) -> None:
        self.name = name
        self.axes = {"bottom": _CompactAxis("bottom"), "left": _CompactAxis("left")}
        for axis in self.axes.values():
            axis.enableAutoSIPrefix(False)
        # no context menu: the view box would build one (a tenth of the window's start) for
        # a figure whose ranges the figure itself sets
        view = pg.ViewBox(enableMenu=False, defaultPadding=PADDING)
        self.item: pg.PlotItem = layout.addPlot(row=row, col=col, axisItems=self.axes,
                                                viewBox=view)
        self.item.setMenuEnabled(False)
        self.item.hideButtons()
        self.item.setMouseEnabled(x=False, y=False)
        self.item.showGrid(x=True, y=True, alpha=0.3)
        self.item.vb.disableAutoRange()
        # One item draws the lines and markers, fed view coordinates (log10 on log axes) by
        # set_figure: pyqtgraph's curve and scatter items cost far more per frame.
        self.layer = SeriesLayer()
        self.item.addItem(self.layer, ignoreBounds=True)
        self.guide = pg.InfiniteLine(angle=90, movable=False, label="",
                                     labelOpts={"position": 0.45, "anchors": [(0, 0.5), (0, 0.5)]})
        self.item.addItem(self.guide, ignoreBounds=True)
        self.message = pg.TextItem(anchor=(0.5, 0.5))
        self.item.addItem(self.message, ignoreBounds=True)
        self.legend = pg.LegendItem(offset=LEGEND_RIGHT, verSpacing=-5)
        self.legend.setParentItem(self.item.vb)
        # Follow the painter's scale when painted onto a page (the view box does not zoom it).
        self.legend.setFlag(self.legend.GraphicsItemFlag.ItemIgnoresTransformations, False)
        self.legend.addItem(Swatch(self.layer, "curve"), "")
        self.legend.addItem(Swatch(self.layer, "neighbour"), "")
        if name == "runtime":  # its design point is read from the legend, not a floating label
            self.legend.addItem(Swatch(self.layer, "point"), "")
        self._figure: Figure | None = None
        self._unit = ""
        self._texts: tuple | None = None
        self._range: tuple[tuple[float, float], tuple[float, float]] | None = None
        self._log = (False, False)
        self._corner: tuple[int, int] | None = None

    def cache_static_items(self) -> None:
        """Keep the axes (with their grid lines), the title and the legend as screen pixmaps.

        On screen these change far less often than the curves, yet the curves' repaint covers
        them: replaying the axes' tick text was half the cost of a frame. A cached item is
        painted again only after its own ``update()`` (new range, text or style). Only for the
        window: figures painted onto a page (:func:`paint_tradeoffs`) stay vector.
        """
        cached = QGraphicsItem.CacheMode.DeviceCoordinateCache
        for item in (*self.axes.values(), self.item.titleLabel, self.legend):
            item.setCacheMode(cached)

    def apply_style(self, style: Style) -> None:
        # Whole device pixels: the window draws without anti-aliasing (it would cost a few
        # milliseconds a frame), where a 2.6 px line comes out 2 or 3 px wide by position.
        scale = style.pen_scale
        self.layer.set_line_style("curve", pg.mkPen(style.curve, width=3.0 * scale))
        self.layer.set_line_style("neighbour", pg.mkPen(style.neighbour, width=2.0 * scale,
                                                        style=Qt.PenStyle.DashLine))
        self.layer.set_dot_style("point", 13 * style.text_scale ** 0.5 * scale,
                                 pg.mkPen(style.background, width=1.5 * scale),
                                 pg.mkBrush(style.point))
        self.layer.set_dot_style("marks", 8 * style.text_scale ** 0.5 * scale,
                                 pg.mkPen(style.background, width=1.0 * scale),
                                 pg.mkBrush(style.marks))
        self.guide.setPen(pg.mkPen(style.muted, width=1.2 * style.pen_scale,
                                   style=Qt.PenStyle.DotLine))
        self.guide.label.setColor(style.muted)
        self.guide.label.setFont(style.font(TICK_POINTS))
        tick_font = style.font(TICK_POINTS)
        metrics = QFontMetricsF(tick_font)
        for axis in self.axes.values():
            axis.setPen(pg.mkPen(style.muted, width=style.pen_scale))
            axis.setTextPen(pg.mkPen(style.foreground))
            axis.setTickFont(tick_font)
            # Room for the widest compact tick label, fixed up front: the layout is right on
            # the first frame and does not jump while the user drags the effect.
            axis.setStyle(tickLength=-int(5 * style.text_scale),
                          tickTextOffset=int(4 * style.text_scale),
                          autoExpandTextSpace=False, maxTickLevel=1,
                          tickTextWidth=math.ceil(metrics.horizontalAdvance(WIDEST_TICK)) + 2,
                          tickTextHeight=math.ceil(metrics.height()))
        label_back = QColor(style.background)
        label_back.setAlpha(200)
        self.layer.set_label_style(
            "point", style.font(LABEL_POINTS),
            style.point if style.background.lightness() < 128 else style.foreground,
            _POINT_ANCHOR[self.name], pg.mkBrush(label_back))
        self.layer.set_label_style("marks", style.font(TICK_POINTS * 0.9), style.marks,
                                   MARK_ANCHOR)
        self.message.setColor(style.muted)
        self.message.setFont(style.font(LABEL_POINTS))
        self.legend.setLabelTextColor(style.foreground)
        self.legend.setLabelTextSize(style.size(TICK_POINTS))
        for _, label in self.legend.items:  # the new size shows once the text is set again
            label.setText(label.text)
        self.legend.updateSize()
        legend_back = QColor(style.background)
        legend_back.setAlpha(215)
        self.legend.setBrush(legend_back)
        self.legend.setPen(pg.mkPen(style.grid))
        if self._figure is not None:
            self.set_figure(self._figure, style, self._unit)

    def set_figure(self, figure: Figure, style: Style, unit: str = "", *,
                   sticky: bool = False) -> None:
        """Show ``figure``; with ``sticky`` the view range stays while the data fit it."""
        self._figure = figure
        self._unit = unit
        texts = (figure.title, figure.x_label, figure.y_label, style)
        if texts != self._texts:  # re-laying out HTML labels is the slow part of an update
            self._texts = texts
            labels = {"color": style.foreground.name(), "font-size": style.size(LABEL_POINTS)}
            self.item.setTitle(figure.title, color=style.foreground.name(),
                               size=style.size(TITLE_POINTS), bold=True)
            title_height = int(TITLE_POINTS * style.text_scale * 2.2)
            self.item.titleLabel.setMaximumHeight(title_height)
            self.item.layout.setRowFixedHeight(0, title_height)
            self.item.setLabel("bottom", figure.x_label, **labels)
            self.item.setLabel("left", figure.y_label, **labels)
            for axis in self.axes.values():  # centre the new label (pyqtgraph does on resize)
                axis.resizeEvent()
        empty = bool(figure.reason)
        log = (figure.x_log and not empty, figure.y_log and not empty)
        if log != self._log:
            self._log = log
            self._range = None
        self.item.setLogMode(x=log[0], y=log[1])
        x, y = figure.point
        data = {"curve": (figure.curve.x, figure.curve.y),
                "neighbour": (figure.neighbour.x, figure.neighbour.y),
                "marks": (figure.marks.x, figure.marks.y), "point": ([x], [y])}
        for name, (xs, ys) in data.items():
            self.layer.set_series(name, xs, ys, _view(xs, log[0]), _view(ys, log[1]))
        self._set_legend(figure)
        self._set_texts(figure, not empty)
        self._set_guide(figure)
        self.fit()
        if empty:
            self.message.setText(figure.reason)
            self.message.setPos(0.5, 0.5)
            self.message.show()
            self._set_range(((0.0, 1.0), (0.0, 1.0)))
            self._range = None
        else:
            self.message.hide()
            self._follow(figure, sticky)

    def _follow(self, figure: Figure, sticky: bool) -> None:
        """Range the view on the data, or keep the current range while the data fit it.

        A sticky range changes only when the data leave it or fill less than half of it, so
        that small edits leave the axes (and their cached tick pictures) as they are.
        """
        views = (self.layer.view_points(name) for name in SERIES)
        finite = [(x[m], y[m]) for x, y in views if (m := np.isfinite(x) & np.isfinite(y)).any()]
        if not finite:
            return
        x = np.concatenate([f[0] for f in finite])
        y = np.concatenate([f[1] for f in finite])
        data = [(float(x.min()), float(x.max()), PADDING), (float(y.min()), float(y.max()),
                                                             PADDING)]
        if len(figure.marks.y) and math.isfinite(figure.marks.y[0]):
            top = _clip_top(figure)
            if top is not None:
                data[1] = (*top, 0.02)
        old = self._range if sticky else None
        target = tuple(_settled(low, high, pad, None if old is None else old[axis])
                       for axis, (low, high, pad) in enumerate(data))
        if target != self._range:
            self._set_range(target)

    def _set_range(self, target: tuple[tuple[float, float], tuple[float, float]]) -> None:
        self._range = target
        self.item.setRange(xRange=target[0], yRange=target[1], padding=0)

    def points(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """The data on show in series ``name`` ("curve", "neighbour", "marks", "point"), as
        the figure gave it."""
        return self.layer.points(name)

    def view_points(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """The same in view coordinates (log10 on log axes)."""
        return self.layer.view_points(name)

    def clear(self) -> None:
        """Show nothing (no row selected)."""
        self._figure = None
        self.layer.clear()
        for item in (self.guide, self.message, self.legend):
            item.hide()
        self.item.setTitle(None)
        self._texts = None
        self._range = None

    def _set_legend(self, figure: Figure) -> None:
        texts = [figure.curve.label, figure.neighbour.label]
        if figure.name == "runtime":
            texts.append(_point_text(figure, self._unit))
        changed = False
        for (_, label), text in zip(self.legend.items, texts, strict=True):
            if label.text != text:
                label.setText(text)
                changed = True
        self.legend.setVisible(not figure.reason and bool(figure.curve.label))
        if changed:  # re-measuring the legend moves every label: only for new texts
            self.legend.updateSize()
        finite = figure.curve.y[np.isfinite(figure.curve.y)]
        rising = finite.size > 1 and finite[-1] > finite[0]
        if figure.name == "runtime":  # week labels sit below the curve, left of each point
            corner = LEGEND_LOW_RIGHT if rising else LEGEND_RIGHT
        else:
            corner = LEGEND_LEFT if rising else LEGEND_RIGHT
        if corner != self._corner:
            self._corner = corner
            self.legend.setOffset(corner)

    def _set_texts(self, figure: Figure, drawn: bool) -> None:
        """The design point's label (the runtime figure names its point in the legend)."""
        shown = len(self.layer.points("point")[0])
        label = _point_text(figure, self._unit) if shown else ""
        self.layer.set_labels("point", [label] * shown,
                              [drawn and figure.name != "runtime"] * shown)

    def fit(self) -> None:
        """Fit the texts to the plot's size: week labels and the runtime legend's shape."""
        self.thin_marks()
        if self.name == "runtime":  # one line along the top when it fits, clear of the weeks
            # measured from the labels' text, without laying the legend out twice per frame
            one_line = sum(sample.width() + label.minimumWidth() + 2 * LEGEND_GAP
                           for sample, label in self.legend.items)
            columns = 3 if one_line <= self.item.vb.width() - 16 else 1
            if columns != self.legend.columnCount:
                self.legend.setColumnCount(columns)

    def thin_marks(self) -> None:
        """Label every week, or every second or third one when the plot is too narrow."""
        xs, values = self.layer.points("marks")
        texts = [format_number(float(value)) for value in values]
        self.layer.set_labels("marks", texts)
        count, step = len(texts), 1
        figure = self._figure
        if count > 1 and figure is not None:
            span = float(np.nanmax(figure.curve.x) - np.nanmin(figure.curve.x)) or 1.0
            spacing = self.item.vb.width() * float(xs[1] - xs[0]) / span
            step = max(1, math.ceil(self.layer.label_width("marks") * 1.15 / max(spacing, 1.0)))
        self.layer.set_labels("marks", texts, [(count - 1 - i) % step == 0
                                               for i in range(count)])

    def _set_guide(self, figure: Figure) -> None:
        shown = not figure.reason and math.isfinite(figure.guide)
        if shown:
            self.guide.setValue(float(_view(figure.guide, figure.x_log)))
            self.guide.label.setFormat(figure.guide_label)
        self.guide.setVisible(shown)


def _clip_top(figure: Figure) -> tuple[float, float] | None:
    """Runtime figure: keep the steep first days from squashing the weeks that matter.

    The y range to show, or ``None`` to show the curve whole: only when the detectable effect
    shrinks towards zero with the days (a superiority test); a non-inferiority curve is shown
    whole.
    """
    y = figure.curve.y[np.isfinite(figure.curve.y)]
    if y.size < 2 or not abs(y[0]) > abs(y[-1]) or not np.all(np.sign(y) == np.sign(y[-1])):
        return None
    reach = max(abs(figure.marks.y[0]) * 1.5, abs(figure.point[1]) * 1.8)
    if not (math.isfinite(reach) and reach > 0):
        return None
    return (0.0, reach) if y[-1] > 0 else (-reach, 0.0)


def _settled(low: float, high: float, padding: float,
             current: tuple[float, float] | None) -> tuple[float, float]:
    """The view range of one axis for data from ``low`` to ``high``.

    ``current`` stays while it holds the data and the data fill at least half of it;
    otherwise the data's range widened by ``padding`` of its span on each side — by
    :data:`HEADROOM` on a side where the data grew past ``current``, so that an effect dragged
    or typed step by step does not re-range (and repaint) the axes on every step.

    Examples
    --------
    >>> _settled(1.0, 3.0, 0.05, None)
    (0.9, 3.1)
    >>> _settled(1.0, 3.0, 0.05, (0.5, 3.5)), _settled(1.0, 3.0, 0.05, (0.0, 9.0))
    ((0.5, 3.5), (0.9, 3.1))
    >>> _settled(1.0, 4.0, 0.05, (0.5, 3.5))  # grew past the top: room to grow on
    (0.85, 4.6)
    """
    if current is not None and current[0] <= low and high <= current[1] \
            and high - low >= 0.5 * (current[1] - current[0]):
        return current
    span = high - low or abs(low) or 1.0
    below = HEADROOM if current is not None and low < current[0] else padding
    above = HEADROOM if current is not None and high > current[1] else padding
    return (low - max(below, padding) * span, high + max(above, padding) * span)


class FigureGrid(pg.GraphicsLayoutWidget):
    """The four figures of one row in a 2 × 2 grid, plus the draggable effect marker.

    Used inside :class:`PlotPanel` and, offscreen, by :func:`paint_tradeoffs`.
    """

    def __init__(self, parent: QWidget | None = None, style: Style | None = None, *,
                 direct: bool = False) -> None:
        super().__init__(parent)
        self.ci.setContentsMargins(4, 4, 4, 4)
        self.ci.setSpacing(6)
        self.plots = {
            name: _Plot(self.ci, row, col, name)
            for name, (row, col) in zip(("effect", "power", "alpha", "runtime"), _GRID,
                                        strict=True)
        }
        for plot in self.plots.values():
            for axis in plot.axes.values():
                axis.direct = direct
            if not direct:
                plot.cache_static_items()
        self.handle = pg.InfiniteLine(angle=90, movable=True, label="",
                                      labelOpts={"position": 0.97, "anchors": [(0, 0), (0, 0)]})
        self.plots["effect"].item.addItem(self.handle, ignoreBounds=True)
        self.handle.hide()
        self.shown: Tradeoffs | None = None
        self.style = style or style_from_palette(self.palette())
        self.apply_style(self.style)

    def apply_style(self, style: Style) -> None:
        """Recolour and resize text and lines; the data stays."""
        self.style = style
        self.setBackground(style.background)
        for plot in self.plots.values():
            plot.apply_style(style)
        self.handle.setPen(pg.mkPen(style.point, width=1.6 * style.pen_scale))
        self.handle.setHoverPen(pg.mkPen(style.point, width=4.0 * style.pen_scale))
        self.handle.label.setColor(style.point if style.background.lightness() < 128
                                   else style.foreground)
        self.handle.label.setFont(style.font(TICK_POINTS))

    def settle(self) -> None:
        """Apply pending layout changes now (new axis labels), so the next frame is final.

        The view ranges are set by the figures themselves (no auto-range left to the paint,
        which would ask for a second paint of every figure).
        """
        for plot in self.plots.values():
            plot.item.layout.activate()
        self.ci.layout.activate()
        self.plots["runtime"].fit()

    def resizeEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().resizeEvent(event)
        # pyqtgraph resizes once before __init__ ends, and again in close() after it has
        # emptied the scene.
        plots = getattr(self, "plots", None)
        if plots is not None and not self.closed:
            plots["runtime"].fit()

    def blank(self) -> None:
        """Show empty plots (no row selected)."""
        self.shown = None
        for plot in self.plots.values():
            plot.clear()
        self.handle.hide()

    def set_tradeoffs(self, data: Tradeoffs, *, keep_handle: bool = False,
                      sticky: bool = False) -> None:
        """Show a row's figures; ``keep_handle`` leaves the effect marker where the user holds it.

        ``sticky`` keeps each figure's view range while the new data fit it (an edit of the row
        on show); otherwise every figure is ranged on its data.
        """
        self.shown = data
        for figure in data.figures:
            self.plots[figure.name].set_figure(figure, self.style, data.effect_unit,
                                               sticky=sticky)
        x = data.effect.point[0]
        visible = data.effect_editable and not data.effect.reason and math.isfinite(x)
        self.handle.setVisible(visible)
        if visible:
            low, high = (v * data.effect_scale for v in data.effect_span)
            self.handle.setBounds((low, high))
            unit = f" {data.effect_unit}" if data.effect_unit else ""
            self.handle.label.setFormat("{value:+.3g}" + unit + "  ⟷")
            if not keep_handle:
                self.handle.setValue(x)


def slider_step(low: float, high: float) -> float:
    """A round effect step (1, 2 or 5 × 10ᵏ) that cuts ``[low, high]`` into about 200 steps,
    so that the keyboard moves the effect through round values.

    Examples
    --------
    >>> slider_step(0.02, 0.125), slider_step(-0.03, 0.012)
    (0.001, 0.0005)
    """
    raw = (high - low) / SLIDER_STEPS
    power = 10.0 ** math.floor(math.log10(raw))
    return next(m * power for m in (1, 2, 5, 10) if m * power >= raw * (1 - 1e-9))


def _near_edge(data: Tradeoffs) -> bool:
    """Whether the effect sits in the outer 4 % of the effect figure's range."""
    low, high = data.effect_span
    effect = data.effect.point[0] / data.effect_scale
    edge = 0.04 * (high - low)
    return not low + edge <= effect <= high - edge


class PlotPanel(QWidget):
    """The trade-off plots of the selected row, beside the plan table.

    Call :meth:`show_row` after every recomputation; redraws are coalesced with a zero-delay
    timer. Dragging the effect marker on the first plot, or moving the slider below the plots,
    emits :attr:`effect_dragged` ``(row, effect)`` with the effect in the row's own units (a
    fraction of the baseline for relative rows), during the drag (at most every 40 ms) and on
    release.
    """

    effect_dragged = Signal(int, float)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self._text_scale = 1.0
        self.grid = FigureGrid(self)
        self.slider = QSlider(Qt.Orientation.Horizontal, self)
        self.slider.setSingleStep(1)
        self.slider.setPageStep(10)
        self._step = 1.0
        self.slider.setAccessibleName("Effect of the selected row")
        self.slider_label = QLabel("Effect", self)
        self.slider_label.setBuddy(self.slider)
        self.slider_value = QLabel("", self)
        self.slider_value.setMinimumWidth(self.fontMetrics().horizontalAdvance("+00.00 % ") + 8)
        controls = QHBoxLayout()
        controls.setContentsMargins(8, 0, 8, 4)
        controls.addWidget(self.slider_label)
        controls.addWidget(self.slider, 1)
        controls.addWidget(self.slider_value)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.setSpacing(2)
        layout.addWidget(self.grid, 1)
        layout.addLayout(controls)

        self._pending: tuple | None = None
        self._span_key: tuple | None = None
        self._drawn: tuple | None = None
        self._queued: float | None = None
        self._sent: float | None = None
        self._redraw_timer = QTimer(self)
        self._redraw_timer.setSingleShot(True)
        self._redraw_timer.setInterval(0)
        self._redraw_timer.timeout.connect(self._redraw)
        self._drag_timer = QTimer(self)
        self._drag_timer.setSingleShot(True)
        self._drag_timer.setInterval(DRAG_INTERVAL_MS)
        self._drag_timer.timeout.connect(self._send)
        self.grid.handle.sigDragged.connect(self._handle_dragged)
        self.grid.handle.sigPositionChangeFinished.connect(self._handle_released)
        self.slider.valueChanged.connect(self._slider_moved)
        self.slider.sliderReleased.connect(self._flush)
        self._set_controls_enabled(False)

    @property
    def tradeoffs(self) -> Tradeoffs | None:
        """The curve data on show (``None`` before the first row)."""
        return self.grid.shown

    def show_row(self, plan, result, index: int | None, *, now: bool = False) -> None:
        """Show row ``index`` of ``plan`` (with its computed ``result``); ``None`` clears.

        Parameters
        ----------
        plan : fourfold.plan.Plan
        result : fourfold.plan.PlanResult or None
            The plan's computed result; ``None`` computes it.
        index : int or None
            The row, from 0.
        now : bool
            Redraw at once instead of on the coalescing timer: for a caller that is itself
            coalesced (a recompute), so that table and plots are painted in the same pass.
        """
        self._pending = (plan, result, index)
        if now:
            self._redraw_timer.stop()
            self._redraw()
        else:
            self._redraw_timer.start()

    def set_text_scale(self, factor: float) -> None:
        """Scale every text of the plots (1.0 = normal; e.g. 1.5 on a projector)."""
        if not 0.5 <= factor <= 4.0:
            raise ValueError(f"factor must be between 0.5 and 4, got {factor!r}")
        if float(factor) == self._text_scale:
            return
        self._text_scale = float(factor)
        self._restyle()

    def changeEvent(self, event: QEvent) -> None:  # noqa: N802 (Qt's name)
        if event.type() in (QEvent.Type.PaletteChange, QEvent.Type.ApplicationPaletteChange):
            self._restyle()
        super().changeEvent(event)

    def _restyle(self) -> None:
        self.grid.apply_style(style_from_palette(self.palette(), self._text_scale))

    def _redraw(self) -> None:
        if self._pending is None:
            return
        plan, result, index = self._pending
        self._pending = None
        if index is None or not 0 <= index < len(plan.metrics):
            self._drawn = None
            self.grid.blank()
            show_simulation(self.grid, plan, result, None)
            self._set_controls_enabled(False)
            return
        result = compute(plan) if result is None else result
        metric = plan.metrics[index]
        dragging = self.grid.handle.moving or self.slider.isSliderDown()
        # an edit of another row leaves this row's inputs, result and settings as drawn
        drawn = (index, repr(plan.settings), repr(metric), repr(result.rows[index]),
                 result.duration_days)
        if drawn == self._drawn and not dragging:
            return
        self._drawn = None if dragging else drawn
        key = (index, metric.kind, metric.relative, metric.alternative, metric.margin,
               metric.solve)
        span = self.grid.shown.effect_span if key == self._span_key and self.grid.shown else None
        data = tradeoffs(plan, index, result, effect_span=span)
        if span is not None and not dragging and _near_edge(data):
            data = tradeoffs(plan, index, result)  # re-centre once the user lets go
        sticky = key == self._span_key
        self._span_key = key
        self.grid.set_tradeoffs(data, keep_handle=self.grid.handle.moving, sticky=sticky)
        show_simulation(self.grid, plan, result, index)
        self.grid.settle()
        self._sync_slider(data)

    def _set_controls_enabled(self, enabled: bool) -> None:
        for widget in (self.slider, self.slider_label, self.slider_value):
            widget.setEnabled(enabled)
        if not enabled:
            self.slider_value.setText("")

    def _sync_slider(self, data: Tradeoffs) -> None:
        editable = data.effect_editable and not data.effect.reason
        self._set_controls_enabled(editable)
        if not editable or self.slider.isSliderDown():
            return
        effect = data.effect.point[0] / data.effect_scale
        low, high = data.effect_span
        self._step = step = slider_step(low, high)
        self.slider.blockSignals(True)
        self.slider.setRange(math.ceil(low / step - 1e-9), math.floor(high / step + 1e-9))
        self.slider.setValue(round(effect / step))
        self.slider.blockSignals(False)
        self.slider_value.setText(self._effect_text(effect, data))

    @staticmethod
    def _effect_text(effect: float, data: Tradeoffs) -> str:
        shown = format_number(effect * data.effect_scale, signed=True)
        return f"{shown} {data.effect_unit}" if data.effect_unit else shown

    def _slider_moved(self, position: int) -> None:
        data = self.grid.shown
        if data is None:
            return
        effect = round(position * self._step, 12)
        self.slider_value.setText(self._effect_text(effect, data))
        self._queue(effect)
        if not self.slider.isSliderDown():
            self._flush()

    def _handle_dragged(self, line: pg.InfiniteLine) -> None:
        data = self.grid.shown
        if data is not None:
            self._queue(float(line.value()) / data.effect_scale)

    def _handle_released(self, line: pg.InfiniteLine) -> None:
        self._handle_dragged(line)
        self._flush()

    def _queue(self, effect: float) -> None:
        data = self.grid.shown
        if data is not None:  # a pixel's worth of precision: 0.072, not 0.07200000000000001
            low, high = data.effect_span
            effect = round(effect, max(0, math.ceil(-math.log10((high - low) / 1000.0))))
        self._queued = effect
        if not self._drag_timer.isActive():
            self._drag_timer.start()

    def _flush(self) -> None:
        self._drag_timer.stop()
        self._send()

    def _send(self) -> None:
        data = self.grid.shown
        if self._queued is None or data is None:
            return
        effect, self._queued = self._queued, None
        if effect != self._sent:
            self._sent = effect
            self.effect_dragged.emit(data.index, effect)


def paint_tradeoffs(painter: QPainter, rect: QRectF, plan, result, index: int, *,
                    dpi: float | None = None, text_scale: float = 1.0,
                    palette: QPalette | None = None) -> None:
    """Paint row ``index``'s four trade-off figures into ``rect`` with ``painter``.

    The figures are built offscreen at the physical size of ``rect`` (so that fonts keep their
    point sizes on any device), drawn as vectors through ``QGraphicsScene.render`` and then
    deleted. Needs a running ``QApplication``.

    Parameters
    ----------
    painter : QPainter
        Active painter on any device (``QPdfWriter``, ``QImage``, ``QPrinter``).
    rect : QRectF
        Target rectangle in the painter's device coordinates.
    plan : fourfold.plan.Plan
    result : fourfold.plan.PlanResult or None
        The computed plan (``None`` computes it).
    index : int
        The metric row, from 0.
    dpi : float, optional
        Device dots per inch of the painter's device; default its logical resolution.
    text_scale : float
        Text size relative to the window's normal size.
    palette : QPalette, optional
        Colours; default a light palette (paper).

    Examples
    --------
    >>> from PySide6.QtGui import QImage
    >>> from fourfold.plan import Plan
    >>> app = QApplication.instance() or QApplication([])
    >>> image = QImage(800, 600, QImage.Format.Format_ARGB32)
    >>> image.fill(0xFFFFFFFF)
    >>> painter = QPainter(image)
    >>> paint_tradeoffs(painter, QRectF(0, 0, 800, 600), Plan.empty(), None, 0)
    >>> painter.end()
    True
    """
    if QApplication.instance() is None:
        raise RuntimeError("paint_tradeoffs needs a QApplication")
    device_dpi = float(dpi or painter.device().logicalDpiX())
    grid = FigureGrid(direct=True)
    grid.setAttribute(Qt.WidgetAttribute.WA_DontShowOnScreen, True)
    screen_dpi = float(grid.logicalDpiX() or SCREEN_DPI)
    width = max(1, round(rect.width() / device_dpi * screen_dpi))
    height = max(1, round(rect.height() / device_dpi * screen_dpi))
    scale = rect.width() / width
    grid.apply_style(style_from_palette(palette or _paper(), text_scale, pen_scale=scale,
                                        pixel_dpi=screen_dpi))
    grid.resize(width, height)
    try:
        grid.show()
        result = compute(plan) if result is None else result
        grid.set_tradeoffs(tradeoffs(plan, index, result))
        show_simulation(grid, plan, result, index)
        grid.handle.hide()
        # Posted events only (layout requests): no timers or input run in the middle of an
        # export.
        QApplication.sendPostedEvents()
        grid.settle()
        for plot in grid.plots.values():
            plot.legend.updateSize()
        for item in grid.scene().items():
            if isinstance(item, pg.ScatterPlotItem):  # markers are sized in device pixels
                item.setExportMode(True, {"antialias": True, "resolutionScale": scale})
        QApplication.sendPostedEvents()
        painter.save()
        try:
            painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            painter.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
            grid.scene().render(painter, rect, QRectF(0, 0, width, height))
        finally:
            painter.restore()
    finally:
        grid.close()
        grid.deleteLater()
        QApplication.sendPostedEvents(grid, QEvent.Type.DeferredDelete)


def _paper() -> QPalette:
    """A light palette for printed figures, independent of the window's scheme."""
    palette = QPalette()
    palette.setColor(QPalette.ColorRole.Base, QColor("#ffffff"))
    palette.setColor(QPalette.ColorRole.Window, QColor("#ffffff"))
    palette.setColor(QPalette.ColorRole.WindowText, QColor("#1c2126"))
    palette.setColor(QPalette.ColorRole.Highlight, QColor("#2d6a6f"))
    return palette
