"""Axes of the trade-off figures: compact tick labels ("20k", "1.5M") and log ticks that fit.

:func:`compact` writes a tick value short; :class:`CompactAxis` is the pyqtgraph axis that uses
it, picks log ticks (1, 2 and 5 per decade, or denser within one decade) whose labels keep clear
of each other, and can paint straight onto a page's painter.
"""

from __future__ import annotations

import math

import pyqtgraph as pg
from PySide6.QtGui import QFont, QFontMetricsF

from fourfold.formatting import MINUS


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


class CompactAxis(pg.AxisItem):
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
