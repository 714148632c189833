"""The data of one trade-off figure drawn by a single graphics item, and its legend swatches.

A figure shows two lines (the row's design and a neighbouring choice) and two sets of round
markers (the weekly marks and the design point). pyqtgraph's curve and scatter items draw
these just as well, but each of them costs Python calls on every update and every repaint
(bounds, pixel vectors, paint); a figure redrawn on every keystroke spends most of its frame
there. :class:`SeriesLayer` keeps the four series in one item: lines as painter paths in view
coordinates, markers as circles of a fixed size in device pixels (so that they stay round on
log axes and scale with the page on a PDF). :class:`Swatch` draws a series' line or marker in
a legend.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QPointF, QRectF
from PySide6.QtGui import QBrush, QPainter, QPainterPath, QPen

LINES = ("neighbour", "curve")
DOTS = ("marks", "point")
SERIES = LINES + DOTS
"""The series of a figure, in drawing order (later ones on top)."""

_EMPTY = np.empty(0)


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

    def set_line_style(self, name: str, pen: QPen) -> None:
        """Pen of line ``name`` (cosmetic: its width is in device pixels)."""
        self._pens[_line(name)] = QPen(pen)
        self.update()

    def set_dot_style(self, name: str, size: float, pen: QPen, brush: QBrush) -> None:
        """Diameter (device pixels), outline and fill of the markers of ``name``."""
        self._sizes[_dot(name)] = float(size)
        self._pens[name] = QPen(pen)
        self._brushes[name] = QBrush(brush)
        self.update()

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
        for name in DOTS:
            view_x, view_y = self._view[name]
            if view_x.size == 0:
                continue
            radius = self._sizes[name] / 2.0
            painter.setPen(self._pens[name])
            painter.setBrush(self._brushes[name])
            for x, y in zip(view_x, view_y, strict=True):
                painter.drawEllipse(transform.map(QPointF(float(x), float(y))), radius, radius)
        painter.setTransform(transform)


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


def _line(name: str) -> str:
    if name not in LINES:
        raise ValueError(f"name must be one of {LINES}, got {name!r}")
    return name


def _dot(name: str) -> str:
    if name not in DOTS:
        raise ValueError(f"name must be one of {DOTS}, got {name!r}")
    return name
