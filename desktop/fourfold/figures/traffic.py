"""The traffic model drawn with a plain QPainter: eligible and analysed units by day.

The eligible units (the reach curve, or the daily units times the days) are a solid line over
the days the curve observed and a dashed one beyond, where the fitted model extrapolates them,
with the stated error as a band; the analysed units (after the ramp-up's shares and the
burn-in, all arms) are a second line; the reach curve's own points are dots; vertical lines
mark the curve's last day and the plan's duration. The numbers come from
:func:`fourfold.export.traffic.curve` (or the same dict built elsewhere); nothing is computed
here. :func:`paint_traffic` draws onto any painter (the window's dialog, a PDF page).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QPainter, QPainterPath, QPen, QPolygonF

from fourfold.figures.axes import compact
from fourfold.figures.style import begin_painting


@dataclass(frozen=True)
class TrafficStyle:
    """Colours and text size of the figure: ``eligible`` the eligible units' line, ``analysed``
    the analysed units'."""

    foreground: QColor
    muted: QColor
    grid: QColor
    analysed: QColor
    eligible: QColor
    points: float = 9.0


def nice_ticks(high: float, count: int = 5) -> list[float]:
    """Round tick values from 0 to about ``high``.

    Examples
    --------
    >>> nice_ticks(47.0), nice_ticks(1_230_000.0, 4)
    ([0.0, 10.0, 20.0, 30.0, 40.0], [0.0, 500000.0, 1000000.0])
    """
    if not high > 0:
        return [0.0]
    raw = high / count
    power = 10.0 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1.0, 2.0, 5.0, 10.0) if m * power >= raw)
    return [k * step for k in range(int(high // step) + 1)]


def paint_traffic(painter: QPainter, rect: QRectF, curve: dict, style: TrafficStyle,
                  title: str = "") -> None:
    """Draw ``curve`` (see the module notes) into ``rect``.

    Text is sized in points, lines in screen pixels scaled to the device's resolution.
    """
    px, font = begin_painting(painter, style.points)
    metrics = painter.fontMetrics()
    line = metrics.height()
    top = rect.top()
    if title:
        bold = QFont(font)
        bold.setBold(True)
        painter.setFont(bold)
        painter.setPen(style.foreground)
        painter.drawText(QRectF(rect.left(), top, rect.width(), line),
                         Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter, title)
        painter.setFont(font)
        top += 1.2 * line
    days = np.asarray(curve["days"], dtype=float)
    high = np.asarray(curve["high"], dtype=float)
    y_high = float(np.nanmax(high)) * 1.05 if high.size else 1.0
    x_high = float(days[-1]) if days.size else 1.0
    y_ticks = nice_ticks(y_high)
    gutter = max(metrics.horizontalAdvance(compact(v)) for v in y_ticks) + 6 * px
    plot = QRectF(rect.left() + gutter, top + 2.4 * line, rect.width() - gutter - 8 * px,
                  rect.bottom() - top - 2.4 * line - 2.4 * line)

    def at(x: float, y: float) -> QPointF:
        return QPointF(plot.left() + plot.width() * x / x_high,
                       plot.bottom() - plot.height() * y / y_high)

    right = Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter
    for value in y_ticks:
        y = at(0.0, value).y()
        painter.setPen(QPen(style.grid, px))
        painter.drawLine(QPointF(plot.left(), y), QPointF(plot.right(), y))
        painter.setPen(style.muted)
        painter.drawText(QRectF(rect.left(), y - line / 2, gutter - 4 * px, line), right,
                         compact(value))
    for value in nice_ticks(x_high, 8):
        x = at(value, 0.0).x()
        painter.drawText(QRectF(x - 30 * px, plot.bottom() + 2 * px, 60 * px, line),
                         Qt.AlignmentFlag.AlignCenter, f"{value:g}")
    painter.drawText(QRectF(plot.left(), plot.bottom() + 1.2 * line, plot.width(), line),
                     Qt.AlignmentFlag.AlignCenter, "days of the test")

    observed = float(curve["observed"])
    beyond = days >= min(observed, x_high)
    if math.isfinite(observed) and beyond.sum() > 1:
        band = QPainterPath()
        band.moveTo(at(days[beyond][0], float(curve["high"][beyond][0])))
        for x, y in zip(days[beyond], np.asarray(curve["high"])[beyond], strict=True):
            band.lineTo(at(x, y))
        for x, y in zip(days[beyond][::-1], np.asarray(curve["low"])[beyond][::-1],
                        strict=True):
            band.lineTo(at(x, y))
        band.closeSubpath()
        shade = QColor(style.eligible)
        shade.setAlphaF(0.15)
        painter.fillPath(band, shade)
    inside = days <= observed
    eligible = np.asarray(curve["eligible"], dtype=float)
    _line(painter, [at(x, y) for x, y in zip(days[inside], eligible[inside], strict=True)],
          style.eligible, Qt.PenStyle.SolidLine, px)
    if beyond.sum() > 1:
        _line(painter, [at(x, y) for x, y in zip(days[beyond], eligible[beyond], strict=True)],
              style.eligible, Qt.PenStyle.DashLine, px)
    _line(painter, [at(x, y) for x, y in zip(days, curve["analysed"], strict=True)],
          style.analysed, Qt.PenStyle.SolidLine, px)
    painter.setPen(QPen(style.eligible, px))
    painter.setBrush(style.eligible)
    for x, y in np.asarray(curve.get("points", np.empty((0, 2)))).reshape(-1, 2):
        if x <= x_high:
            painter.drawEllipse(at(x, y), 2.2 * px, 2.2 * px)
    painter.setBrush(Qt.BrushStyle.NoBrush)

    marks = []
    if math.isfinite(observed) and observed < x_high:
        marks.append((observed, f"curve ends, day {observed:g}"))
    duration = float(curve.get("duration", math.nan))
    if math.isfinite(duration) and duration <= x_high:
        marks.append((duration, f"test runs {duration:g} d"))
    for k, (x, text) in enumerate(marks):
        point = at(x, 0.0)
        pen = QPen(style.foreground if k == len(marks) - 1 else style.muted, px)
        pen.setStyle(Qt.PenStyle.DotLine)
        painter.setPen(pen)
        painter.drawLine(QPointF(point.x(), plot.top()), QPointF(point.x(), plot.bottom()))
        width = metrics.horizontalAdvance(text) + 4 * px
        left = point.x() + 3 * px if point.x() + width < plot.right() else point.x() - width
        painter.drawText(QRectF(left, plot.top() + k * line, width, line),
                         Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter, text)

    painter.setPen(QPen(style.foreground, px))
    painter.drawLine(plot.bottomLeft(), plot.bottomRight())
    painter.drawLine(plot.bottomLeft(), plot.topLeft())
    eligible_text = ("distinct eligible units (dashed: extrapolated, band: stated error)"
                     if curve.get("kind") == "reach" else "eligible units")
    items = [(style.eligible, eligible_text), (style.analysed, "analysed units, all arms")]
    x, middle = rect.left(), top + 0.6 * line
    painter.setPen(style.foreground)
    for colour, text in items:
        if x + 30 * px + metrics.horizontalAdvance(text) > rect.right() and x > rect.left():
            x, middle = rect.left(), middle + 1.1 * line
        painter.fillRect(QRectF(x, middle - 2 * px, 14 * px, 4 * px), colour)
        painter.drawText(QPointF(x + 18 * px, middle + metrics.ascent() / 2 - px), text)
        x += 30 * px + metrics.horizontalAdvance(text)
    painter.restore()


def _line(painter: QPainter, points: list[QPointF], colour: QColor, dash, px: float) -> None:
    if len(points) < 2:
        return
    pen = QPen(colour, 1.8 * px)
    pen.setStyle(dash)
    painter.setPen(pen)
    painter.drawPolyline(QPolygonF(points))
