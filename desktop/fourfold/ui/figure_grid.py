"""The view of a row's four trade-off figures (:class:`FigureGrid`), made by the plot panel
after the window's first paint."""

from __future__ import annotations

import pyqtgraph as pg
from PySide6.QtWidgets import QWidget

from fourfold.figures.style import Style, style_from_palette
from fourfold.figures.tradeoffs import TradeoffFigures
from fourfold.plan.tradeoffs import Tradeoffs


class FigureGrid(pg.GraphicsView):
    """The view that shows a row's :class:`~fourfold.figures.tradeoffs.TradeoffFigures`.

    Its figures, effect marker, data and style are those of :attr:`figures`.
    """

    def __init__(self, parent: QWidget | None = None, style: Style | None = None) -> None:
        super().__init__(parent)
        self.figures = TradeoffFigures(style or style_from_palette(self.palette()))
        self.setCentralItem(self.figures)
        self.setBackground(self.figures.style.background)
        # pyqtgraph's scene offers "Export..." in the context menus of its items; the figures
        # have none, so it could never be reached (the PDF report exports the figures)
        scene = self.scene()
        for action in scene.contextMenu:
            action.setParent(None)
        scene.contextMenu = []

    @property
    def plots(self) -> dict:
        """The figures by name: "effect", "power", "alpha", "runtime"."""
        return self.figures.plots

    @property
    def handle(self) -> pg.InfiniteLine:
        """The draggable effect marker on the effect figure."""
        return self.figures.handle

    @property
    def shown(self) -> Tradeoffs | None:
        """The curve data on show (``None`` when blank)."""
        return self.figures.shown

    @property
    def style(self) -> Style:
        """The style the figures are drawn with."""
        return self.figures.style

    def apply_style(self, style: Style) -> None:
        """Recolour and resize text and lines; the data stays."""
        self.setBackground(style.background)
        self.figures.apply_style(style)

    def settle(self) -> None:
        """Apply pending layout changes now, so that the next frame is final."""
        self.figures.settle()

    def blank(self) -> None:
        """Show empty plots (no row selected)."""
        self.figures.blank()

    def set_tradeoffs(self, data: Tradeoffs, *, keep_handle: bool = False,
                      sticky: bool = False, others=()) -> None:
        """Show a row's figures (see :meth:`TradeoffFigures.set_tradeoffs`)."""
        self.figures.set_tradeoffs(data, keep_handle=keep_handle, sticky=sticky,
                                   others=others)

    def resizeEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().resizeEvent(event)
        # pyqtgraph resizes once before __init__ ends, and again in close() after it has
        # emptied the scene.
        figures = getattr(self, "figures", None)
        if figures is not None and not self.closed:
            figures.settle()  # the new size lays out the figures, then places their texts
