"""The window's live trade-off plots of the selected metric row.

:class:`PlotPanel` shows the four figures of :mod:`fourfold.figures.tradeoffs` for the row the
user selected: it reuses their items on every update, coalesces bursts of updates into one
redraw, and lets the user drag the effect marker (or move the slider below the plots) to change
the row's effect. It can also draw the same row's curves in other scenarios faintly; their
curves are kept between redraws while those scenarios do not change. The same figures go into
the PDF through :func:`fourfold.figures.tradeoffs.paint_tradeoffs`. The figures' view
(:class:`fourfold.ui.figure_grid.FigureGrid`) and the modules that draw them are made after the
window's first paint, and imported then.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import pyqtgraph as pg
from PySide6.QtCore import QEvent, Qt, QTimer, Signal
from PySide6.QtGui import QFontMetrics
from PySide6.QtWidgets import (
    QHBoxLayout,
    QLabel,
    QSizePolicy,
    QSlider,
    QStackedLayout,
    QVBoxLayout,
    QWidget,
)

from fourfold.figures.style import Style, style_from_palette
from fourfold.plan.evaluation import compute

if TYPE_CHECKING:
    from fourfold.plan.tradeoffs import Tradeoffs
    from fourfold.ui.figure_grid import FigureGrid

DRAG_INTERVAL_MS = 40
SLIDER_STEPS = 200
HEADING_POINTS = 10.5
EMPTY_TEXT = ("No metric row to plot. Add one with Plan → Add metric (Ctrl+Shift+N), or "
              "paste rows from a spreadsheet.")
KEPT_CURVES = 64


def slider_step(low: float, high: float) -> float:
    """A round effect step (1, 2 or 5 × 10ᵏ) that cuts ``[low, high]`` into about 200 steps,
    so that the keyboard moves the effect through round values.

    Examples
    --------
    >>> slider_step(0.02, 0.125), slider_step(-0.03, 0.012)
    (0.001, 0.0005)
    """
    raw = (high - low) / SLIDER_STEPS
    power = 10.0 ** math.floor(math.log10(raw))
    return next(m * power for m in (1, 2, 5, 10) if m * power >= raw * (1 - 1e-9))


def snap_effect(effect: float, step: float) -> float:
    """A dragged effect as it is stored: on the grid of round steps, then to the three
    significant digits that the table and the marker show, so that what is shown is what is
    stored.

    Examples
    --------
    >>> snap_effect(0.02995, 0.001), snap_effect(0.12349, 0.0005), snap_effect(-0.00731, 0.0005)
    (0.03, 0.123, -0.0075)
    """
    on_grid = round(round(effect / step) * step, 12)
    return float(f"{on_grid:.3g}")


def _comparable(metric, others) -> list[tuple]:
    """``(outcome, row)`` of the other scenarios whose row of ``metric``'s id is drawn on the
    same axes as it (same kind, effect scale, direction and quantity solved)."""
    key = (metric.kind, metric.relative, metric.alternative, metric.solve)
    found = []
    for other in others:
        row = other.positions.get(metric.id)
        if row is None:
            continue
        candidate = other.plan.metrics[row]
        if (candidate.kind, candidate.relative, candidate.alternative,
                candidate.solve) == key and not other.result.rows[row].reason:
            found.append((other, row))
    return found


def _inputs(plan, result, row: int) -> tuple:
    """What a row's curves are made of: the row, the settings, its inputs and its result."""
    return (row, repr(plan.settings), repr(plan.metrics[row]), repr(result.rows[row]),
            result.duration_days)


def _near_edge(data: Tradeoffs) -> bool:
    """Whether the effect sits in the outer 4 % of the effect figure's range."""
    low, high = data.effect_span
    effect = data.effect.point[0] / data.effect_scale
    edge = 0.04 * (high - low)
    return not low + edge <= effect <= high - edge


class PlotPanel(QWidget):
    """The trade-off plots of the selected row, beside the plan table.

    Call :meth:`show_row` after every recomputation; redraws are coalesced with a zero-delay
    timer. Dragging the effect marker on the first plot, or moving the slider below the plots,
    emits :attr:`effect_dragged` ``(row, effect)`` with the effect in the row's own units (a
    fraction of the baseline for relative rows), during the drag (at most every 40 ms) and on
    release; on a margin row (``Tradeoffs.quantity == "margin"``) the marker and the slider
    move the margin instead, and the value is the margin.
    """

    effect_dragged = Signal(int, float)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self._text_scale = 1.0
        self._grid: FigureGrid | None = None  # made at the first paint or use (see grid)
        self._painted = False
        self._waiting = QWidget(self)  # where the figures will be until they are made
        self.slider = QSlider(Qt.Orientation.Horizontal, self)
        self.slider.setSingleStep(1)
        self.slider.setPageStep(10)
        self._step = 1.0
        self.slider.setAccessibleName("Effect of the selected row")
        self.slider_label = QLabel("Effect", self)
        self.slider_label.setMinimumWidth(self.fontMetrics().horizontalAdvance("Margin") + 4)
        self.slider_label.setBuddy(self.slider)
        self.slider_value = QLabel("", self)
        self.slider_value.setMinimumWidth(self.fontMetrics().horizontalAdvance("+00.00 % ") + 8)
        controls = QHBoxLayout()
        controls.setContentsMargins(8, 0, 8, 4)
        controls.addWidget(self.slider_label)
        controls.addWidget(self.slider, 1)
        controls.addWidget(self.slider_value)
        # names the row on show; shortened rather than widening the panel
        self.heading = QLabel("", self)
        self.heading.setObjectName("plotHeading")
        self.heading.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Fixed)
        self.heading.setContentsMargins(8, 2, 8, 0)
        # no row: a sentence where the plots would be, not four empty axes
        self.empty = QLabel(EMPTY_TEXT, self)
        self.empty.setAlignment(Qt.AlignmentFlag.AlignCenter)
        self.empty.setWordWrap(True)
        self.pages = QStackedLayout()
        self.pages.addWidget(self._waiting)
        self.pages.addWidget(self.empty)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.setSpacing(2)
        layout.addWidget(self.heading)
        layout.addLayout(self.pages, 1)
        layout.addLayout(controls)

        self._pending: tuple | None = None
        self._kept: dict[tuple, Tradeoffs] = {}  # curves by their inputs (see _curves)
        self._span_key: tuple | None = None
        self._drawn: tuple | None = None
        self._queued: float | None = None
        self._sent: float | None = None
        self._redraw_timer = QTimer(self)
        self._redraw_timer.setSingleShot(True)
        self._redraw_timer.setInterval(0)
        self._redraw_timer.timeout.connect(self._redraw)
        self._drag_timer = QTimer(self)
        self._drag_timer.setSingleShot(True)
        self._drag_timer.setInterval(DRAG_INTERVAL_MS)
        self._drag_timer.timeout.connect(self._send)
        self.slider.valueChanged.connect(self._slider_moved)
        self.slider.sliderReleased.connect(self._flush)
        self._set_controls_enabled(False)
        self._style_texts(style_from_palette(self.palette(), self._text_scale))

    @property
    def grid(self) -> FigureGrid:
        """The view of the four figures, made on first use: the window's first paint does not
        wait for its plots (a panel shown before it was painted draws its row just after)."""
        if self._grid is None:
            from fourfold.ui.figure_grid import FigureGrid

            self._grid = FigureGrid(self, style_from_palette(self.palette(), self._text_scale))
            self._grid.handle.sigDragged.connect(self._handle_dragged)
            self._grid.handle.sigPositionChangeFinished.connect(self._handle_released)
            place = self._waiting.geometry()
            self.pages.replaceWidget(self._waiting, self._grid)
            self._waiting.deleteLater()
            if self.pages.currentWidget() is self._grid:
                self._grid.show()  # a child made after its window was shown starts hidden
            self._grid.setGeometry(place)  # the figures laid out at its size now
            if self._pending is not None:
                self._redraw_timer.start()
        return self._grid

    @property
    def tradeoffs(self) -> Tradeoffs | None:
        """The curve data on show (``None`` before the first row)."""
        return None if self._grid is None else self._grid.shown

    def paintEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().paintEvent(event)
        if not self._painted:
            self._painted = True
            if self._pending is not None:
                self._redraw_timer.start()

    def finish(self) -> None:
        """Draw a redraw still waiting, now (before a picture of the window is taken)."""
        self._painted = True
        self._redraw_timer.stop()
        self._redraw()

    def show_row(self, plan, result, index: int | None, *, others=()) -> None:
        """Show row ``index`` of ``plan`` (with its computed ``result``); ``None`` clears.

        Parameters
        ----------
        plan : fourfold.plan.Plan
        result : fourfold.plan.PlanResult or None
            The plan's computed result; ``None`` computes it.
        index : int or None
            The row, from 0.
        others : sequence of fourfold.plan.comparison.Outcome, or a callable returning one
            Other scenarios: the same row (by id) is drawn faintly where it is comparable
            (same kind, effect scale, direction and quantity solved). A callable is called
            when the plots are drawn (the other scenarios are evaluated only then).
        """
        self._pending = (plan, result, index, others)
        self._redraw_timer.start()

    def cancel_pending(self, *_args) -> None:
        """Forget a queued redraw (its plan changed; the caller shows the row again)."""
        self._redraw_timer.stop()
        self._pending = None

    def set_text_scale(self, factor: float) -> None:
        """Scale every text of the plots (1.0 = normal; e.g. 1.5 on a projector)."""
        if not 0.5 <= factor <= 4.0:
            raise ValueError(f"factor must be between 0.5 and 4, got {factor!r}")
        if float(factor) == self._text_scale:
            return
        self._text_scale = float(factor)
        self._restyle()

    def changeEvent(self, event: QEvent) -> None:  # noqa: N802 (Qt's name)
        if event.type() in (QEvent.Type.PaletteChange, QEvent.Type.ApplicationPaletteChange):
            self._restyle()
        super().changeEvent(event)

    def _restyle(self) -> None:
        style = style_from_palette(self.palette(), self._text_scale)
        if self._grid is not None:
            self._grid.apply_style(style)
        self._style_texts(style)

    def _style_texts(self, style: Style) -> None:
        heading = style.font(HEADING_POINTS)
        heading.setBold(True)
        self.heading.setFont(heading)
        # the same height with or without a row: the plots below never shift
        self.heading.setFixedHeight(QFontMetrics(heading).height() + 4)
        self.empty.setFont(style.font(HEADING_POINTS))

    def _redraw(self) -> None:
        if self._pending is None or (self._grid is None and self.isVisible()
                                     and not self._painted):
            return  # shown but not painted yet: the first paint draws the row just after
        from fourfold.figures.simulation_marks import show_simulation

        plan, result, index, others = self._pending
        self._pending = None
        others = tuple(others() if callable(others) else others)
        if index is None or not 0 <= index < len(plan.metrics):
            self._drawn = None
            self.grid.blank()
            show_simulation(self.grid, plan, result, None)
            self._set_controls_enabled(False)
            self.heading.setText("")
            self.pages.setCurrentWidget(self.empty)
            return
        self.pages.setCurrentWidget(self.grid)
        result = compute(plan) if result is None else result
        metric = plan.metrics[index]
        self._set_heading(metric, index)
        dragging = self.grid.handle.moving or self.slider.isSliderDown()
        # an edit of another row leaves this row's inputs, result and settings as drawn
        overlaid = _comparable(metric, others)
        inputs = [_inputs(plan, result, index),
                  *(_inputs(other.plan, other.result, row) for other, row in overlaid)]
        drawn = tuple(inputs)
        if drawn == self._drawn and not dragging:
            return
        self._drawn = None if dragging else drawn
        key = (index, metric.kind, metric.relative, metric.alternative, metric.margin,
               metric.solve)
        span = self.grid.shown.effect_span if key == self._span_key and self.grid.shown else None
        data = self._curves(plan, result, index, span, inputs[0])
        if span is not None and not dragging and _near_edge(data):
            data = self._curves(plan, result, index, None, inputs[0])  # re-centre on release
        sticky = key == self._span_key
        self._span_key = key
        overlays = [self._curves(other.plan, other.result, row, data.effect_span, made_of)
                    for (other, row), made_of in zip(overlaid, inputs[1:], strict=True)]
        self.grid.set_tradeoffs(data, keep_handle=self.grid.handle.moving, sticky=sticky,
                                others=overlays)
        show_simulation(self.grid, plan, result, index)
        self.grid.settle()
        self._sync_slider(data)

    def _set_heading(self, metric, index: int) -> None:
        text = f"{metric.name} — row {index + 1}, {metric.role}"
        if self.heading.text() != text:
            self.heading.setText(text)
            self.heading.setToolTip(text)

    def _curves(self, plan, result, row: int, span: tuple[float, float] | None,
                inputs: tuple) -> Tradeoffs:
        """The curves of ``row`` of ``plan`` on the effect ``span``, kept by their ``inputs``
        (:func:`_inputs`): a scenario's curves drawn faintly become its own when it is put on
        show, and switching back and forth between scenarios draws without solving again."""
        key = (*inputs, span)
        found = self._kept.get(key)
        if found is None:
            from fourfold.plan.tradeoffs import tradeoffs

            if len(self._kept) >= KEPT_CURVES:
                self._kept.clear()
            found = self._kept[key] = tradeoffs(plan, row, result, effect_span=span)
        return found

    def _set_controls_enabled(self, enabled: bool) -> None:
        for widget in (self.slider, self.slider_label, self.slider_value):
            widget.setEnabled(enabled)
        if not enabled:
            self.slider_value.setText("")

    def _sync_slider(self, data: Tradeoffs) -> None:
        editable = data.effect_editable and not data.effect.reason
        self.slider_label.setText(data.quantity.capitalize())  # "Margin" on a margin row
        self.slider.setAccessibleName(f"{data.quantity.capitalize()} of the selected row")
        self._set_controls_enabled(editable)
        if not editable or self.slider.isSliderDown():
            return
        effect = data.effect.point[0] / data.effect_scale
        low, high = data.effect_span
        self._step = step = slider_step(low, high)
        self.slider.blockSignals(True)
        self.slider.setRange(math.ceil(low / step - 1e-9), math.floor(high / step + 1e-9))
        self.slider.setValue(round(effect / step))
        self.slider.blockSignals(False)
        self.slider_value.setText(self._effect_text(effect, data))

    @staticmethod
    def _effect_text(effect: float, data: Tradeoffs) -> str:
        from fourfold.figures.tradeoffs import effect_text

        return effect_text(effect * data.effect_scale, data.effect_unit)

    def _slider_moved(self, position: int) -> None:
        data = self.grid.shown
        if data is None:
            return
        effect = snap_effect(position * self._step, self._step)
        self.slider_value.setText(self._effect_text(effect, data))
        self._queue(effect)
        if not self.slider.isSliderDown():
            self._flush()

    def _handle_dragged(self, line: pg.InfiniteLine) -> None:
        data = self.grid.shown
        if data is None:
            return
        effect = snap_effect(float(line.value()) / data.effect_scale, self._step)
        shown = effect * data.effect_scale
        if float(line.value()) != shown:  # the marker and its label sit on the stored value
            line.setValue(shown)
        self.slider_value.setText(self._effect_text(effect, data))
        self._queue(effect)

    def _handle_released(self, line: pg.InfiniteLine) -> None:
        self._handle_dragged(line)
        self._flush()

    def _queue(self, effect: float) -> None:
        self._queued = effect
        if not self._drag_timer.isActive():
            self._drag_timer.start()

    def _flush(self) -> None:
        self._drag_timer.stop()
        self._send()

    def _send(self) -> None:
        data = self.grid.shown
        if self._queued is None or data is None:
            return
        effect, self._queued = self._queued, None
        if effect != self._sent:
            self._sent = effect
            self.effect_dragged.emit(data.index, effect)
