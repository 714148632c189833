"""Curve data for the trade-off plots of one metric row (no Qt).

For one row of a plan, four figures answer the questions a planning meeting asks:

``effect``
    Control-arm units against the effect, over a range around the row's effect; beside it the
    same curve at a neighbouring power (0.9 next to 0.8, 0.8 next to anything higher).
``power``
    Units against power 0.5–0.99; beside it a neighbouring α (0.01 next to 0.05).
``alpha``
    Units against α 0.001–0.2 (log scale); beside it the neighbouring power.
``runtime``
    Detectable effect against days of runtime, one day to about eight weeks, with each whole
    week marked ("what each extra week buys"); beside it the neighbouring power. Needs the
    plan's daily units.

A margin row (:func:`fourfold.plan.rules.is_margin_row`: a guardrail or non-inferiority row)
is about its margin, its effect being the true difference assumed (usually 0): its ``effect``
figure shows units against the margin, over a range on the far side of the effect, and its
``runtime`` figure the tightest margin ruled out after each day and week
(:func:`fourfold.engine.detectable_margin`). ``Tradeoffs.quantity`` is then ``"margin"``, and
the ``effect_*`` attributes describe the margin.

The six curves of the first three figures are one vectorised engine call, the runtime
figure's three curves another. Every curve uses the row's own design, exactly as
:func:`fourfold.plan.evaluation.compute` evaluates the row: its α (overridden and corrected for
multiple comparisons) and power come from the row's result, units are multiplied by the row's
design factor and, with interim looks, by the inflation of the group sequential design the
evaluation gives the row at that α and power (:mod:`fourfold.plan.sequential`), and days turn
into units through the plan's traffic model (:func:`fourfold.plan.traffic.control_units`).
Each figure carries the row's design point, which lies on its solid curve. Effects are shown in
display units: percent of the baseline for relative rows, percentage points for absolute
proportions, the metric's own units otherwise (``Tradeoffs.effect_scale`` converts back).

References
----------
Lehr, R. (1992). Sixteen s-squared over d-squared: a relation for crude sample size estimates.
*Statistics in Medicine* 11, 1099–1102 (units grow with 1/δ², hence the log axis on the effect
figure).

Kohavi, R., Tang, D. & Xu, Y. (2020). *Trustworthy Online Controlled Experiments*. Cambridge
University Press, ch. 15 (trading effect size, power and duration).

Examples
--------
>>> from fourfold.plan.model import Metric, Plan, Settings
>>> plan = Plan(Settings(daily_units=20_000),
...             [Metric(name="Spend", kind="mean", baseline=10.0, sd=5.0, effect=0.02)])
>>> data = tradeoffs(plan, 0)
>>> data.effect.x_label, data.effect.point
('effect (% of baseline)', (2.0, 9812.0))
>>> len(data.runtime.marks.x)
8
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtri

from fourfold import engine
from fourfold.engine.inflation import inflations
from fourfold.formatting import format_days
from fourfold.plan import kinds, sequential, traffic, windows
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.evaluation import PlanResult, RowResult, compute
from fourfold.plan.model import Metric, Plan
from fourfold.plan.rules import is_margin_row

FIGURES = ("effect", "power", "alpha", "runtime")
POINTS = 81
WEEKS = 8
MAX_WEEKS = 52
SPAN = (0.4, 2.5)
POWER_RANGE = (0.5, 0.99)
ALPHA_RANGE = (0.001, 0.2)
INFLATION_NODES = 5

_EMPTY = np.empty(0)


@dataclass(frozen=True)
class Curve:
    """One line of a figure: ``y`` against ``x`` in display units (nan where not computable).

    Attributes
    ----------
    x, y : numpy.ndarray
        Points of the line.
    label : str
        What distinguishes the line (e.g. ``"power 80 %"``).
    """

    x: np.ndarray
    y: np.ndarray
    label: str


@dataclass(frozen=True)
class Figure:
    """One trade-off figure of a row.

    Attributes
    ----------
    name : str
        One of :data:`FIGURES`.
    title, x_label, y_label : str
        Texts of the figure; labels name their units.
    x_log, y_log : bool
        Whether an axis is best shown on a log scale (y when the curve spans a decade or more).
    curve : Curve
        The row's own design.
    neighbour : Curve
        The neighbouring choice (power or α), to be drawn faint.
    point : tuple of float
        The row's design point ``(x, y)``; nan when the row cannot be computed.
    marks : Curve
        Marked points on the curve (the whole weeks of the runtime figure; empty otherwise).
    guide : float
        An x position worth a vertical line (the plan's duration on the runtime figure), or nan.
    guide_label : str
        Its label.
    reason : str
        Why the figure is empty; ``""`` when it is drawn.
    """

    name: str
    title: str
    x_label: str
    y_label: str
    x_log: bool
    y_log: bool
    curve: Curve
    neighbour: Curve
    point: tuple[float, float]
    marks: Curve
    guide: float
    guide_label: str
    reason: str


@dataclass(frozen=True)
class Tradeoffs:
    """The four figures of one row.

    Attributes
    ----------
    index : int
        The metric row, from 0.
    name : str
        The row's name.
    effect_scale : float
        Display effect = row effect × ``effect_scale`` (100 for percent and percentage points).
    effect_unit : str
        ``"%"``, ``"pp"`` or ``""`` (the metric's own units).
    effect_span : tuple of float
        The effect range of the effect figure, in the row's own units (low, high).
    effect_editable : bool
        Whether the row's effect is an input (so the effect marker may be dragged).
    effect, power, alpha, runtime : Figure
        The figures.
    reason : str
        Why the row cannot be computed; ``""`` when it can.
    quantity : str
        The field the effect figure's x axis is about and its marker drags: ``"effect"``, or
        ``"margin"`` for a margin row (``effect_scale``, ``effect_unit``, ``effect_span`` and
        ``effect_editable`` then describe the margin).
    """

    index: int
    name: str
    effect_scale: float
    effect_unit: str
    effect_span: tuple[float, float]
    effect_editable: bool
    effect: Figure
    power: Figure
    alpha: Figure
    runtime: Figure
    reason: str
    quantity: str = "effect"

    @property
    def figures(self) -> tuple[Figure, Figure, Figure, Figure]:
        """The four figures in display order."""
        return (self.effect, self.power, self.alpha, self.runtime)


def neighbour_power(power: float) -> float:
    """The power to compare with: 0.9 beside anything below 0.85, else 0.8.

    Examples
    --------
    >>> neighbour_power(0.8), neighbour_power(0.9)
    (0.9, 0.8)
    """
    return 0.9 if power < 0.85 else 0.8


def neighbour_alpha(alpha: float) -> float:
    """The α to compare with: 0.01 beside anything above 0.02, else 0.05.

    Examples
    --------
    >>> neighbour_alpha(0.05), neighbour_alpha(0.01)
    (0.01, 0.05)
    """
    return 0.01 if alpha > 0.02 else 0.05


def _power_label(power: float) -> str:
    return f"power {power * 100:.3g} %"


def _alpha_label(alpha: float) -> str:
    return f"α {alpha:.3g}"


def _effect_units(metric: Metric) -> tuple[float, str, str]:
    """``(scale, unit, axis text)`` of the row's effect as displayed."""
    if metric.relative:
        return 100.0, "%", "% of baseline"
    if metric.kind == "proportion":
        return 100.0, "pp", "percentage points"
    unit = f", {metric.unit}" if metric.unit else ""
    if metric.kind == "rate":
        return 1.0, metric.unit, f"difference in count per unit{unit}"
    if metric.kind == "quantile":
        return 1.0, metric.unit, f"difference in the {kinds.quantile_name(metric)}{unit}"
    what = "ratios" if metric.kind == "ratio" else "means"
    return 1.0, metric.unit, f"difference in {what}{unit}"


def _row_effect(metric: Metric, row: RowResult) -> float:
    return row.effect_rel if metric.relative else row.effect_abs


def _row_margin(metric: Metric, row: RowResult) -> float:
    return row.margin_rel if metric.relative else row.margin_abs


def _default_span(anchor: float, value: float) -> tuple[float, float]:
    """A range of ``value`` (effect or margin) at 0.4 to 2.5 times its distance from
    ``anchor`` (the margin, or the effect) on its side."""
    distance = value - anchor
    ends = sorted((anchor + distance * SPAN[0], anchor + distance * SPAN[1]))
    return float(ends[0]), float(ends[1])


def _usable_span(span: tuple[float, float] | None, effect: float) -> bool:
    if span is None:
        return False
    low, high = span
    return math.isfinite(low) and math.isfinite(high) and low <= effect <= high


def _spans_decades(values: np.ndarray) -> bool:
    finite = values[np.isfinite(values) & (values > 0)]
    return bool(finite.size > 1 and finite.max() / finite.min() >= 10.0)


def _empty_figure(name: str, title: str, x_label: str, y_label: str, reason: str,
                  x_log: bool = False) -> Figure:
    blank = Curve(_EMPTY, _EMPTY, "")
    return Figure(name, title, x_label, y_label, x_log, False, blank, blank,
                  (math.nan, math.nan), blank, math.nan, "", reason)


@functools.lru_cache(maxsize=4096)
def _inflation(looks: int, spending: str, futility: bool, alpha: float, power: float,
               two_sided: bool, timing: tuple[float, ...] | None) -> float:
    """Maximum ÷ fixed units of the design the evaluation gives a row at this α and power
    with its looks at ``timing`` (nan when impossible): the evaluation's own design
    (:func:`fourfold.plan.sequential.shared_design`), made once for every curve and row."""
    try:
        return sequential.shared_design(looks, spending, futility, alpha, power, two_sided,
                                        timing).inflation
    except ValueError:
        return math.nan


@functools.lru_cache(maxsize=1024)
def _node_inflations(looks: int, spending: str, futility: bool, two_sided: bool,
                     timing: tuple[float, ...] | None, along_alpha: bool, fixed: float,
                     nodes: tuple[float, ...]) -> tuple[float, ...]:
    """The inflation at each node of a curve along α (at power ``fixed``) or along power (at
    α ``fixed``); remembered, so that a curve drawn again, in another scenario with the same
    looks or after an edit elsewhere costs nothing."""
    grid = np.array(nodes)
    other = np.full(grid.size, fixed)
    alphas, powers = (grid, other) if along_alpha else (other, grid)
    return tuple(inflations(looks, alphas, powers,
                            alternative="two-sided" if two_sided else "greater",
                            spending=spending, timing=timing,
                            futility=sequential.FUTILITY_FAMILY[spending] if futility else None
                            ).tolist())


class _Row:
    """The engine calls of one computed row, vectorised over any of effect, α, power, n."""

    def __init__(self, plan: Plan, metric: Metric, row: RowResult) -> None:
        self.plan, self.metric, self.row = plan, metric, row
        settings = plan.settings
        self.margin_row = is_margin_row(metric)
        self.effect = _row_effect(metric, row)
        self.margin = _row_margin(metric, row)
        sd = kinds.unit_sd(metric) if metric.kind in kinds.DERIVED_SD else metric.sd
        self.common = dict(sd=sd, alternative=metric.alternative, ratio=treatment_ratio(settings),
                           relative=metric.relative, method=metric.method)

    def inflation(self, alpha, power, design: float | None = None):
        """Interim-look inflation at α and power (1 for a fixed design).

        Along a grid of α or power the inflation is computed at a few nodes (and at
        ``design``, the row's own value, so that the design point stays exact) and
        interpolated on the normal-quantile scale of α or power, where it is close to a
        straight line (within 0.2 % of the exact designs with five nodes, where linear
        interpolation in power missed by 1 % near power 0.99). The nodes other than the
        row's own come from :func:`fourfold.engine.inflation.inflations` (one call, each α's
        boundaries made once, about 10⁻⁴ from the exact designs), remembered by the values
        that decide them. In a plan of whole weeks the looks keep the week ends of the row's
        own run along the curves.
        """
        settings = self.plan.settings
        if settings.looks <= 1:
            return 1.0

        timing = sequential.design_timing(settings, float(self.row.days))
        two_sided = self.metric.alternative == "two-sided"

        def at(a: float, p: float) -> float:
            return _inflation(settings.looks, settings.spending, bool(settings.futility),
                              float(a), float(p), two_sided, timing)

        alpha, power = np.asarray(alpha, dtype=float), np.asarray(power, dtype=float)
        if alpha.ndim == 0 and power.ndim == 0:
            return at(alpha, power)
        grid, fixed, along_alpha = (alpha, power, True) if alpha.ndim else (power, alpha, False)
        nodes = np.unique(np.concatenate([grid[:: max(1, grid.size // INFLATION_NODES)],
                                          grid[-1:], [] if design is None else [design]]))
        values = np.array(_node_inflations(
            settings.looks, settings.spending, bool(settings.futility), two_sided, timing,
            along_alpha, float(fixed), tuple(nodes.tolist())))
        if design is not None:  # the row's own point: its evaluation's exact design
            own = nodes == design
            values[own] = (at(design, fixed) if along_alpha else at(fixed, design))
        return np.interp(ndtri(grid), ndtri(nodes), values)

    def units(self, *curves: tuple) -> list[np.ndarray]:
        """Control-arm units (design factor and interim looks included), as the evaluation
        computes them, for each ``(x, alpha, power, design)`` of ``curves`` (one engine
        call), ``x`` the effect, or for a margin row the margin; ``design`` tells
        :meth:`inflation` the row's own value on the curve's grid."""
        metric = self.metric

        def solve(x, a, p):
            if self.margin_row:
                return engine.sample_size(metric.kind, metric.baseline, self.effect, alpha=a,
                                          power=p, margin=x, **self.common)
            return engine.sample_size(metric.kind, metric.baseline, x, alpha=a, power=p,
                                      margin=self.margin, **self.common)

        with np.errstate(all="ignore"):
            n = _split(solve, [curve[:3] for curve in curves])
        return [values * self.row.design_factor * self.inflation(alpha, power, design)
                for values, (_, alpha, power, design) in zip(n, curves, strict=True)]

    def detectable(self, *curves: tuple) -> list[np.ndarray]:
        """Detectable effect, or for a margin row the tightest margin ruled out (row units),
        for each ``(n_control, alpha, power)`` of ``curves`` (control-arm units, the maximum
        with looks; one engine call)."""
        metric = self.metric
        scaled = [(np.asarray(n) / (self.row.design_factor * self.inflation(alpha, power)),
                   alpha, power) for n, alpha, power in curves]

        def solve(n, a, p):
            if self.margin_row:
                return engine.detectable_margin(metric.kind, metric.baseline, self.effect, n,
                                                alpha=a, power=p, **self.common)
            return engine.detectable_effect(metric.kind, metric.baseline, n, alpha=a, power=p,
                                            margin=self.margin, **self.common)

        with np.errstate(all="ignore"):
            return _split(solve, scaled)


def _split(solve, curves) -> list[np.ndarray]:
    """``solve(x, alpha, power)`` once on all ``curves`` laid end to end, then cut back."""
    parts = [np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in curve))
             for curve in curves]
    flat = [np.concatenate([part[k].ravel() for part in parts]) for k in range(3)]
    values = np.asarray(solve(*flat), dtype=float)
    cuts = np.cumsum([part[0].size for part in parts])[:-1]
    return [piece.reshape(part[0].shape)
            for piece, part in zip(np.split(values, cuts), parts, strict=True)]


def tradeoffs(plan: Plan, index: int, result: PlanResult | None = None, *,
              effect_span: tuple[float, float] | None = None, points: int = POINTS
              ) -> Tradeoffs:
    """The curve data of row ``index``'s four trade-off figures.

    Parameters
    ----------
    plan : Plan
        The plan.
    index : int
        The metric row, from 0.
    result : PlanResult, optional
        ``compute(plan)``, when the caller has it already.
    effect_span : tuple of float, optional
        Effect range (row units) of the effect figure to keep, e.g. while the user drags the
        effect; ignored unless the row's effect lies inside it.
    points : int
        Points per curve (at least 5).

    Returns
    -------
    Tradeoffs
        Empty curves and the reason when the row cannot be computed.

    Raises
    ------
    ValueError
        When ``index`` is not a row of the plan or ``points`` is below 5.
    """
    if not 0 <= index < len(plan.metrics):
        raise ValueError(f"index must be a row of the plan (0 to {len(plan.metrics) - 1}), "
                         f"got {index!r}")
    if points < 5:
        raise ValueError(f"points must be at least 5, got {points!r}")
    result = compute(plan) if result is None else result
    plan = windows.frozen(plan, result)  # rows that follow their windows: as evaluated
    metric, row = plan.metrics[index], result.rows[index]
    scale, unit, effect_text = _effect_units(metric)
    quantity = "margin" if is_margin_row(metric) else "effect"
    labels = _labels(plan, metric, quantity, effect_text, unit)
    editable = row.solved not in ("detectable_effect", "detectable_margin")
    x = (_row_margin if quantity == "margin" else _row_effect)(metric, row)
    if row.reason or not math.isfinite(x):
        reason = row.reason or f"the row has no {quantity} to plot"
        figures = [_empty_figure(name, *labels[name], reason, x_log=name == "alpha")
                   for name in FIGURES]
        return Tradeoffs(index, metric.name, scale, unit, (math.nan, math.nan), editable,
                         *figures, reason, quantity)

    engine_row = _Row(plan, metric, row)
    anchor = engine_row.effect if quantity == "margin" else engine_row.margin
    span = effect_span if _usable_span(effect_span, x) else _default_span(anchor, x)
    figures = (
        *_units_figures(engine_row, x, span, scale, labels, points),
        _runtime_figure(engine_row, result, x, scale, labels["runtime"], points),
    )
    return Tradeoffs(index, metric.name, scale, unit, (float(span[0]), float(span[1])),
                     editable, *figures, "", quantity)


def _labels(plan: Plan, metric: Metric, quantity: str, effect_text: str,
            unit: str) -> dict[str, tuple[str, str, str]]:
    """Title, x label and y label of each figure. The weekly figure's y label gives the unit
    alone (its axis is the figure's short side; the first figure's x label says what the
    effect is a difference in)."""
    y_units = ("units per arm" if treatment_ratio(plan.settings) == 1.0
               else "control-arm units")
    sided = "two-sided" if metric.alternative == "two-sided" else "one-sided"
    per = ", per comparison" if plan.settings.correction != "none" else ""
    if quantity == "margin":
        first = ("Sample size against the margin", f"margin ({effect_text})")
        runtime = ("What each week can rule out",
                   f"margin ruled out ({unit})" if unit else "margin ruled out")
    else:
        first = ("Sample size against effect", f"effect ({effect_text})")
        runtime = ("What each week can detect", f"MDE ({unit})" if unit else "MDE")
    return {
        "effect": (*first, y_units),
        "power": ("Sample size against power", "power (%)", y_units),
        "alpha": ("Sample size against α", f"α ({sided}{per}, log scale)", y_units),
        "runtime": (runtime[0], "days of runtime", runtime[1]),
    }


def _units_figures(r: _Row, effect: float, span: tuple[float, float], scale: float,
                   labels: dict, points: int) -> tuple[Figure, Figure, Figure]:
    """The effect, power and α figures: six curves of units from one engine call."""
    row = r.row
    effects = np.linspace(span[0], span[1], points)
    low = max(0.05, min(POWER_RANGE[0], row.power - 0.05))
    high = min(0.999, max(POWER_RANGE[1], row.power + 0.005))
    powers = np.linspace(low, high, points)
    low = min(ALPHA_RANGE[0], row.alpha / 2.0)
    high = max(ALPHA_RANGE[1], min(0.5, row.alpha * 1.5))
    alphas = np.geomspace(low, high, points)
    other_power, other_alpha = neighbour_power(row.power), neighbour_alpha(row.alpha)
    by_effect, by_effect_other, by_power, by_power_other, by_alpha, by_alpha_other = r.units(
        (effects, row.alpha, row.power, None),
        (effects, row.alpha, other_power, None),
        (effect, row.alpha, powers, row.power),
        (effect, other_alpha, powers, row.power),
        (effect, alphas, row.power, row.alpha),
        (effect, alphas, other_power, row.alpha),
    )
    point = row.units_control
    nothing = Curve(_EMPTY, _EMPTY, "")
    return (
        Figure("effect", *labels["effect"], False, _spans_decades(by_effect),
               Curve(effects * scale, by_effect, _power_label(row.power)),
               Curve(effects * scale, by_effect_other, _power_label(other_power)),
               (effect * scale, point), nothing, math.nan, "", ""),
        Figure("power", *labels["power"], False, _spans_decades(by_power),
               Curve(powers * 100.0, by_power, _alpha_label(row.alpha)),
               Curve(powers * 100.0, by_power_other, _alpha_label(other_alpha)),
               (row.power * 100.0, point), nothing, math.nan, "", ""),
        Figure("alpha", *labels["alpha"], True, _spans_decades(by_alpha),
               Curve(alphas, by_alpha, _power_label(row.power)),
               Curve(alphas, by_alpha_other, _power_label(other_power)),
               (row.alpha, point), nothing, math.nan, "", ""),
    )


def _runtime_figure(r: _Row, result: PlanResult, effect: float, scale: float,
                    labels: tuple[str, str, str], points: int) -> Figure:
    row, settings = r.row, r.plan.settings
    if not traffic.has_traffic(settings):
        return _empty_figure("runtime", *labels,
                             traffic.missing_text(settings, "days of runtime"))
    needed = traffic.control_days(settings, row.units_control)  # the table rounds this up
    if math.isinf(needed):
        return _empty_figure("runtime", *labels, "at this traffic the days cannot be counted"
                             if not traffic.is_plain(settings) else
                             f"at {settings.daily_units:g} daily units the days cannot be "
                             "counted")
    longest = max(needed if math.isfinite(needed) else 0.0, result.duration_days or 0.0)
    weeks = int(min(MAX_WEEKS, max(WEEKS, math.ceil(longest / 7.0) + 1)))
    first = min(1.0, needed / 2.0) if math.isfinite(needed) and needed > 0 else 1.0
    days = np.linspace(first, 7.0 * weeks, max(points, 2 * weeks + 1))
    week_days = 7.0 * np.arange(1, weeks + 1)
    other = neighbour_power(row.power)

    def units_after(day_values):
        with np.errstate(over="ignore"):  # inf units where the traffic is beyond a double
            return traffic.control_units(settings, day_values)

    at_days, at_days_other, at_weeks = (
        values * scale for values in r.detectable((units_after(days), row.alpha, row.power),
                                                  (units_after(days), row.alpha, other),
                                                  (units_after(week_days), row.alpha, row.power)))
    duration = result.duration_days
    guide = float(duration) if duration is not None and math.isfinite(duration) else math.nan
    guide_label = f"test runs {format_days(guide)} d" if math.isfinite(guide) else ""
    if traffic.extrapolated(settings, guide):  # past the reach curve: the fitted model's days
        guide_label += ", extrapolated"
    return Figure("runtime", *labels, False, False,
                  Curve(days, at_days, _power_label(row.power)),
                  Curve(days, at_days_other, _power_label(other)),
                  (needed, effect * scale),
                  Curve(week_days, at_weeks, "whole weeks"),
                  guide, guide_label, "")
