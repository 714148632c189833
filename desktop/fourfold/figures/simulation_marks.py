"""A row's stored simulation check drawn on its power figure: a point with its interval.

The power figure plots units against power; the check ran at the row's units, so its point
sits at the row's units and the simulated power, with a horizontal bar over the 95 %
interval. When the closed form agrees, the point covers the design point; when it does not,
it sits beside it and turns the problem colour. A check made before the row changed is drawn
faint and labelled as stale.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt

from fourfold.figures.style import TINTS
from fourfold.plan.evaluation import compute

FLAGGED = ("below", "above")


class SimulationMark:
    """The items of one check on a pyqtgraph plot: interval bar, point, label."""

    def __init__(self, item: pg.PlotItem) -> None:
        self.bar = pg.ErrorBarItem(x=np.empty(0), y=np.empty(0), beam=0.0)
        self.dot = pg.ScatterPlotItem(symbol="d", useCache=False)  # vector on a PDF page
        self.label = pg.TextItem(anchor=(0.5, 1.25))
        for part in (self.bar, self.dot, self.label):
            part.setZValue(20)  # above the design point it is compared with
            item.addItem(part, ignoreBounds=True)
        self.hide()

    def hide(self) -> None:
        """Show nothing (no check stored, or the figure is empty)."""
        self.bar.setData(x=np.empty(0), y=np.empty(0))
        self.dot.setData([], [])
        self.label.hide()

    def show(self, check: dict, units_view: float, style, stale: bool) -> None:
        """Draw ``check`` at ``units_view`` (the row's units in view coordinates)."""
        dark = style.background.lightness() < 128
        flagged = check.get("verdict") in FLAGGED
        colour = TINTS[dark].problem if flagged else style.foreground
        if stale:
            colour = style.muted
        x = 100.0 * check["power"]
        left = 100.0 * (check["power"] - check["low"])
        right = 100.0 * (check["high"] - check["power"])
        width = 2.0 * style.pen_scale
        line = pg.mkPen(colour, width=width,
                        style=Qt.PenStyle.DashLine if stale else Qt.PenStyle.SolidLine)
        self.bar.setData(x=np.array([x]), y=np.array([units_view]), left=np.array([left]),
                         right=np.array([right]), beam=0.0, pen=line)
        self.dot.setData([x], [units_view], symbol="d", size=12 * style.text_scale ** 0.5,
                         brush=pg.mkBrush(colour), pen=pg.mkPen(style.background, width=1.0))
        what = "simulated, stale" if stale else "simulated"
        self.label.setText(f"{what} {x:.1f} % ({100 * check['low']:.1f}–"
                           f"{100 * check['high']:.1f})")
        self.label.setColor(colour)
        self.label.setFont(style.font(8.5))
        self.label.setPos(x, units_view)
        self.label.show()


def show_simulation(grid, plan, result, index) -> None:
    """Draw row ``index``'s stored check on ``grid``'s power figure (or clear it).

    ``grid`` is a :class:`fourfold.figures.tradeoffs.TradeoffFigures` (or the window's
    :class:`fourfold.ui.figure_grid.FigureGrid` that shows one) already showing the row's
    trade-offs; the mark is created on first use and reused.
    """
    mark = getattr(grid, "simulation_mark", None)
    if mark is None:
        mark = SimulationMark(grid.plots["power"].item)
        grid.simulation_mark = mark
    data = grid.shown
    if data is None or index is None or not 0 <= index < len(plan.metrics):
        mark.hide()
        return
    check = plan.metrics[index].simulation
    figure = data.power
    units = figure.point[1]
    if not check or figure.reason or not math.isfinite(units) or units <= 0:
        mark.hide()
        return
    from fourfold.simulation import is_stale  # only for a row with a stored check

    result = compute(plan) if result is None else result
    units_view = math.log10(units) if figure.y_log else units
    mark.show(check, units_view, grid.style, is_stale(plan, index, result))
