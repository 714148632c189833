"""The stopping boundaries of the selected row's interim looks, drawn with a plain QPainter.

The figure shows, per look (on its calendar day, or its share of the maximum units when the
plan has no traffic), the z value above which the test stops for efficacy, with the nominal
p-value it corresponds to, and the futility z below which it stops for lack of effect. The
numbers come from :func:`fourfold.plan.sequential.row_looks`; nothing is computed here.
:func:`paint_boundaries` draws onto any painter (the window's widget, an image, a PDF page).
"""

from __future__ import annotations

import math
from collections.abc import Container
from dataclasses import dataclass

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QPainter, QPainterPath, QPen, QPolygonF

from fourfold.figures.placement import first_clear
from fourfold.figures.style import begin_painting
from fourfold.formatting import MINUS
from fourfold.plan.sequential import Look

Z_CAP = 6.0
"""Highest z drawn; earlier boundaries above it are drawn at the cap as an upward triangle
(the boundary lies beyond the axis), labelled with their z where there is room."""
MAX_LABELS = 10

FIXED_TEXT = ("One look: a fixed design. Set looks above 1 to plan interim analyses and see "
              "their stopping boundaries here.")


@dataclass(frozen=True)
class BoundaryStyle:
    """Colours and text size of the figure."""

    foreground: QColor
    muted: QColor
    grid: QColor
    efficacy: QColor
    futility: QColor
    points: float = 9.0


def p_text(p: float) -> str:
    """A nominal p-value for a label: "p < 0.0031", "p < 1.1e−06".

    Examples
    --------
    >>> p_text(0.003123), p_text(1.08e-6), p_text(0.0374)
    ('p < 0.0031', 'p < 1.1e−06', 'p < 0.037')
    """
    if p >= 1e-4:
        digits = max(2, 1 - math.floor(math.log10(p)))
        return f"p < {p:.{digits}f}"
    return f"p < {p:.1e}".replace("-", MINUS)


def z_text(z: float) -> str:
    return f"{z:.2f}".replace("-", MINUS)


def _x_values(looks: tuple[Look, ...]) -> tuple[list[float], str, list[str]]:
    if all(math.isfinite(look.day) for look in looks):
        return ([look.day for look in looks], "Day of the look",
                [f"{look.day:.0f}" for look in looks])
    return ([look.fraction for look in looks], "Share of the maximum units",
            [f"{look.fraction * 100:.0f} %" for look in looks])


def paint_boundaries(painter: QPainter, rect: QRectF, looks: tuple[Look, ...],
                     style: BoundaryStyle, title: str = "",
                     caption: str = "") -> list[tuple[str, QRectF]]:
    """Draw the boundaries of ``looks`` into ``rect``; a short text when there are none.

    ``caption`` is a line of muted text under the figure (the price of unadjusted peeking).

    Text is sized in points; lines, markers and gaps in screen pixels scaled to the device's
    resolution, so the figure looks alike on the screen and on a 300 dpi PDF page. Each look's
    nominal p sits beside its point inside the axes, where it overlaps no other text (a label
    with no such place is left out).

    Returns
    -------
    list of (str, QRectF)
        What was drawn where, by kind: "plot" (the axes' box), "title", "legend", "tick",
        "axis", "label" (a look's p, or its z when beyond the axes), "beyond" (the marker of
        a look whose boundary lies above the axes) and "caption".
    """
    px, font = begin_painting(painter, style.points)
    drawn: list[tuple[str, QRectF]] = []

    def text(kind: str, box: QRectF, flags, words: str) -> None:
        painter.drawText(box, flags, words)
        drawn.append((kind, painter.boundingRect(box, flags, words)))

    metrics = painter.fontMetrics()
    line = metrics.height()
    painter.setPen(style.foreground)
    if title:
        bold = QFont(font)
        bold.setBold(True)
        painter.setFont(bold)
        text("title", QRectF(rect.left(), rect.top(), rect.width(), line),
             Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter, title)
        painter.setFont(font)
    if not looks:
        painter.setPen(style.muted)
        text("caption", rect.adjusted(line, 2 * line, -line, -line),
             Qt.AlignmentFlag.AlignCenter | Qt.TextFlag.TextWordWrap, FIXED_TEXT)
        painter.restore()
        return drawn

    xs, x_label, x_ticks = _x_values(looks)
    futile = [look.z_futility for look in looks if math.isfinite(look.z_futility)]
    z_low = min(0.0, math.floor(min(futile))) if futile else 0.0
    z_high = min(Z_CAP, math.ceil(max(look.z_efficacy for look in looks) + 0.3))
    beyond = {k for k, look in enumerate(looks) if look.z_efficacy > z_high}
    labelled = set(range(len(looks) - 1, -1, -max(1, math.ceil(len(looks) / MAX_LABELS))))
    labelled |= beyond
    labels = [f"z {z_text(look.z_efficacy)}" if k in beyond else p_text(look.p_efficacy)
              for k, look in enumerate(looks)]
    items = _legend_items(style, bool(futile))
    stacked = (sum(30 * px + metrics.horizontalAdvance(words) for _, words in items)
               > rect.width())
    legend_lines = len(items) if stacked else 1
    caption_lines = 0
    if caption:
        caption_lines = 1 if metrics.horizontalAdvance(caption) <= rect.width() else 2
    bottom = 2.6 + 1.1 * caption_lines
    # the last tick's text is centred on the axes' right end
    right_room = max(8 * px, metrics.horizontalAdvance(x_ticks[-1]) / 2 + 2 * px)
    plot = rect.adjusted(4.0 * metrics.horizontalAdvance("0") + 6 * px,
                         (2.8 + 1.1 * legend_lines) * line, -right_room, -bottom * line)
    drawn.append(("plot", QRectF(plot)))

    def at(x: float, z: float) -> QPointF:
        zx = plot.left() + plot.width() * x / xs[-1]
        zy = plot.bottom() - plot.height() * (min(z, z_high) - z_low) / (z_high - z_low)
        return QPointF(zx, zy)

    gutter = plot.left() - rect.left() - 6 * px
    right = Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter
    for z in range(int(z_low), int(z_high) + 1):
        y = at(0.0, z).y()
        painter.setPen(QPen(style.grid, px))
        painter.drawLine(QPointF(plot.left(), y), QPointF(plot.right(), y))
        painter.setPen(style.muted)
        text("tick", QRectF(rect.left(), y - line / 2, gutter, line), right,
             str(z).replace("-", MINUS))
    # the axis' name above its top tick, clear of that tick's number
    text("axis", QRectF(rect.left(), plot.top() - 1.65 * line, gutter, line), right, "z")
    efficacy = [at(x, look.z_efficacy) for x, look in zip(xs, looks, strict=True)]
    _shade(painter, efficacy, plot.top(), plot.right(), style.efficacy, 0.12)
    if futile:
        floor = [at(x, look.z_futility) for x, look in zip(xs, looks, strict=True)]
        _shade(painter, floor, plot.bottom(), plot.right(), style.futility, 0.14)
        _curve(painter, floor, style.futility, Qt.PenStyle.DashLine, px)

    _curve(painter, efficacy, style.efficacy, Qt.PenStyle.SolidLine, px, beyond)
    painter.setPen(style.foreground)
    dots = [QRectF(point.x() - 3 * px, point.y() - 3 * px, 6 * px, 6 * px)
            for point in efficacy]
    drawn += [("beyond", dots[k]) for k in sorted(beyond)]
    taken = list(dots)
    last = len(looks) - 1
    # the last look's label first (it matters most), then those beyond the axis (their z is
    # not read off it), then the others from the last
    for k in sorted(labelled, key=lambda k: (k != last, k not in beyond, -k)):
        width = metrics.horizontalAdvance(labels[k]) + 2 * px
        point = efficacy[k]
        # above and right of a falling boundary first, then below and left (clear of it)
        offsets = [(5 * px, -line - 2 * px), (-5 * px - width, 2 * px),
                   (-5 * px - width, -line - 2 * px), (5 * px, 2 * px)]
        if k in beyond:  # at the top of the axes: below it, further down, or centred
            offsets += [(5 * px, line + 4 * px), (-width / 2, 6 * px)]
        places = [QRectF(point.x() + dx, point.y() + dy, width, line) for dx, dy in offsets]
        found = first_clear(places, plot, taken)
        if found is not None:
            taken.append(places[found])
            text("label", places[found],
                 Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter, labels[k])

    painter.setPen(QPen(style.foreground, px))
    painter.drawLine(plot.bottomLeft(), plot.bottomRight())
    painter.drawLine(plot.bottomLeft(), plot.topLeft())
    painter.setPen(style.muted)
    for k in sorted(labelled):
        x, tick = at(xs[k], z_low).x(), x_ticks[k]
        text("tick", QRectF(x - 40 * px, plot.bottom() + 2 * px, 80 * px, line),
             Qt.AlignmentFlag.AlignCenter, tick)
    text("axis", QRectF(plot.left(), plot.bottom() + 1.2 * line, plot.width(), line),
         Qt.AlignmentFlag.AlignCenter, x_label)
    if caption:
        height = 1.1 * caption_lines * line
        text("caption", QRectF(rect.left(), rect.bottom() - height, rect.width(), height),
             Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignBottom
             | Qt.TextFlag.TextWordWrap, caption)
    painter.setPen(style.foreground)
    drawn += [("legend", box) for box in _legend(
        painter, QPointF(rect.left(), rect.top() + 1.7 * line), items, stacked, px)]
    painter.restore()
    return drawn


def _shade(painter, points, edge, right, colour, alpha):
    """Fill the region between a boundary and the plot's top or bottom edge (``edge``)."""
    region = QPainterPath()
    region.moveTo(QPointF(points[0].x(), edge))
    for point in points:
        region.lineTo(point)
    region.lineTo(QPointF(right, edge))
    region.closeSubpath()
    shade = QColor(colour)
    shade.setAlphaF(alpha)
    painter.fillPath(region, shade)


def _curve(painter: QPainter, points: list[QPointF], colour: QColor, dash, px: float,
           beyond: Container[int] = ()) -> None:
    """A boundary's line and its looks' markers: a dot, or an upward triangle for a look
    whose boundary lies above the axes (``beyond``: drawn at the top)."""
    pen = QPen(colour, 2.0 * px)
    pen.setStyle(dash)
    painter.setPen(pen)
    painter.drawPolyline(QPolygonF(points))
    painter.setPen(QPen(colour, px))
    painter.setBrush(colour)
    for k, point in enumerate(points):
        if k in beyond:
            painter.drawPolygon(QPolygonF([point + QPointF(0, -4 * px),
                                           point + QPointF(-4 * px, 3 * px),
                                           point + QPointF(4 * px, 3 * px)]))
        else:
            painter.drawEllipse(point, 3.0 * px, 3.0 * px)
    painter.setBrush(Qt.BrushStyle.NoBrush)


def _legend_items(style: BoundaryStyle, futility: bool) -> list[tuple[QColor, str]]:
    items = [(style.efficacy, "Stop for efficacy above (nominal p)")]
    if futility:
        items.append((style.futility, "Stop for futility below"))
    return items


def _legend(painter: QPainter, origin: QPointF, items: list[tuple[QColor, str]],
            stacked: bool, px: float) -> list[QRectF]:
    """Legend items under the title: in one line, or one per line when narrow; returns the
    boxes of their texts."""
    metrics = painter.fontMetrics()
    x, middle = origin.x(), origin.y()
    boxes = []
    for colour, text in items:
        painter.fillRect(QRectF(x, middle - 4 * px, 14 * px, 8 * px), colour)
        baseline = QPointF(x + 18 * px, middle + metrics.ascent() / 2 - px)
        painter.drawText(baseline, text)
        boxes.append(QRectF(baseline.x(), baseline.y() - metrics.ascent(),
                            metrics.horizontalAdvance(text), metrics.height()))
        if stacked:
            middle += 1.1 * metrics.height()
        else:
            x += 30 * px + metrics.horizontalAdvance(text)
    return boxes
