"""What moves the duration: horizontal bars of the days a plan needs with one input changed.

One bar per assumption, sorted by swing (the largest first), drawn from the planned duration
to the duration with the input lowered and to the duration with it raised, in two colours,
each end labelled with its days; the input's two values are written under its name. The
numbers come from :func:`fourfold.plan.sensitivity.sensitivity`; nothing is computed here.
:func:`paint_sensitivity` draws onto any painter (the window's widget, an image, a PDF page).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QPainter, QPen

from fourfold.formatting import DASH, format_count, format_number, format_percent
from fourfold.plan.sensitivity import Sensitivity, Swing

SCREEN_DPI = 96.0


@dataclass(frozen=True)
class SensitivityStyle:
    """Colours and text size of the figure: ``lower`` and ``higher`` colour the bars of the
    input lowered and raised."""

    foreground: QColor
    muted: QColor
    grid: QColor
    lower: QColor
    higher: QColor
    points: float = 9.0


def value_text(swing: Swing, value: float) -> str:
    """An input's value as the bar's caption writes it.

    Examples
    --------
    >>> from fourfold.plan.sensitivity import Swing
    >>> share = Swing("Traffic share", "share", 0.6, 0.48, 0.72, 42.0, 28.0, percent=True)
    >>> daily = Swing("Daily units", "daily_units", 42e3, 33.6e3, 50.4e3, 42.0, 28.0)
    >>> value_text(share, 0.48), value_text(daily, 33600.0)
    ('48.0 %', '33,600')
    """
    if swing.percent:
        return format_percent(value)
    if swing.field in ("daily_units", "reach"):
        return format_count(value)
    return format_number(value)


def days_text(days: float) -> str:
    """Days as a bar's end label: "42 d" ("—" when the plan cannot be computed there).

    Examples
    --------
    >>> days_text(42.0), days_text(10.5), days_text(float("nan"))
    ('42 d', '10.5 d', '—')
    """
    return DASH if not math.isfinite(days) else f"{format_number(days)} d"


def caption(swing: Swing) -> str:
    """The two values of a bar's input: "2.48 % … 3.72 %"."""
    return f"{value_text(swing, swing.low_value)} … {value_text(swing, swing.high_value)}"


def paint_sensitivity(painter: QPainter, rect: QRectF, found: Sensitivity,
                      style: SensitivityStyle, title: str = "") -> None:
    """Draw ``found`` into ``rect``; its message when it has no bars.

    Text is sized in points; lines and gaps in screen pixels scaled to the device's resolution,
    so the figure looks alike on the screen and on a 300 dpi PDF page.
    """
    px = max(1.0, painter.device().logicalDpiX() / SCREEN_DPI)
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    font = QFont(painter.font())
    font.setPointSizeF(style.points)
    small = QFont(font)
    small.setPointSizeF(style.points * 0.85)
    bold = QFont(font)
    bold.setBold(True)
    painter.setFont(font)
    line = painter.fontMetrics().height()
    top = rect.top()
    if title:
        painter.setFont(bold)
        painter.setPen(style.foreground)
        shown = painter.fontMetrics().elidedText(title, Qt.TextElideMode.ElideRight,
                                                 round(rect.width()))
        painter.drawText(QRectF(rect.left(), top, rect.width(), line),
                         Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter, shown)
        top += 1.3 * line
        painter.setFont(font)
    if not found.swings:
        painter.setPen(style.muted)
        painter.drawText(QRectF(rect.left() + line, top + line, rect.width() - 2 * line,
                                rect.bottom() - top - 2 * line),
                         Qt.AlignmentFlag.AlignCenter | Qt.TextFlag.TextWordWrap, found.message)
        painter.restore()
        return
    percent = format_number(100 * found.amount)
    _legend(painter, QPointF(rect.left(), top + 0.5 * line), style, percent, px)
    top += 1.4 * line
    labels = [swing.label for swing in found.swings]
    captions = [caption(swing) for swing in found.swings]
    painter.setFont(font)
    gutter = max(painter.fontMetrics().horizontalAdvance(text) for text in labels)
    painter.setFont(small)
    gutter = max([gutter] + [painter.fontMetrics().horizontalAdvance(text)
                             for text in captions]) + 10 * px
    end_room = painter.fontMetrics().horizontalAdvance("000 d") + 8 * px
    bars = QRectF(rect.left() + gutter + end_room, top,
                  rect.width() - gutter - 2 * end_room, rect.bottom() - top - 1.4 * line)
    days = [found.days] + [d for swing in found.swings
                           for d in (swing.low_days, swing.high_days) if math.isfinite(d)]
    low, high = min(days), max(days)
    if high - low < 1e-9:
        low, high = low - 1.0, high + 1.0

    def at(value: float) -> float:
        return bars.left() + bars.width() * (value - low) / (high - low)

    step = bars.height() / len(found.swings)
    thickness = min(step * 0.3, 0.9 * line)
    planned = at(found.days)
    for k, swing in enumerate(found.swings):
        middle = bars.top() + (k + 0.5) * step
        painter.setFont(font)
        painter.setPen(style.foreground)
        painter.drawText(QRectF(rect.left(), middle - line, gutter - 6 * px, line),
                         Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignBottom,
                         swing.label)
        painter.setFont(small)
        painter.setPen(style.muted)
        painter.drawText(QRectF(rect.left(), middle, gutter - 6 * px, line),
                         Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignTop, captions[k])
        painter.setPen(style.foreground)
        for value, colour, top_edge in ((swing.low_days, style.lower, middle - thickness - px),
                                        (swing.high_days, style.higher, middle + px)):
            _bar(painter, QRectF(0, top_edge, 0, thickness), value, at, planned, colour, px)
    painter.setPen(QPen(style.foreground, 1.2 * px))
    painter.drawLine(QPointF(planned, bars.top() - 0.2 * line),
                     QPointF(planned, bars.bottom() + 0.2 * line))
    painter.setFont(small)
    painter.setPen(style.foreground)
    painter.drawText(QRectF(planned - 80 * px, bars.bottom() + 0.3 * line, 160 * px, line),
                     Qt.AlignmentFlag.AlignCenter, f"planned: {days_text(found.days)}")
    painter.restore()


def _bar(painter: QPainter, band: QRectF, days: float, at, planned: float, colour: QColor,
         px: float) -> None:
    """One bar from the planned duration to ``days`` in the band's height, its days at its end
    (on the far side from the planned line; right of it when the duration does not move)."""
    end = at(days) if math.isfinite(days) else planned
    if math.isfinite(days):
        painter.fillRect(QRectF(min(planned, end), band.top(), max(abs(end - planned), px),
                                band.height()), colour)
    text = days_text(days)
    width = painter.fontMetrics().horizontalAdvance(text) + 4 * px
    left = end < planned
    box = QRectF(end - width - 3 * px if left else end + 3 * px,
                 band.center().y() - painter.fontMetrics().height() / 2, width,
                 painter.fontMetrics().height())
    painter.drawText(box, (Qt.AlignmentFlag.AlignRight if left else Qt.AlignmentFlag.AlignLeft)
                     | Qt.AlignmentFlag.AlignVCenter, text)


def _legend(painter: QPainter, origin: QPointF, style: SensitivityStyle, percent: str,
            px: float) -> None:
    metrics = painter.fontMetrics()
    x, middle = origin.x(), origin.y()
    painter.setPen(style.foreground)
    for colour, text in ((style.lower, f"input {percent} % lower"),
                         (style.higher, f"input {percent} % higher")):
        painter.fillRect(QRectF(x, middle - 4 * px, 14 * px, 8 * px), colour)
        painter.drawText(QPointF(x + 18 * px, middle + metrics.ascent() / 2 - px), text)
        x += 30 * px + metrics.horizontalAdvance(text)
