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
from fourfold.plan import kinds, sequential, traffic
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.model import Metric, Plan, Settings
from fourfold.plan.results import RowResult
from fourfold.plan.rules import is_margin_row
from fourfold.plan.solved_rows import Solved, column, days_of, failed, finish


def runtime_units(settings: Settings) -> float | None:
    """Control-arm units a fixed runtime provides, or ``None`` without runtime or traffic
    (the traffic model's :func:`fourfold.plan.traffic.control_units`; nan where its days are
    not known).

    Examples
    --------
    >>> runtime_units(Settings(runtime_days=14, daily_units=30_000, share=0.5, arms=2))
    70000.0
    """
    if settings.runtime_days is None or not traffic.has_traffic(settings):
        return None
    return float(traffic.control_units(settings, settings.runtime_days))


def _runtime_reason(settings: Settings, units: float) -> str:
    """Why a fixed runtime gives a row no units under a traffic model beyond constant daily
    units ("" when it gives some, and always for plain constant traffic: the engine explains
    its own edge cases)."""
    if traffic.is_plain(settings):
        return ""
    if math.isnan(units):
        known = traffic.model(settings)
        return (f"the traffic model does not know the units of a "
                f"{float(settings.runtime_days):g}-day runtime"
                + (f": {known.why}" if known is not None and known.why else ""))
    if units <= 0 and settings.burn_in >= settings.runtime_days:
        return (f"the burn-in ({settings.burn_in} days) takes the whole fixed runtime "
                f"({settings.runtime_days:g} days): no units are analysed")
    return ""


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
    at_duration: bool = False


@dataclass(frozen=True)
class AtDuration:
    """What the plan's duration brings: control-arm units and days (nan without traffic)."""

    units: float
    days: float


def solved_for(settings: Settings, metric: Metric) -> str:
    """What a row computes: its own "solve for", the detectable effect instead of the sample
    size under a fixed runtime, and for a margin row the margin instead of the effect.

    Examples
    --------
    >>> solved_for(Settings(runtime_days=14.0), Metric(alternative="less", margin=0.1))
    'detectable_margin'
    """
    solved = metric.solve
    if settings.runtime_days is not None and solved == "sample_size":
        solved = "detectable_effect"
    if solved == "detectable_effect" and is_margin_row(metric):
        solved = "detectable_margin"
    return solved


def waits_for_duration(settings: Settings, metric: Metric) -> bool:
    """Whether a row takes its units from the plan's duration: it does not solve for sample
    size, gives no ``n`` and the plan has no fixed runtime."""
    return settings.runtime_days is None and metric.solve != "sample_size" and metric.n is None


def needs_units_text(solved: str) -> str:
    """Why a row that waits for the plan's duration has none."""
    return ("needs n (control units), a fixed runtime or a row that sets the plan's duration "
            "to solve for " + solved.replace("_", " "))


def _prepare_row(plan: Plan, metric: Metric, alpha: float, factor: float, designs: dict,
                 at_duration: AtDuration | None = None) -> RowResult | _Pending:
    """The plan-level checks of a row: a failed :class:`RowResult` or what the engine needs."""
    settings = plan.settings
    runtime = settings.runtime_days is not None
    solved = solved_for(settings, metric)
    power = settings.power if metric.power is None else metric.power
    shown_alpha = math.nan if solved == "significance_level" else alpha
    shown_power = math.nan if solved == "power" else power

    n_control = None
    waiting = waits_for_duration(settings, metric)
    if solved != "sample_size":
        n_control = runtime_units(settings) if runtime else metric.n
        if waiting and at_duration is not None:
            n_control = at_duration.units
        if n_control is None:
            why = (f"a fixed runtime needs {traffic.needs_text(settings)}" if runtime else
                   needs_units_text(solved))
            return failed(solved, factor, shown_alpha, shown_power, why)
        if runtime and _runtime_reason(settings, n_control):
            return failed(solved, factor, shown_alpha, shown_power,
                          _runtime_reason(settings, n_control))
    days = math.nan  # the run of a row with units of its own: its looks may fall on week ends
    if n_control is not None and settings.looks > 1 and settings.whole_weeks:
        days = (float(settings.runtime_days) if runtime else
                at_duration.days if waiting and at_duration is not None else
                float(days_of(settings, n_control)))
    try:
        staged = sequential.row_design(settings, alpha, power, metric.alternative, designs,
                                       days)
    except ValueError as error:
        return failed(solved, factor, shown_alpha, shown_power, str(error))
    if staged is not None and solved == "significance_level":
        return failed(solved, factor, shown_alpha, shown_power, sequential.NO_ALPHA_SOLVE)
    if solved != "detectable_effect" and metric.effect is None:
        return failed(solved, factor, shown_alpha, shown_power,
                      "needs an effect to solve for " + solved.replace("_", " "))
    n_effective = None if n_control is None else n_control / factor
    return _Pending(solved, alpha, power, factor, staged, n_control, n_effective,
                    waiting and at_duration is not None)


def _solve_group(plan: Plan, key: tuple, members: list[int],
                 pending: dict[int, _Pending]) -> tuple[np.ndarray, np.ndarray]:
    """One engine call for rows sharing kind, method, alternative, solve and sd-or-not.

    Returns the solved values and the reasons, in the order of ``members``; the reasons are
    those :func:`fourfold.engine.problems` gives for each row's own inputs.
    """
    kind, method, alternative, solved, has_sd = key
    metrics = [plan.metrics[index] for index in members]
    rows = [pending[index] for index in members]
    baseline = column([metric.baseline for metric in metrics])
    alpha = column([row.alpha for row in rows])
    power = column([row.power for row in rows])
    sd, own = kinds.unit_sds(metrics)  # a ratio's or quantile's sd, from its own inputs
    common = dict(
        sd=None if sd is None else np.where(own == "", sd, 1.0), alternative=alternative,
        ratio=treatment_ratio(plan.settings), method=method,
        relative=column([metric.relative for metric in metrics], bool),
        margin=column([metric.margin for metric in metrics]),
    )
    values, reasons = _engine_call(solved, kind, baseline, metrics, rows, alpha, power, common)
    return np.where(own == "", values, np.nan), np.where(own == "", reasons, own)


def _engine_call(solved, kind, baseline, metrics, rows, alpha, power, common):
    """The engine's values and reasons for a group (see :func:`_solve_group`)."""
    effect = column([metric.effect for metric in metrics])
    if solved in ("detectable_effect", "detectable_margin"):
        if solved == "detectable_margin":
            common = dict(common, effect=effect)
        n_effective = column([row.n_effective for row in rows])
        inflation = column([sequential.inflation(row.staged) for row in rows])
        values, reasons = engine.values_and_reasons(solved, kind, baseline,
                                                    n=n_effective / inflation, alpha=alpha,
                                                    power=power, **common)
        if np.any(inflation != 1.0):
            first = engine.problems(solved, kind, baseline, n=n_effective, alpha=alpha,
                                    power=power, **common)
            reasons = np.where(first != "", first, reasons)
        return values, reasons
    n_effective = None if solved == "sample_size" else column([row.n_effective for row in rows])
    return engine.values_and_reasons(solved, kind, baseline, effect=effect, n=n_effective,
                                     alpha=alpha, power=power, **common)


def solve_rows(plan: Plan, designs: dict, alphas: list[float], missing: list[int],
               results: list, at_duration: AtDuration | None = None) -> None:
    """Fill ``results`` at the ``missing`` rows: one engine call per group of rows.

    With ``at_duration``, rows that wait for the plan's duration (:func:`waits_for_duration`)
    take its units and days.
    """
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):  # as Python's floats
        _solve_rows(plan, designs, alphas, missing, results, at_duration)


def _solve_rows(plan: Plan, designs: dict, alphas: list[float], missing: list[int],
                results: list, at_duration: AtDuration | None) -> None:
    settings = plan.settings
    metrics = plan.metrics
    todo = [metrics[index] for index in missing]
    factors = engine.variance_factor(
        column([metric.rho for metric in todo]),
        column([metric.cluster_size for metric in todo]),
        column([metric.icc for metric in todo]),
        column([metric.cluster_cv for metric in todo]),
    )
    pending: dict[int, _Pending] = {}
    groups: dict[tuple, list[int]] = {}
    for index, metric, factor in zip(missing, todo, factors.tolist(), strict=True):
        prepared = _prepare_row(plan, metric, alphas[index], factor, designs, at_duration)
        if isinstance(prepared, RowResult):
            results[index] = prepared
            continue
        pending[index] = prepared
        key = (metric.kind, metric.method, metric.alternative, prepared.solved,
               kinds.has_sd(metric))
        groups.setdefault(key, []).append(index)

    parts = []
    for key, members in groups.items():
        values, reasons = _solve_group(plan, key, members, pending)
        part = Solved.of_group(settings, key[3], [metrics[index] for index in members],
                               [pending[index] for index in members], members, values,
                               reasons.tolist(), results)
        if part is not None:
            parts.append(part)
    if parts:
        finish(settings, Solved.joined(parts), results, at_duration, designs)


def without_duration(row: RowResult) -> RowResult:
    """``row`` as not computed because the plan, being incomplete, has no duration."""
    solved = row.solved
    return failed(solved, row.design_factor,
                  math.nan if solved == "significance_level" else row.alpha,
                  math.nan if solved == "power" else row.power,
                  "the plan is incomplete, so it has no duration to solve for "
                   + solved.replace("_", " ") + " at")


def not_settled(row: RowResult, reason: str) -> RowResult:
    """``row`` as not computed because the duration its figures depend on does not settle."""
    solved = row.solved
    return failed(solved, row.design_factor,
                  math.nan if solved == "significance_level" else row.alpha,
                  math.nan if solved == "power" else row.power, reason)


def powers_at(plan: Plan, rows: tuple[RowResult, ...], indices: list[int], at: AtDuration,
              designs: dict) -> list[float]:
    """The power of each row in ``indices`` with the control units ``at`` brings.

    The row's test as computed: its α (corrected or solved), its effect (given or solved) and
    margin (given or solved), its design factor; with interim looks the units are the maximum
    of its group sequential design (:func:`_through_looks`). ``nan`` for a row that was not
    computed. One engine call per group of rows that share kind, method, direction and
    sd-or-not, with the group's rows in the order of ``indices``; the rows' fields are read
    once, as columns over ``indices``; a ratio's or quantile's sd is read as kept by its row's
    stamp (:func:`fourfold.plan.kinds.kept_unit_sds`).

    Examples
    --------
    >>> from fourfold.plan.evaluation import compute
    >>> plan = Plan(Settings(looks=3), [Metric(role="primary", baseline=0.1, effect=0.05)] * 2)
    >>> result = compute(plan)
    >>> at = AtDuration(result.rows[0].units_control, math.nan)
    >>> powers_at(plan, result.rows, [0, 1], at, {}) == list(result.duration_powers)
    True
    """
    settings = plan.settings
    metrics = [plan.metrics[index] for index in indices]
    chosen = [rows[index] for index in indices]
    powers = np.full(len(indices), np.nan)
    codes: dict[tuple, int] = {}
    code = np.fromiter(
        (-1 if row.reason else codes.setdefault(
            (metric.kind, metric.method, metric.alternative, kinds.has_sd(metric)),
            len(codes))
         for metric, row in zip(metrics, chosen, strict=True)), np.int64, len(indices))
    if not codes:
        return powers.tolist()
    baseline = column([metric.baseline for metric in metrics])
    effect = column([row.effect_abs for row in chosen])
    factor = column([row.design_factor for row in chosen])
    alpha = column([row.alpha for row in chosen])
    margin = column([row.margin_abs for row in chosen])
    asked = column([settings.power if metric.power is None else metric.power
                    for metric in metrics]) if settings.looks > 1 else None
    ratio = treatment_ratio(settings)
    for (kind, method, alternative, _), number in codes.items():
        members = np.flatnonzero(code == number)
        sd, own = kinds.kept_unit_sds([metrics[place] for place in members.tolist()])
        values, reasons = engine.values_and_reasons(
            "power", kind, baseline[members], effect=effect[members],
            n=at.units / factor[members], sd=None if sd is None else np.where(own == "", sd, 1.0),
            alpha=alpha[members], alternative=alternative, ratio=ratio, relative=False,
            margin=margin[members], method=method)
        good = (own == "") & (reasons == "")
        members, values = members[good], values[good]
        if asked is not None:
            values = _through_looks(settings, alternative, alpha[members], asked[members],
                                    values, at.days, designs)
        powers[members] = values
    return powers.tolist()


def _through_looks(settings: Settings, alternative: str, alphas: np.ndarray,
                   asked: np.ndarray, values: np.ndarray, days: float,
                   designs: dict) -> np.ndarray:
    """The powers of rows' group sequential designs from their fixed designs' powers
    ``values``, the rows' α and the power their designs were asked for (``asked``); nan where
    a row's design cannot be made.

    Rows are grouped by their design: one design's boundaries per distinct α and power
    (:func:`fourfold.plan.sequential.row_boundaries`), and
    :func:`fourfold.plan.sequential.power_of` is asked once per distinct fixed power of a
    design's rows, its answer spread over them.
    """
    found = np.full(values.shape, np.nan)
    pairs: dict[tuple[float, float], int] = {}
    which = np.fromiter((pairs.setdefault(pair, len(pairs)) for pair
                         in zip(alphas.tolist(), asked.tolist(), strict=True)),
                        np.int64, values.size)
    for key, number in pairs.items():
        try:
            staged = sequential.row_boundaries(settings, *key, alternative, designs, days)
        except ValueError:
            continue
        members = np.flatnonzero(which == number) if len(pairs) > 1 else slice(None)
        fixed, spread = np.unique(values[members], return_inverse=True)
        reached = np.array([sequential.power_of(staged, value) for value in fixed.tolist()])
        found[members] = reached[spread.reshape(-1)]
    return found
