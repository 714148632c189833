"""Figure painting shared by the window and the PDF report: graphics items and QPainter code.

Nothing here is a widget of the window. The window (:mod:`fourfold.ui`) wraps these figures in
its widgets; the report (:mod:`fourfold.export.pdf`) paints them onto its pages.

- :mod:`~fourfold.figures.style` — colours, text sizes and line widths (screen or paper).
- :mod:`~fourfold.figures.axes` — compact tick labels and the axis that draws them.
- :mod:`~fourfold.figures.layer` — one graphics item for a figure's lines and markers.
- :mod:`~fourfold.figures.tradeoff_plot` — one trade-off figure on a pyqtgraph plot item.
- :mod:`~fourfold.figures.tradeoffs` — a row's four trade-off figures, and
  :func:`~fourfold.figures.tradeoffs.paint_tradeoffs` for any painter.
- :mod:`~fourfold.figures.simulation_marks` — a stored simulation check on the power figure.
- :mod:`~fourfold.figures.boundaries` — the stopping boundaries of interim looks.
"""
