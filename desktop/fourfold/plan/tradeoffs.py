"""Curve data for the trade-off plots of one metric row (no Qt).

PLACEHOLDER-DRAFT
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

FIGURES = ("effect", "power", "alpha", "runtime")


@dataclass(frozen=True)
class Curve:
    """One line of a figure: ``y`` against ``x`` (nan where a point cannot be computed)."""

    x: np.ndarray
    y: np.ndarray
    label: str


@dataclass(frozen=True)
class Figure:
    """One trade-off figure of a row, in display units."""

    name: str
    title: str
    x_label: str
    y_label: str
    x_log: bool
    y_log: bool
    curve: Curve
    neighbour: Curve
    point: tuple[float, float]
    point_label: str
    marks: Curve
    mark_labels: tuple[str, ...]
    guide: float
    guide_label: str
    reason: str


@dataclass(frozen=True)
class Tradeoffs:
    """The four figures of one row and how to turn an effect on the plot back into the row's."""

    index: int
    name: str
    effect_scale: float
    effect_span: tuple[float, float]
    effect_editable: bool
    effect: Figure
    power: Figure
    alpha: Figure
    runtime: Figure
    reason: str

    @property
    def figures(self) -> tuple[Figure, Figure, Figure, Figure]:
        return (self.effect, self.power, self.alpha, self.runtime)
