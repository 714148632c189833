"""The data of one trade-off figure drawn by a single graphics item, and its legend swatches.

A figure shows two lines (the row's design and a neighbouring choice), faint lines of the same
row in other scenarios, and two sets of round markers (the weekly marks and the design point).
pyqtgraph's curve and scatter items draw these just as well, but each of them costs Python calls
on every update and every repaint (bounds, pixel vectors, paint); a figure redrawn on every
keystroke spends most of its frame there. :class:`SeriesLayer` keeps the series in one
item: lines as painter paths in view coordinates, markers as circles of a fixed size in device
pixels (so that they stay round on log axes and scale with the page on a PDF), and the markers'
labels as text in scene pixels (sized like every other text of the figure, and scaled with it
onto a page). :class:`Swatch` draws a series' line or marker in a legend.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import (
    QBrush,
    QColor,
    QFont,
    QFontMetricsF,
    QPaintEngine,
    QPainter,
    QPainterPath,
    QPen,
    QPixmap,
    QStaticText,
)

LINES = ("others", "neighbour", "curve")
DOTS = ("marks", "point")
SERIES = LINES + DOTS
"""The series of a figure, in drawing order (later ones on top)."""

_EMPTY = np.empty(0)
LABEL_PAD = 2.0
"""Room around a label's text, in scene pixels (its fill covers it)."""


@dataclass
class _Labels:
    """The labels of one marker series: one text per marker on show."""

    font: QFont = field(default_factory=QFont)
    colour: QColor = field(default_factory=QColor)
    anchor: tuple[float, float] = (0.0, 0.0)
    offset: tuple[float, float] = (0.0, 0.0)
    places: list = field(default_factory=list)  # per label: (anchor, offset), or None
    fill: QBrush | None = None
    texts: list[str] = field(default_factory=list)
    shown: list[bool] = field(default_factory=list)
    metrics: QFontMetricsF = field(default_factory=lambda: QFontMetricsF(QFont()))
    laid_out: dict[str, QStaticText] = field(default_factory=dict)

    def static(self, text: str) -> QStaticText:
        """``text`` laid out once (labels repeat from frame to frame)."""
        found = self.laid_out.get(text)
        if found is None:
            if len(self.laid_out) > 256:
                self.laid_out.clear()
            found = self.laid_out[text] = QStaticText(text)
            found.setTextFormat(Qt.TextFormat.PlainText)
        return found


class SeriesLayer(pg.GraphicsObject):
    """Two lines and two sets of markers of one figure, in a plot's view box.

    Series are set with data values (as the figure gives them) and their view coordinates
    (log10 on log axes); :meth:`points` returns the former, :meth:`view_points` the latter.
    """

    def __init__(self) -> None:
        super().__init__()
        self._data = {name: (_EMPTY, _EMPTY) for name in SERIES}
        self._view = {name: (_EMPTY, _EMPTY) for name in SERIES}
        self._paths = {name: QPainterPath() for name in LINES}
        self._pens = {name: QPen() for name in SERIES}
        self._brushes = {name: QBrush() for name in DOTS}
        self._sizes = {name: 8.0 for name in DOTS}
        self._labels = {name: _Labels() for name in DOTS}
        self._sprites: dict[tuple[str, float], QPixmap] = {}

    def set_line_style(self, name: str, pen: QPen) -> None:
        """Pen of line ``name`` (cosmetic: its width is in device pixels)."""
        self._pens[_line(name)] = QPen(pen)
        self.update()

    def set_dot_style(self, name: str, size: float, pen: QPen, brush: QBrush) -> None:
        """Diameter (device pixels), outline and fill of the markers of ``name``."""
        self._sizes[_dot(name)] = float(size)
        self._pens[name] = QPen(pen)
        self._brushes[name] = QBrush(brush)
        self._sprites = {key: sprite for key, sprite in self._sprites.items() if key[0] != name}
        self.update()

    def set_label_style(self, name: str, font: QFont, colour: QColor,
                        anchor: tuple[float, float], fill: QBrush | None = None) -> None:
        """Font, colour and placement of the labels of the markers of ``name``.

        ``anchor`` is the point of a label's box put at its marker, as fractions of the box
        (``(1, 0)``: top right corner; negative moves the box further right or down).
        """
        labels = self._labels[_dot(name)]
        labels.font, labels.colour, labels.anchor = QFont(font), QColor(colour), anchor
        labels.offset = (0.0, 0.0)
        labels.fill = None if fill is None else QBrush(fill)
        labels.metrics = QFontMetricsF(labels.font)
        labels.laid_out.clear()
        self.update()

    def set_labels(self, name: str, texts, shown=None, places=None) -> None:
        """Label the markers of ``name`` on show, in order (``shown``: which to draw;
        ``places``: see :meth:`set_label_places`)."""
        labels = self._labels[_dot(name)]
        labels.texts = list(texts)
        labels.places = [] if places is None else list(places)
        labels.shown = [True] * len(labels.texts) if shown is None else [bool(v) for v in shown]
        if len(labels.shown) != len(labels.texts):
            raise ValueError(f"shown must have one flag per label ({len(labels.texts)}), got "
                             f"{len(labels.shown)}")
        self.update()

    def labels(self, name: str) -> list[str]:
        """The labels of the markers of ``name`` that are drawn."""
        labels = self._labels[_dot(name)]
        return [text for text, shown in zip(labels.texts, labels.shown, strict=True) if shown]

    def set_label_anchor(self, name: str, anchor: tuple[float, float],
                         offset: tuple[float, float] = (0.0, 0.0)) -> None:
        """Put the labels of ``name`` elsewhere around their markers: ``anchor`` as in
        :meth:`set_label_style`, then moved by ``offset`` (scene pixels)."""
        labels = self._labels[_dot(name)]
        if (labels.anchor, labels.offset) != (anchor, offset):
            labels.anchor, labels.offset = anchor, offset
            self.update()

    def set_label_places(self, name: str, places) -> None:
        """Put each label of ``name`` at its own ``(anchor, offset)`` around its marker (see
        :meth:`set_label_anchor`); ``None`` for one keeps the series' place."""
        labels = self._labels[_dot(name)]
        labels.places = list(places)
        self.update()

    def label_boxes(self, name: str) -> list[QRectF | None]:
        """Where each label of ``name`` is drawn, in scene coordinates (``None`` for one not
        drawn), in the order of :meth:`set_labels`."""
        labels = self._labels[_dot(name)]
        scene = self.sceneTransform()
        boxes: list[QRectF | None] = []
        for number, (x, y, text, shown) in enumerate(zip(*self._view[name], labels.texts,
                                                         labels.shown, strict=False)):
            boxes.append(_label_box(labels, scene.map(QPointF(float(x), float(y))), text,
                                    number) if shown and text else None)
        return boxes

    def label_width(self, name: str) -> float:
        """Width of the widest label of ``name``, box included (scene pixels; 0 without any)."""
        labels = self._labels[_dot(name)]
        return max((labels.metrics.horizontalAdvance(text) + 2 * LABEL_PAD
                    for text in labels.texts), default=0.0)

    def set_series(self, name: str, x, y, view_x, view_y) -> None:
        """Show series ``name``: data values ``x, y`` at view coordinates ``view_x, view_y``.

        Lines break at non-finite points; markers skip them.
        """
        x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
        view_x, view_y = np.asarray(view_x, dtype=float), np.asarray(view_y, dtype=float)
        if name in DOTS:
            finite = np.isfinite(view_x) & np.isfinite(view_y)
            x, y, view_x, view_y = x[finite], y[finite], view_x[finite], view_y[finite]
        elif name in LINES:
            self._paths[name] = (pg.arrayToQPath(view_x, view_y, connect="finite")
                                 if view_x.size else QPainterPath())
        else:
            raise ValueError(f"name must be one of {SERIES}, got {name!r}")
        self._data[name] = (x, y)
        self._view[name] = (view_x, view_y)
        self.update()

    def clear(self) -> None:
        """Show no data."""
        for name in SERIES:
            self.set_series(name, _EMPTY, _EMPTY, _EMPTY, _EMPTY)
        for name in DOTS:
            self.set_labels(name, [])

    def points(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """The data values on show in series ``name`` (markers: the finite ones)."""
        return self._data[name]

    def view_points(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """The view coordinates on show in series ``name``."""
        return self._view[name]

    def line_pen(self, name: str) -> QPen:
        """The pen of line ``name``."""
        return self._pens[_line(name)]

    def dot_style(self, name: str) -> tuple[float, QPen, QBrush]:
        """Diameter, outline and fill of the markers of ``name``."""
        return self._sizes[_dot(name)], self._pens[name], self._brushes[name]

    def viewRangeChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook)
        self.prepareGeometryChange()

    def boundingRect(self) -> QRectF:  # noqa: N802 (Qt's name)
        view = self.getViewBox()
        return QRectF() if view is None else view.viewRect()

    def paint(self, painter: QPainter, *_args) -> None:
        for name in LINES:
            if not self._paths[name].isEmpty():
                painter.setPen(self._pens[name])
                painter.drawPath(self._paths[name])
        transform = painter.transform()
        painter.resetTransform()  # markers in device pixels, round on any axis scale
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        # on screen a marker is a ready-drawn sprite; on a page (PDF) a vector circle
        raster = painter.paintEngine().type() == QPaintEngine.Type.Raster
        ratio = painter.device().devicePixelRatioF() if raster else 1.0
        for name in DOTS:
            view_x, view_y = self._view[name]
            if view_x.size == 0:
                continue
            radius = self._sizes[name] / 2.0
            sprite = self._sprite(name, ratio) if raster else None
            painter.setPen(self._pens[name])
            painter.setBrush(self._brushes[name])
            for x, y in zip(view_x, view_y, strict=True):
                centre = transform.map(QPointF(float(x), float(y)))
                if sprite is None:
                    painter.drawEllipse(centre, radius, radius)
                else:
                    half = sprite.width() / ratio / 2.0
                    painter.drawPixmap(QPointF(centre.x() - half, centre.y() - half), sprite)
        self._paint_labels(painter, transform)
        painter.setTransform(transform)

    def _sprite(self, name: str, ratio: float) -> QPixmap:
        """The marker of ``name`` drawn once into a pixmap for a device of pixel ratio ``ratio``."""
        sprite = self._sprites.get((name, ratio))
        if sprite is None:
            size, pen = self._sizes[name], self._pens[name]
            side = size + pen.widthF() + 2.0
            pixels = max(1, round(side * ratio))
            sprite = QPixmap(pixels, pixels)
            sprite.setDevicePixelRatio(ratio)
            sprite.fill(Qt.GlobalColor.transparent)
            drawing = QPainter(sprite)
            drawing.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            drawing.setPen(pen)
            drawing.setBrush(self._brushes[name])
            middle = pixels / ratio / 2.0
            drawing.drawEllipse(QPointF(middle, middle), size / 2.0, size / 2.0)
            drawing.end()
            self._sprites[(name, ratio)] = sprite
        return sprite

    def _paint_labels(self, painter: QPainter, transform) -> None:
        """Labels in scene pixels: the view's scale is left out, a page's scale kept."""
        scene = self.sceneTransform()
        inverse, invertible = scene.inverted()
        if not invertible:
            return
        painter.setTransform(inverse * transform)
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, False)
        for name in DOTS:
            labels = self._labels[name]
            if not any(labels.shown):
                continue
            painter.setFont(labels.font)
            for number, (x, y, text, shown) in enumerate(zip(
                    *self._view[name], labels.texts, labels.shown, strict=False)):
                if not shown or not text:
                    continue
                box = _label_box(labels, scene.map(QPointF(float(x), float(y))), text, number)
                if labels.fill is not None:
                    painter.fillRect(box, labels.fill)
                painter.setPen(labels.colour)
                painter.drawStaticText(QPointF(box.x() + LABEL_PAD, box.y() + LABEL_PAD),
                                       labels.static(text))


class Swatch(pg.ItemSample):
    """A legend entry's sample: the line or the marker of one series of a layer.

    Unlike pyqtgraph's sample, a click does not hide the series.
    """

    def __init__(self, layer: SeriesLayer, name: str) -> None:
        if name not in SERIES:
            raise ValueError(f"name must be one of {SERIES}, got {name!r}")
        super().__init__(layer)
        self.name = name

    def paint(self, painter: QPainter, *_args) -> None:
        layer: SeriesLayer = self.item
        if self.name in LINES:
            painter.setPen(layer.line_pen(self.name))
            painter.drawLine(0, 11, 20, 11)
            return
        size, pen, brush = layer.dot_style(self.name)
        centre = painter.transform().map(QPointF(10.0, 11.0))
        painter.resetTransform()  # device pixels, as the layer draws its markers
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        painter.setPen(pen)
        painter.setBrush(brush)
        painter.drawEllipse(centre, size / 2.0, size / 2.0)

    def mouseClickEvent(self, event) -> None:  # noqa: N802 (pyqtgraph's name)
        event.ignore()


def _label_box(labels: _Labels, at: QPointF, text: str, number: int) -> QRectF:
    """The box of label ``number`` whose marker is at ``at`` (scene coordinates)."""
    place = labels.places[number] if number < len(labels.places) else None
    (across, down), offset = place if place is not None else (labels.anchor, labels.offset)
    width = labels.metrics.horizontalAdvance(text) + 2 * LABEL_PAD
    height = labels.metrics.height() + 2 * LABEL_PAD
    return QRectF(at.x() - across * width + offset[0], at.y() - down * height + offset[1],
                  width, height)


def _line(name: str) -> str:
    if name not in LINES:
        raise ValueError(f"name must be one of {LINES}, got {name!r}")
    return name


def _dot(name: str) -> str:
    if name not in DOTS:
        raise ValueError(f"name must be one of {DOTS}, got {name!r}")
    return name
