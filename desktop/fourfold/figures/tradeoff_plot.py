"""One trade-off figure on a pyqtgraph plot item: its axes, series, texts and view range.

A figure (:class:`fourfold.plan.tradeoffs.Figure`) shows the row's design as a solid curve with
its design point, one neighbouring choice as a faint dashed curve, on the runtime figure the
weekly marks, and, when asked, the same row's curves in other scenarios as faint grey lines.
:class:`FigurePlot` creates the items once and updates them with each new figure; it keeps its
view range while the data fit it, so that the axes keep their pictures.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFontMetricsF
from PySide6.QtWidgets import QGraphicsItem

from fourfold.figures.axes import CompactAxis
from fourfold.figures.layer import SERIES, SeriesLayer, Swatch
from fourfold.figures.placement import first_clear, place_line_label, text_box
from fourfold.figures.style import Style
from fourfold.formatting import format_count, format_days, format_number
from fourfold.plan.tradeoffs import Figure

TICK_POINTS = 9.0
LABEL_POINTS = 9.5
TITLE_POINTS = 10.5
MARK_ANCHOR = (1.0, -0.1)  # a week's label sits below its point, to the left
WIDEST_TICK = "−00.0k"
PADDING = 0.03
HEADROOM = 0.2  # room left beyond data that grew past a kept range
LEGEND_GAP = 3.0  # pyqtgraph's LegendItem adds 3 px after each sample and label

OTHERS = "other scenarios"

LEGEND_LEFT = (8, 8)
LEGEND_RIGHT = (-8, 8)
LEGEND_LOW_RIGHT = (-8, -8)
_POINT_ANCHOR = {"effect": (1.08, -0.15), "power": (-0.08, -0.15), "alpha": (1.08, -0.15),
                 "runtime": (0.0, 0.0)}
_AROUND = {"left below": ((1.0, 0.0), (-1, 1)), "right below": ((0.0, 0.0), (1, 1)),
           "left above": ((1.0, 1.0), (-1, -1)), "right above": ((0.0, 1.0), (1, -1))}
_FIRST = {"effect": "left below", "power": "right below", "alpha": "left below",
          "runtime": "left below"}
POINT_PLACES = {name: (_AROUND[first], *(place for key, place in _AROUND.items()
                                         if key != first))
                for name, first in _FIRST.items()}
"""Places of the design point's label, the usual one first: the label's corner at the marker
(anchor) and the direction it is moved by the marker's radius, left or right, below or
above."""
HANDLE_POSITIONS = (0.97, 0.85, 0.72, 0.6, 0.48, 0.36, 0.24, 0.12)
HANDLE_ANCHORS = ((0.0, 0.0), (1.0, 0.0))
GUIDE_POSITIONS = (0.45, 0.3, 0.6, 0.15, 0.75, 0.9)
GUIDE_ANCHORS = ((0.0, 0.5), (1.0, 0.5))


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
        return f"{effect} needs {format_days(x)} d"
    return format_count(y)


class FigurePlot:
    """One figure's plot item and the items on it, created once and updated with ``setData``."""

    def __init__(self, layout: pg.GraphicsLayout, row: int, col: int, name: str) -> None:
        self.name = name
        self.axes = {"bottom": CompactAxis("bottom"), "left": CompactAxis("left")}
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
        self._others_shown: tuple[Figure, ...] = ()
        self._unit = ""
        self._texts: tuple | None = None
        self._range: tuple[tuple[float, float], tuple[float, float]] | None = None
        self._log = (False, False)
        self._corner: tuple[int, int] | None = None
        self._pen_scale = 1.0
        self._legend_wanted = False

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
        self._pen_scale = scale
        faint = QColor(style.foreground)
        faint.setAlpha(80)
        self.layer.set_line_style("others", pg.mkPen(faint, width=2.0 * scale))
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
            self.set_figure(self._figure, style, self._unit, others=self._others_shown)

    def set_figure(self, figure: Figure, style: Style, unit: str = "", *,
                   sticky: bool = False, others: tuple[Figure, ...] = ()) -> None:
        """Show ``figure``; with ``sticky`` the view range stays while the data fit it.

        ``others`` are the same figure of the row in other scenarios, drawn as faint lines.
        """
        self._figure = figure
        self._others_shown = others
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
        for side in self.axes:  # a figure that cannot be drawn shows its reason, no axes
            if self.item.getAxis(side).isVisible() == empty:
                self.item.showAxis(side, not empty)
        log = (figure.x_log and not empty, figure.y_log and not empty)
        if log != self._log:
            self._log = log
            self._range = None
        self.item.setLogMode(x=log[0], y=log[1])
        x, y = figure.point
        others = tuple(other for other in others if not other.reason) if not empty else ()
        data = {"others": _joined(others),
                "curve": (figure.curve.x, figure.curve.y),
                "neighbour": (figure.neighbour.x, figure.neighbour.y),
                "marks": (figure.marks.x, figure.marks.y), "point": ([x], [y])}
        for name, (xs, ys) in data.items():
            self.layer.set_series(name, xs, ys, _view(xs, log[0]), _view(ys, log[1]))
        self._set_legend(figure, bool(others))
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
        self._legend_wanted = False
        self.item.setTitle(None)
        self._texts = None
        self._range = None

    def _set_legend(self, figure: Figure, others: bool = False) -> None:
        texts = [figure.curve.label, figure.neighbour.label]
        if figure.name == "runtime":
            texts.append(_point_text(figure, self._unit))
        changed = False
        listed = any(label.text == OTHERS for _, label in self.legend.items)
        if others != listed:  # the swatch is in the legend while others are drawn
            if others:
                self.legend.addItem(Swatch(self.layer, "others"), OTHERS)
            else:
                self.legend.removeItem(OTHERS)
            changed = True
        for (_, label), text in zip(self.legend.items[:len(texts)], texts, strict=True):
            if label.text != text:
                label.setText(text)
                changed = True
        self._legend_wanted = not figure.reason and bool(figure.curve.label)
        self.legend.setVisible(self._legend_wanted)
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
        xs, _ = self.layer.points("marks")
        texts = self._mark_texts()
        self.layer.set_labels("marks", texts)
        count, step = len(texts), 1
        figure = self._figure
        if count > 1 and figure is not None:
            span = float(np.nanmax(figure.curve.x) - np.nanmin(figure.curve.x)) or 1.0
            spacing = self.item.vb.width() * float(xs[1] - xs[0]) / span
            step = max(1, math.ceil(self.layer.label_width("marks") * 1.15 / max(spacing, 1.0)))
        self.layer.set_labels("marks", texts, [(count - 1 - i) % step == 0
                                               for i in range(count)])

    def label_boxes(self) -> dict[str, list[QRectF]]:
        """The boxes of the texts and markers on show, in scene coordinates, by kind: "area"
        (the plot area), "legend", "point label", "guide label", "mark labels", "markers",
        "figure" (the whole figure) and "axis titles" (the effect marker's label is
        :meth:`TradeoffFigures.label_boxes`')."""
        boxes: dict[str, list[QRectF]] = {"area": [self.item.vb.sceneBoundingRect()]}
        boxes["figure"] = [self.item.sceneBoundingRect()]
        boxes["axis titles"] = [_title_box(axis.label) for axis in self.axes.values()
                                if axis.isVisible() and axis.label.isVisible()
                                and axis.label.toPlainText()]
        boxes["legend"] = [self.legend.sceneBoundingRect()] if self.legend.isVisible() else []
        boxes["point label"] = [box for box in self.layer.label_boxes("point") if box]
        boxes["mark labels"] = [box for box in self.layer.label_boxes("marks") if box]
        label = self.guide.label
        boxes["guide label"] = ([text_box(label)]
                                if self.guide.isVisible() and label.isVisible() else [])
        boxes["markers"] = self._marker_boxes()
        return boxes

    def _marker_boxes(self) -> list[QRectF]:
        """The round markers (weeks and the design point) as boxes in scene coordinates."""
        boxes = []
        scene = self.layer.sceneTransform()
        for name in ("marks", "point"):
            radius = self.layer.dot_style(name)[0] / 2.0 / self._pen_scale
            for x, y in zip(*self.layer.view_points(name), strict=True):
                at = scene.map(QPointF(float(x), float(y)))
                boxes.append(QRectF(at.x() - radius, at.y() - radius, 2 * radius, 2 * radius))
        return boxes

    def hidden_axis_titles(self) -> list[str]:
        """The sides whose axis is on show without its title (:meth:`_fit_axis_titles`)."""
        return [side for side, axis in self.axes.items()
                if axis.isVisible() and axis.label.toPlainText() and not axis.label.isVisible()]

    def _fit_axis_titles(self) -> None:
        """Show an axis title only where its text stays within the figure: a figure made too
        small for it shows none rather than one cut off or running into its neighbour's."""
        whole = self.item.sceneBoundingRect()
        changed = False
        for side, axis in self.axes.items():
            label = axis.label
            if not axis.isVisible() or not label.toPlainText():
                continue
            half = (label.boundingRect().width() - 2 * label.document().documentMargin()) / 2
            centre = axis.sceneBoundingRect().center()
            fits = (whole.top() <= centre.y() - half and centre.y() + half <= whole.bottom()
                    if side == "left" else
                    whole.left() <= centre.x() - half and centre.x() + half <= whole.right())
            if fits != label.isVisible():
                axis.showLabel(fits)
                changed = True
        if changed:
            self.item.layout.activate()

    def place_labels(self, line: pg.InfiniteLine | None = None) -> None:
        """Put the texts where they overlap neither each other nor a marker, inside the plot
        area; a text with no such place is left out (an axis title too, where it would leave
        the figure).

        In order: the design point's label (below or above it, left or right), the label of
        ``line`` (the effect marker, moved along it and to either side), the guide's label,
        then the week labels (those in the way are left out).
        """
        self._fit_axis_titles()
        box = self.item.vb
        box.updateMatrix()  # the view range set since the last paint, as the paint will use
        area = box.sceneBoundingRect()
        taken = self._marker_boxes()
        legend = self.legend.sceneBoundingRect()
        # a plot too small for its legend shows none rather than one spilling out of it
        self.legend.setVisible(self._legend_wanted and area.contains(legend))
        if self.legend.isVisible():
            taken.append(legend)
        self._place_point_label(area, taken)
        for moving, positions, anchors in ((line, HANDLE_POSITIONS, HANDLE_ANCHORS),
                                           (self.guide, GUIDE_POSITIONS, GUIDE_ANCHORS)):
            if moving is not None and moving.isVisible():
                box = place_line_label(moving.label, positions, anchors, area, taken)
                if box is not None:
                    taken.append(box)
        self._place_mark_labels(area, taken)

    def _place_mark_labels(self, area: QRectF, taken: list[QRectF]) -> None:
        """Each week's label in its first clear place around its marker, or left out."""
        wanted = [bool(box) for box in self.layer.label_boxes("marks")]
        if not any(wanted):
            return
        texts = self._mark_texts()
        clearance = self.layer.dot_style("marks")[0] / 2.0 / self._pen_scale + 1.0
        around = [(anchor, (step_x * clearance, step_y * clearance * 0.4))
                  for anchor, (step_x, step_y) in _AROUND.values()]
        chosen: list = [None] * len(texts)
        candidates = []
        for place in around:  # every label in each place, measured once per place
            self.layer.set_labels("marks", texts, wanted, [place] * len(texts))
            candidates.append(self.layer.label_boxes("marks"))
        for number, want in enumerate(wanted):
            if not want:
                continue
            found = first_clear([boxes[number] for boxes in candidates], area, taken)
            if found is not None:
                chosen[number] = around[found]
                taken.append(candidates[found][number])
        self.layer.set_labels("marks", texts, [place is not None for place in chosen], chosen)

    def _place_point_label(self, area: QRectF, taken: list[QRectF]) -> None:
        """The design point's label in its first clear place, or left out."""
        figure = self._figure
        if (figure is None or figure.reason or self.name == "runtime"
                or len(self.layer.points("point")[0]) != 1):
            return
        self.layer.set_labels("point", [_point_text(figure, self._unit)])
        clearance = self.layer.dot_style("point")[0] / 2.0 / self._pen_scale + 1.0
        places = [(anchor, (step_x * clearance, step_y * clearance * 0.4))
                  for anchor, (step_x, step_y) in POINT_PLACES[self.name]]
        boxes = []
        for anchor, offset in places:
            self.layer.set_label_anchor("point", anchor, offset)
            boxes.append(self.layer.label_boxes("point")[0])
        found = first_clear(boxes, area, taken)
        self.layer.set_label_anchor("point", *places[0 if found is None else found])
        self.layer.set_labels("point", [_point_text(figure, self._unit)], [found is not None])
        if found is not None:
            taken.append(boxes[found])

    def _mark_texts(self) -> list[str]:
        return [format_number(float(value)) for value in self.layer.points("marks")[1]]

    def _set_guide(self, figure: Figure) -> None:
        shown = not figure.reason and math.isfinite(figure.guide)
        if shown:
            self.guide.setValue(float(_view(figure.guide, figure.x_log)))
            self.guide.label.setFormat(figure.guide_label)
        self.guide.setVisible(shown)


def _joined(figures: tuple[Figure, ...]) -> tuple[np.ndarray, np.ndarray]:
    """The curves of ``figures`` end to end, a nan between two (the line breaks there)."""
    if not figures:
        return np.empty(0), np.empty(0)
    gap = np.array([np.nan])
    xs = np.concatenate([part for figure in figures for part in (figure.curve.x, gap)])
    ys = np.concatenate([part for figure in figures for part in (figure.curve.y, gap)])
    return xs, ys


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


def _title_box(label) -> QRectF:
    """Where an axis title's text is, in scene coordinates (its item's box less the text
    document's margin)."""
    margin = label.document().documentMargin()
    return label.sceneBoundingRect().adjusted(margin, margin, -margin, -margin)
