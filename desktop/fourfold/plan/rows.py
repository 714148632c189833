"""Solving metric rows through the engine: the plan-level checks of a row, one vectorised
engine call per group of rows that share a solve, and the rounding of units into days.

The rules are those of :mod:`fourfold.plan.evaluation`; :func:`solve_rows` is what its
:func:`~fourfold.plan.evaluation.compute` calls for the rows it has not cached.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from fourfold import engine
from fourfold.plan import sequential
from fourfold.plan.model import Metric, Plan, Settings
from fourfold.plan.results import RowResult


def _ceil(value: float) -> float:
    """Round up to a whole number, forgiving floating-point dust just above an integer."""
    if not math.isfinite(value):
        return math.nan
    return float(math.ceil(value - 1e-9 * max(1.0, abs(value))))


def row_alphas(plan: Plan) -> list[float]:
    """Each row's α after the plan's correction (one engine call for all rows)."""
    settings = plan.settings
    alphas = [settings.alpha if metric.alpha is None else metric.alpha
              for metric in plan.metrics]
    if settings.correction == "none" or not alphas:
        return alphas
    primary = [metric.role == "primary" for metric in plan.metrics]
    comparisons = settings.arms * np.where(primary, float(sum(primary)), 1.0)
    adjusted = engine.adjusted_alpha(np.array(alphas, dtype=float), comparisons,
                                     settings.correction)
    return adjusted.tolist()


def runtime_units(settings: Settings) -> float | None:
    """Control-arm units a fixed runtime provides, or ``None`` without runtime or traffic.

    Examples
    --------
    >>> runtime_units(Settings(runtime_days=14, daily_units=30_000, share=0.5, arms=2))
    70000.0
    """
    if settings.runtime_days is None or settings.daily_units is None:
        return None
    return (settings.runtime_days * settings.daily_units * settings.share
            / (1.0 + settings.arms * settings.ratio))


def _failed(solved: str, factor: float, alpha: float, power: float, reason: str) -> RowResult:
    nan = math.nan
    return RowResult(nan, nan, nan, nan, nan, nan, power, alpha, reason, solved, factor,
                     nan, nan, nan, None)


@dataclass(frozen=True)
class _Pending:
    """A row that passed the plan-level checks and waits for its group's engine call."""

    solved: str
    alpha: float
    power: float
    factor: float
    staged: Any
    n_control: float | None
    n_effective: float | None


def _prepare_row(plan: Plan, metric: Metric, alpha: float, factor: float,
                 designs: dict) -> RowResult | _Pending:
    """The plan-level checks of a row: a failed :class:`RowResult` or what the engine needs."""
    settings = plan.settings
    runtime = settings.runtime_days is not None
    solved = "detectable_effect" if runtime and metric.solve == "sample_size" else metric.solve
    power = settings.power if metric.power is None else metric.power
    shown_alpha = math.nan if solved == "significance_level" else alpha
    shown_power = math.nan if solved == "power" else power

    n_control = None
    if solved != "sample_size":
        n_control = runtime_units(settings) if runtime else metric.n
        if n_control is None:
            why = ("a fixed runtime needs the plan's daily units" if runtime else
                   "needs n (control units) or a plan runtime to solve for "
                   + solved.replace("_", " "))
            return _failed(solved, factor, shown_alpha, shown_power, why)
    try:
        staged = sequential.row_design(settings, alpha, power, metric.alternative, designs)
    except ValueError as error:
        return _failed(solved, factor, shown_alpha, shown_power, str(error))
    if staged is not None and solved == "significance_level":
        return _failed(solved, factor, shown_alpha, shown_power, sequential.NO_ALPHA_SOLVE)
    if solved != "detectable_effect" and metric.effect is None:
        return _failed(solved, factor, shown_alpha, shown_power,
                       "needs an effect to solve for " + solved.replace("_", " "))
    n_effective = None if n_control is None else n_control / factor
    return _Pending(solved, alpha, power, factor, staged, n_control, n_effective)


def _column(values: list, dtype: type = float) -> np.ndarray:
    return np.array(values, dtype=dtype)


def _solve_group(plan: Plan, key: tuple, members: list[int],
                 pending: dict[int, _Pending]) -> tuple[np.ndarray, np.ndarray]:
    """One engine call for rows sharing kind, method, alternative, solve and sd-or-not.

    Returns the solved values and the reasons, in the order of ``members``; the reasons are
    those :func:`fourfold.engine.problems` gives for each row's own inputs.
    """
    kind, method, alternative, solved, has_sd = key
    metrics = [plan.metrics[index] for index in members]
    rows = [pending[index] for index in members]
    baseline = _column([metric.baseline for metric in metrics])
    alpha = _column([row.alpha for row in rows])
    power = _column([row.power for row in rows])
    common = dict(
        sd=_column([metric.sd for metric in metrics]) if has_sd else None,
        alternative=alternative, ratio=plan.settings.ratio, method=method,
        relative=_column([metric.relative for metric in metrics], bool),
        margin=_column([metric.margin for metric in metrics]),
    )
    if solved == "detectable_effect":
        n_effective = _column([row.n_effective for row in rows])
        inflation = _column([sequential.inflation(row.staged) for row in rows])
        values, reasons = engine.values_and_reasons(solved, kind, baseline,
                                                    n=n_effective / inflation, alpha=alpha,
                                                    power=power, **common)
        if np.any(inflation != 1.0):
            first = engine.problems(solved, kind, baseline, n=n_effective, alpha=alpha,
                                    power=power, **common)
            reasons = np.where(first != "", first, reasons)
        return values, reasons
    effect = _column([metric.effect for metric in metrics])
    n_effective = None if solved == "sample_size" else _column([row.n_effective for row in rows])
    return engine.values_and_reasons(solved, kind, baseline, effect=effect, n=n_effective,
                                     alpha=alpha, power=power, **common)



def solve_rows(plan: Plan, designs: dict, alphas: list[float], missing: list[int],
                results: list) -> None:
    """Fill ``results`` at the ``missing`` rows: one engine call per group of rows."""
    settings = plan.settings
    metrics = plan.metrics
    todo = [metrics[index] for index in missing]
    factors = engine.variance_factor(
        _column([metric.rho for metric in todo]),
        _column([metric.cluster_size for metric in todo]),
        _column([metric.icc for metric in todo]),
        _column([metric.cluster_cv for metric in todo]),
    )
    pending: dict[int, _Pending] = {}
    groups: dict[tuple, list[int]] = {}
    for index, metric, factor in zip(missing, todo, factors.tolist(), strict=True):
        prepared = _prepare_row(plan, metric, alphas[index], factor, designs)
        if isinstance(prepared, RowResult):
            results[index] = prepared
            continue
        pending[index] = prepared
        key = (metric.kind, metric.method, metric.alternative, prepared.solved,
               metric.sd is not None)
        groups.setdefault(key, []).append(index)

    solved_rows = []
    for key, members in groups.items():
        values, reasons = _solve_group(plan, key, members, pending)
        for index, value, reason in zip(members, values.tolist(), reasons.tolist(),
                                        strict=True):
            row = pending[index]
            outcome = _solved_row(plan.metrics[index], row, value, str(reason), settings)
            if isinstance(outcome, RowResult):
                results[index] = outcome
            else:
                solved_rows.append((index, outcome))

    if solved_rows:
        _finish_rows(settings, solved_rows, pending, results)


def _finish_rows(settings: Settings, solved_rows: list, pending: dict[int, _Pending],
                 results: list) -> None:
    """Days (one engine call for all rows) and the sequential fields of the solved rows."""
    totals = _column([outcome[2] for _, outcome in solved_rows])
    if settings.runtime_days is not None:
        days = [float(settings.runtime_days)] * len(solved_rows)
    elif settings.daily_units is None:
        days = [math.nan] * len(solved_rows)
    else:
        days = engine.duration_days(totals, settings.daily_units, settings.share,
                                    settings.whole_weeks).tolist()
    for (index, outcome), day in zip(solved_rows, days, strict=True):
        row = pending[index]
        units_total = outcome[2]
        results[index] = RowResult(*outcome[:3], day, *outcome[3:], "", row.solved, row.factor,
                                   *sequential.row_fields(row.staged, units_total, day))


def _solved_row(metric: Metric, row: _Pending, value: float, reason: str,
                settings: Settings) -> RowResult | tuple:
    """A failed :class:`RowResult`, or the row's units, effect, power and α (days to come)."""
    solved, factor = row.solved, row.factor
    shown_alpha = math.nan if solved == "significance_level" else row.alpha
    shown_power = math.nan if solved == "power" else row.power
    if reason:
        return _failed(solved, factor, shown_alpha, shown_power, reason)
    n_control, effect, power, alpha = row.n_control, metric.effect, row.power, row.alpha
    if solved == "sample_size":
        n_control = value * (factor * sequential.inflation(row.staged))
    elif solved == "detectable_effect":
        effect = value
    elif solved == "power":
        power = value
        if row.staged is not None:
            power = sequential.power_of(row.staged, power)
    else:
        alpha = value
    if not all(math.isfinite(number) for number in (n_control, effect, power, alpha)):
        return _failed(solved, factor, shown_alpha, shown_power,
                       f"the engine found no finite {solved.replace('_', ' ')} for this row")
    if metric.relative:
        effect_abs, effect_rel = effect * metric.baseline, effect
    else:
        effect_abs = effect
        effect_rel = effect / metric.baseline if metric.baseline != 0 else math.nan
    units_control = _ceil(n_control)
    units_treatment = _ceil(settings.ratio * units_control)
    units_total = units_control + settings.arms * units_treatment
    return (units_control, units_treatment, units_total, float(effect_abs), float(effect_rel),
            power, alpha)


