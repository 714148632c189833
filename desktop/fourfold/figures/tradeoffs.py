"""A row's four trade-off figures in a 2 × 2 grid, and :func:`paint_tradeoffs` for any painter.

Four small figures answer the questions a planning meeting asks about one row: how many units
a smaller or larger effect needs, what more power costs, what a stricter α costs, and what
each extra week of runtime buys. The curves come from :func:`fourfold.plan.tradeoffs.tradeoffs`
(which asks the engine); this module only draws them.

:class:`TradeoffFigures` is the graphics item that holds the four figures and the draggable
effect marker; the window shows it in its plot panel (:mod:`fourfold.ui.plots`).
:func:`paint_tradeoffs` builds the same figures offscreen and draws them with any
:class:`~PySide6.QtGui.QPainter` (a PDF page, an image).
"""

from __future__ import annotations

import math

import pyqtgraph as pg
from PySide6.QtCore import QEvent, QRectF, Qt
from PySide6.QtGui import QPainter, QPalette
from PySide6.QtWidgets import QApplication

from fourfold.figures.placement import text_box
from fourfold.figures.simulation_marks import show_simulation
from fourfold.figures.style import Style, paper, style_from_palette
from fourfold.figures.tradeoff_plot import TICK_POINTS, FigurePlot
from fourfold.formatting import format_number, format_percent
from fourfold.plan.evaluation import compute
from fourfold.plan.tradeoffs import Tradeoffs, tradeoffs

SCREEN_DPI = 96.0
_GRID = ((0, 0), (0, 1), (1, 0), (1, 1))
HANDLE_ARROW = "  ⟷"


def effect_text(effect: float, unit: str) -> str:
    """An effect as the plan table shows it: "+3.0 %", "−0.15 pp", "+0.12" (display units:
    percent or percentage points when ``unit`` says so, the metric's own units otherwise).

    Examples
    --------
    >>> effect_text(3.0, "%"), effect_text(-0.155, "pp"), effect_text(0.12, ""), effect_text(0, "%")
    ('+3.0 %', '−0.155 pp', '+0.12', '0')
    """
    if effect == 0:
        return "0"
    if unit:
        return format_percent(effect / 100.0, signed=True, suffix=unit)
    return format_number(effect, sig=3, signed=True)


class _MarkerLabel:
    """The effect marker's text: pyqtgraph calls ``format(value=...)`` as on a format string."""

    def __init__(self, unit: str) -> None:
        self.unit = unit

    def format(self, value: float) -> str:
        return effect_text(value, self.unit) + HANDLE_ARROW


class TradeoffFigures(pg.GraphicsLayout):
    """The four figures of one row in a 2 × 2 grid, plus the draggable effect marker.

    Shown in the window's plot panel and, offscreen, by :func:`paint_tradeoffs`. With
    ``direct`` the axes paint straight onto the painter (for a page); otherwise the static
    parts of each figure are cached as screen pixmaps.
    """

    def __init__(self, style: Style, *, direct: bool = False) -> None:
        super().__init__()
        self.setContentsMargins(4, 4, 4, 4)
        self.setSpacing(6)
        self.plots = {
            name: FigurePlot(self, row, col, name)
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
        self.style = style
        self.apply_style(style)

    def apply_style(self, style: Style) -> None:
        """Recolour and resize text and lines; the data stays (the view sets the background)."""
        self.style = style
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
        self.layout.activate()
        self.plots["runtime"].fit()
        self.place_labels()

    def place_labels(self) -> None:
        """Put every figure's texts clear of each other, of the markers and of the plot's
        edges (:meth:`FigurePlot.place_labels`; the effect figure's include the marker's)."""
        for name, plot in self.plots.items():
            plot.place_labels(self.handle if name == "effect" else None)

    def label_boxes(self) -> dict[str, dict[str, list]]:
        """Each figure's :meth:`FigurePlot.label_boxes`; the effect figure's include the
        effect marker's label as "marker label"."""
        found = {name: plot.label_boxes() for name, plot in self.plots.items()}
        label = self.handle.label
        found["effect"]["marker label"] = ([text_box(label)]
                                           if self.handle.isVisible() and label.isVisible()
                                           else [])
        return found

    def blank(self) -> None:
        """Show empty plots (no row selected)."""
        self.shown = None
        for plot in self.plots.values():
            plot.clear()
        self.handle.hide()

    def set_tradeoffs(self, data: Tradeoffs, *, keep_handle: bool = False,
                      sticky: bool = False, others=()) -> None:
        """Show a row's figures; ``keep_handle`` leaves the effect marker where the user holds it.

        ``sticky`` keeps each figure's view range while the new data fit it (an edit of the row
        on show); otherwise every figure is ranged on its data. ``others`` are the row's
        :class:`~fourfold.plan.tradeoffs.Tradeoffs` in other scenarios, drawn faintly.
        """
        self.shown = data
        for figure in data.figures:
            same = tuple(other_figure for other in others for other_figure in other.figures
                         if other_figure.name == figure.name)
            self.plots[figure.name].set_figure(figure, self.style, data.effect_unit,
                                               sticky=sticky, others=same)
        x = data.effect.point[0]
        visible = data.effect_editable and not data.effect.reason and math.isfinite(x)
        self.handle.setVisible(visible)
        if visible:
            low, high = (v * data.effect_scale for v in data.effect_span)
            self.handle.setBounds((low, high))
            self.handle.label.setFormat(_MarkerLabel(data.effect_unit))
            if not keep_handle:
                self.handle.setValue(x)


def paint_tradeoffs(painter: QPainter, rect: QRectF, plan, result, index: int, *,
                    dpi: float | None = None, text_scale: float = 1.0,
                    palette: QPalette | None = None, inspect=None) -> None:
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
    inspect : callable, optional
        Called with the built :class:`TradeoffFigures` just before they are painted (tests
        read where the texts went).

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
    # pyqtgraph's items measure themselves through the view that shows them: an offscreen one
    host = pg.GraphicsView()
    host.setAttribute(Qt.WidgetAttribute.WA_DontShowOnScreen, True)
    screen_dpi = float(host.logicalDpiX() or SCREEN_DPI)
    width = max(1, round(rect.width() / device_dpi * screen_dpi))
    height = max(1, round(rect.height() / device_dpi * screen_dpi))
    scale = rect.width() / width
    style = style_from_palette(palette or paper(), text_scale, pen_scale=scale,
                               pixel_dpi=screen_dpi)
    grid = TradeoffFigures(style, direct=True)
    host.setCentralItem(grid)
    host.setBackground(style.background)
    host.resize(width, height)
    try:
        host.show()
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
        QApplication.sendPostedEvents()
        grid.place_labels()  # the legends have their final size now
        if inspect is not None:
            inspect(grid)
        for item in host.scene().items():
            if isinstance(item, pg.ScatterPlotItem):  # markers are sized in device pixels
                item.setExportMode(True, {"antialias": True, "resolutionScale": scale})
        QApplication.sendPostedEvents()
        painter.save()
        try:
            painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            painter.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
            host.scene().render(painter, rect, QRectF(0, 0, width, height))
        finally:
            painter.restore()
    finally:
        host.close()
        host.deleteLater()
        QApplication.sendPostedEvents(host, QEvent.Type.DeferredDelete)
