"""Evaluate a plan: every metric row through the engine, then the plan's duration.

:func:`compute` is what the window calls on every edit (numpy only); :func:`evaluate` is the
same computation as a :class:`pandas.DataFrame` for exports and notebooks.

Semantics
---------
α and power
    A row's ``alpha`` / ``power`` override the plan's; otherwise the plan's apply. When the
    plan's ``correction`` is not ``"none"``, primary rows test at
    ``adjusted_alpha(α, arms × number of primary rows, correction)`` and secondary and guardrail
    rows at ``adjusted_alpha(α, arms, correction)`` (each row is compared once per treatment
    arm); Dunnett's correction splits α over the primary rows (Bonferroni) and covers the arms
    by its critical value for the plan's allocation and the row's sidedness
    (:func:`fourfold.plan.arms.row_alphas`). Rows solving for the significance level report
    the α they achieve, uncorrected.
Design factor
    ``variance_factor(rho, cluster_size, icc, cluster_cv)`` multiplies the units a row needs;
    rows that start from a number of units use ``n / factor`` effective units.
Units from a runtime
    With ``settings.runtime_days`` set, every row gets the control units the runtime provides,
    ``runtime_days × daily_units × share / (1 + arms × ratio)``, and rows that would solve for
    sample size solve for the detectable effect instead. Without a runtime, rows that solve for
    detectable effect, power or α use their own ``n``.
Rounding
    Unit counts are rounded up to whole units: control ``ceil(n)``, each treatment arm
    ``ceil(ratio × control)``, total ``control + arms × treatment``; days come from
    :func:`fourfold.engine.duration_days` on that total (``nan`` without ``daily_units``).
Binding metric
    Among primary and guardrail rows that solve for sample size and can be computed, the one
    needing the most days (then the most units) binds: it sets the plan's ``duration_days`` and
    ``total_units``. Secondary rows are informational (a note names those that would need
    more). In runtime mode nothing binds; the duration is the runtime and the total is the
    traffic it brings.
Interim looks
    With ``settings.looks > 1`` every row's units and days are the maximum of its group
    sequential design (:mod:`fourfold.plan.sequential`): the fixed design's units times the
    design's inflation factor; units from a runtime or ``n`` are that maximum. Expected units
    and days under H1 and the day of each look fill the sequential fields.
Problems
    A row that cannot be computed gets ``nan`` results and the engine's reason
    (:func:`fourfold.engine.problems`) in ``reason``; :func:`compute` does not raise for a plan
    whose fields are valid.
Engine calls
    Rows that share kind, method, direction, the quantity solved and whether they give an sd
    are solved together in one vectorised engine call
    (:func:`fourfold.engine.values_and_reasons`: values and reasons from one solve), so the
    number of calls does not grow with the rows; a :class:`RowCache` skips rows whose inputs
    did not change since the document's last evaluation.

References
----------
Kohavi, R., Tang, D. & Xu, Y. (2020). *Trustworthy Online Controlled Experiments*. Cambridge
University Press (ch. 15 and 17: power, multiple metrics, guardrails).
"""

from __future__ import annotations

import dataclasses
import math
import operator
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from fourfold import engine
from fourfold.plan import kinds, sequential
from fourfold.plan.arms import row_alphas, treatment_ratio
from fourfold.plan.fields import METRIC_FIELDS, SETTINGS_FIELDS
from fourfold.plan.model import Metric, Plan, Settings

if TYPE_CHECKING:
    import pandas

DECIDING_ROLES = ("primary", "guardrail")

_ROW_INPUTS = ("kind", "method", "baseline", "sd", "effect", "relative", "alternative", "margin",
               "power", "rho", "cluster_size", "icc", "cluster_cv", "solve", "n",
               *kinds.RATIO_FIELDS, *kinds.QUANTILE_FIELDS)
"""The metric fields a row's result depends on (with its corrected α and the settings)."""

_ROW_KEY = operator.attrgetter(*_ROW_INPUTS)

_SETTINGS_INPUTS = tuple(name for name in SETTINGS_FIELDS if name not in ("title", "description"))


@dataclass(frozen=True)
class RowResult:
    """The evaluation of one metric row (``nan`` where it cannot be computed).

    Attributes
    ----------
    units_control, units_treatment, units_total : float
        Whole units: the control arm, each treatment arm, all arms together.
    days : float
        Days of traffic for ``units_total`` (``nan`` without daily units).
    effect_abs, effect_rel : float
        The effect (given or solved) as a difference and as a fraction of the baseline.
    power, alpha : float
        Power and significance level of the row (given, corrected or solved).
    reason : str
        Why the row cannot be computed; ``""`` when it can.
    solved : str
        The quantity computed: ``"sample_size"``, ``"detectable_effect"``, ``"power"`` or
        ``"significance_level"``.
    design_factor : float
        The variance factor applied to the row's units.
    units_max, units_expected_h1, days_expected_h1 : float
        With interim looks: the maximum total units, the expected total units and days when the
        effect is real. Equal to ``units_total`` / ``days`` for a fixed design.
    look_days : tuple of float or None
        Day of each interim look; ``None`` for a fixed design.
    """

    units_control: float
    units_treatment: float
    units_total: float
    days: float
    effect_abs: float
    effect_rel: float
    power: float
    alpha: float
    reason: str
    solved: str
    design_factor: float
    units_max: float
    units_expected_h1: float
    days_expected_h1: float
    look_days: tuple[float, ...] | None


@dataclass(frozen=True)
class PlanResult:
    """The evaluation of a plan.

    Attributes
    ----------
    rows : tuple of RowResult
        One per metric row, in the plan's order.
    duration_days : float or None
        Days the test runs (the binding row's, or the runtime); ``None`` when nothing decides.
    total_units : float or None
        Units the test needs over all arms (the binding row's, or the runtime's traffic).
    binding_index : int or None
        Index of the binding metric row.
    binding_name : str or None
        Its name.
    notes : tuple of str
        Plain-language remarks on how the plan was evaluated.
    """

    rows: tuple[RowResult, ...]
    duration_days: float | None
    total_units: float | None
    binding_index: int | None
    binding_name: str | None
    notes: tuple[str, ...]


@dataclass
class RowCache:
    """Row results of earlier evaluations, so that :func:`compute` solves only changed rows.

    One cache belongs to one open document (the window's); pass it to every :func:`compute`
    of that document. A row is reused when its inputs, its corrected α and the plan's settings
    are those it was computed with, so the result is the same as without the cache; rows with
    the same inputs share one :class:`RowResult`. Only the rows of the latest evaluation are
    kept.

    Examples
    --------
    >>> from fourfold.plan.model import Plan
    >>> plan, cache = Plan.empty(), RowCache()
    >>> first = compute(plan, cache=cache)
    >>> compute(plan, cache=cache).rows[0] is first.rows[0], len(cache.rows)
    (True, 1)
    """

    settings: tuple | None = None
    rows: dict = field(default_factory=dict)
    designs: dict = field(default_factory=dict)
    keys: list = field(default_factory=list)
    """The latest evaluation's row keys, in the plan's order."""
    results: tuple = ()
    """The latest evaluation's row results, in the plan's order."""
    uses: dict = field(default_factory=dict)
    """How many rows of the latest evaluation have each key of ``rows``."""


def _ceil(value: float) -> float:
    """Round up to a whole number, forgiving floating-point dust just above an integer."""
    if not math.isfinite(value):
        return math.nan
    return float(math.ceil(value - 1e-9 * max(1.0, abs(value))))


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
            / (1.0 + settings.arms * treatment_ratio(settings)))


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
    sd, own = kinds.unit_sds(metrics)  # a ratio's or quantile's sd, from its own inputs
    common = dict(
        sd=None if sd is None else np.where(own == "", sd, 1.0), alternative=alternative,
        ratio=treatment_ratio(plan.settings), method=method,
        relative=_column([metric.relative for metric in metrics], bool),
        margin=_column([metric.margin for metric in metrics]),
    )
    values, reasons = _engine_call(solved, kind, baseline, metrics, rows, alpha, power, common)
    return np.where(own == "", values, np.nan), np.where(own == "", reasons, own)


def _engine_call(solved, kind, baseline, metrics, rows, alpha, power, common):
    """The engine's values and reasons for a group (see :func:`_solve_group`)."""
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


def _evaluate_rows(plan: Plan, designs: dict,
                   cache: RowCache | None = None) -> tuple[RowResult, ...]:
    """Every row of the plan, with one engine call per group of rows that share a solve.

    Rows found in ``cache`` are reused; the cache is left holding this plan's rows.
    """
    metrics = plan.metrics
    if not metrics:
        return ()
    alphas = row_alphas(plan)
    results: list[RowResult | None] = [None] * len(metrics)
    keys = changed = None
    missing = range(len(metrics))
    if cache is not None:
        keys = list(zip(alphas, map(_ROW_KEY, metrics), strict=True))
        if len(keys) == len(cache.keys):  # an edit in place: look up only the rows that differ
            changed = [index for index, (key, before)
                       in enumerate(zip(keys, cache.keys, strict=True)) if key != before]
            results = list(cache.results)
        else:
            changed = range(len(keys))
        missing = []
        for index in changed:
            results[index] = cache.rows.get(keys[index])
            if results[index] is None:
                missing.append(index)
    if missing:
        _solve_rows(plan, designs, alphas, missing, results)
    if keys is not None:
        _remember(cache, keys, changed, results)
    return tuple(results)


def _remember(cache: RowCache, keys: list, changed, results: list) -> None:
    """Leave ``cache`` holding exactly the rows of this evaluation.

    Rows with the same inputs share one result, now and next time; only the rows in
    ``changed`` (all of them when the number of rows changed) are looked at.
    """
    if len(changed) == len(keys):
        cache.rows, cache.uses = {}, {}
    else:
        for index in changed:
            before = cache.keys[index]
            left = cache.uses[before] - 1
            if left:
                cache.uses[before] = left
            else:
                del cache.uses[before], cache.rows[before]
    for index in changed:
        key = keys[index]
        results[index] = cache.rows.setdefault(key, results[index])
        cache.uses[key] = cache.uses.get(key, 0) + 1
    cache.keys, cache.results = keys, tuple(results)


def _solve_rows(plan: Plan, designs: dict, alphas: list[float], missing: list[int],
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
               kinds.has_sd(metric))
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
    units_treatment = _ceil(treatment_ratio(settings) * units_control)
    units_total = units_control + settings.arms * units_treatment
    return (units_control, units_treatment, units_total, float(effect_abs), float(effect_rel),
            power, alpha)


def compute(plan: Plan, *, cache: RowCache | None = None) -> PlanResult:
    """Evaluate every metric row of a plan and the plan's duration.

    Parameters
    ----------
    plan : Plan
        A plan whose fields are valid (as loaded or edited through the command stack).
    cache : RowCache, optional
        The document's cache: rows whose inputs did not change since the last call are not
        solved again (the result is the same).

    Returns
    -------
    PlanResult
        See the module documentation for the rules (α correction, design factor, runtime,
        rounding, binding metric).

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, Settings
    >>> plan = Plan(Settings(daily_units=10_000, whole_weeks=False),
    ...             [Metric(name="Spend", role="primary", kind="mean", baseline=10.0, sd=5.0,
    ...                     effect=0.5, relative=False)])
    >>> result = compute(plan)
    >>> result.rows[0].units_control, result.binding_name
    (1570.0, 'Spend')
    """
    if cache is None:
        designs: dict = {}
    else:
        settings = tuple(getattr(plan.settings, name) for name in _SETTINGS_INPUTS)
        if settings != cache.settings:
            cache.settings, cache.rows, cache.designs = settings, {}, {}
            cache.keys, cache.results, cache.uses = [], (), {}
        designs = cache.designs
    return _summarise(plan, _evaluate_rows(plan, designs, cache), designs)


def _summarise(plan: Plan, rows: tuple[RowResult, ...], designs: dict | None = None) -> PlanResult:
    settings = plan.settings
    notes = []
    if settings.correction != "none":
        primaries = sum(1 for metric in plan.metrics if metric.role == "primary")
        notes.append(
            f"α corrected ({settings.correction}): primary rows for {settings.arms} arm(s) × "
            f"{primaries} primary metric(s), other rows for {settings.arms} arm(s)"
            + (" (Dunnett's critical value over the arms, Bonferroni over the metrics)."
               if settings.correction == "dunnett" else ".")
        )
    notes.extend(sequential.plan_notes(plan, rows, designs))
    notes.extend(kinds.tail_notes(plan.metrics, rows))
    deciding, secondary = [], []  # computed rows that solve for sample size, by role
    for index, (metric, row) in enumerate(zip(plan.metrics, rows, strict=True)):
        if row.reason:
            notes.append(f"{metric.name}: not computed — {row.reason}.")
        elif row.solved == "sample_size":
            if metric.role in DECIDING_ROLES:
                deciding.append(index)
            elif metric.role == "secondary":
                secondary.append(index)

    if settings.runtime_days is not None:
        units = runtime_units(settings)
        if any(metric.solve == "sample_size" for metric in plan.metrics):
            notes.append(f"Fixed runtime of {settings.runtime_days:g} days: rows that solve for "
                         "sample size show the effect they can detect instead.")
        total = None if units is None else units * (1.0 + settings.arms
                                                    * treatment_ratio(settings))
        return PlanResult(rows, float(settings.runtime_days), total, None, None, tuple(notes))

    if not deciding:
        notes.append("No primary or guardrail row solves for sample size: nothing sets the "
                     "duration.")
        return PlanResult(rows, None, None, None, None, tuple(notes))

    def need(index: int) -> tuple[float, float]:
        days = rows[index].days
        return (0.0 if math.isnan(days) else days, rows[index].units_total)

    binding = max(deciding, key=need)
    name = plan.metrics[binding].name
    notes.append(f"{name} needs the most traffic among primary and guardrail rows and sets "
                 "the duration; secondary rows are informational.")
    duration = rows[binding].days
    total = rows[binding].units_total
    for index in secondary:
        metric, row = plan.metrics[index], rows[index]
        if row.units_total > total:
            if math.isfinite(duration):
                gap = f"{row.days:g} days for its power; the test runs {duration:g}"
            else:
                gap = f"{row.units_total:,.0f} units for its power; the test has {total:,.0f}"
            notes.append(f"{metric.name} (secondary) would need {gap}.")
    return PlanResult(rows, None if math.isnan(duration) else duration, total, binding, name,
                      tuple(notes))


def evaluate(plan: Plan) -> pandas.DataFrame:
    """:func:`compute` as a table: one row per metric with every input and result.

    Inputs keep their field names, except the row overrides of α and power, which are
    ``alpha_override`` and ``power_override``; ``alpha`` and ``power`` are the values the row
    was evaluated at (or solved). The plan-level results and the settings are in ``df.attrs``
    (``duration_days``, ``total_units``, ``binding_index``, ``binding_name``, ``notes``,
    ``settings``).

    Examples
    --------
    >>> from fourfold.plan.model import Plan
    >>> frame = evaluate(Plan.empty())
    >>> list(frame["role"]), frame.attrs["binding_name"]
    (['primary'], 'Primary metric')
    """
    import pandas

    result = compute(plan)
    renamed = {"alpha": "alpha_override", "power": "power_override"}
    records = []
    for index, (metric, row) in enumerate(zip(plan.metrics, result.rows, strict=True)):
        record = {renamed.get(name, name): getattr(metric, name)
                  for name in METRIC_FIELDS if name != "simulation"}
        record.update(dataclasses.asdict(row))
        record["binding"] = index == result.binding_index
        records.append(record)
    columns = [renamed.get(name, name) for name in METRIC_FIELDS if name != "simulation"]
    columns += [field.name for field in dataclasses.fields(RowResult)] + ["binding"]
    frame = pandas.DataFrame.from_records(records, columns=columns)
    frame.attrs.update(
        duration_days=result.duration_days,
        total_units=result.total_units,
        binding_index=result.binding_index,
        binding_name=result.binding_name,
        notes=list(result.notes),
        settings={name: getattr(plan.settings, name) for name in SETTINGS_FIELDS},
    )
    return frame
