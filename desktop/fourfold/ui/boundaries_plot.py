"""The window's view of the stopping boundaries of the selected row's interim looks.

:class:`BoundariesView` paints :func:`fourfold.figures.boundaries.paint_boundaries` with the
window's palette and tints, and lists the looks in its tooltip (:func:`looks_text`).
"""

from __future__ import annotations

import math

from PySide6.QtCore import QRectF, QSize
from PySide6.QtGui import QColor, QPainter
from PySide6.QtWidgets import QSizePolicy, QWidget

from fourfold.figures.boundaries import BoundaryStyle, p_text, paint_boundaries, z_text
from fourfold.plan.sequential import Look, peeking_text, row_looks
from fourfold.ui import theme


def screen_style(widget: QWidget) -> BoundaryStyle:
    """The figure's style from a widget's palette and the current scheme's tints."""
    palette = widget.palette()
    tint = theme.tints()
    grid = QColor(palette.mid().color())
    return BoundaryStyle(palette.windowText().color(), tint.muted, grid, tint.accent,
                         tint.binding, max(7.0, widget.font().pointSizeF()))


class BoundariesView(QWidget):
    """The boundaries figure of one row; :meth:`show_row` updates it after each recompute."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.looks: tuple[Look, ...] = ()
        self.title = ""
        self.caption = ""
        self.two_sided = True
        self.setMinimumSize(280, 180)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)

    def sizeHint(self) -> QSize:  # noqa: N802 (Qt's name)
        return QSize(360, 260)

    def show_row(self, plan, result, index: int | None) -> None:
        """Show the looks of row ``index`` of an evaluated plan (nothing for ``None``)."""
        if result is None or index is None or not 0 <= index < len(result.rows):
            self.looks, self.title, self.caption = (), "", ""
        else:
            self.looks = row_looks(plan, result, index)
            self.title = f"Stopping boundaries — {plan.metrics[index].name}"
            settings = plan.settings
            self.caption = (peeking_text(settings.looks, settings.alpha) if self.looks
                            else "")
            self.two_sided = plan.metrics[index].alternative == "two-sided"
        self.setToolTip(looks_text(self.looks, self.two_sided))
        self.update()

    def paintEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        painter = QPainter(self)
        paint_boundaries(painter, QRectF(self.rect()).adjusted(8, 6, -8, -6), self.looks,
                         screen_style(self), self.title, self.caption)
        painter.end()


def looks_text(looks: tuple[Look, ...], two_sided: bool) -> str:
    """The looks as lines of plain text (the widget's tooltip).

    z is oriented in the direction of the planned effect; two-sided looks stop on |z|.
    """
    statistic = "|z|" if two_sided else "z"
    lines = []
    for look in looks:
        when = f"day {look.day:.0f}" if math.isfinite(look.day) else f"{look.fraction:.0%}"
        text = (f"Look {look.look} ({when}): stop if {statistic} ≥ {z_text(look.z_efficacy)} "
                f"({p_text(look.p_efficacy)})")
        if math.isfinite(look.z_futility):
            text += f", or z < {z_text(look.z_futility)}"
        lines.append(text)
    return "\n".join(lines)
