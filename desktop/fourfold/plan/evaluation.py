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
    detectable effect, power or α use their own ``n``, or, without one, the control units of
    the plan's duration (``duration_days × daily_units × share / (1 + arms × ratio)``; without
    daily units the binding row's control units), and take that duration as their days.
Margin rows
    A one-sided row with a margin (:func:`fourfold.plan.rules.is_margin_row`: a guardrail, a
    non-inferiority or superiority-by-margin test) is about its margin: its effect is the true
    difference assumed (usually 0), and where another row would solve for the detectable
    effect it solves for the tightest margin it rules out
    (:func:`fourfold.engine.detectable_margin`; ``solved == "detectable_margin"``). Every row
    reports the margin it was computed with in ``margin_abs`` and ``margin_rel``.
Power at the plan's duration
    Every computed row of a complete plan gets the power of its test — its α, its effect
    (given or solved) and margin (given or solved) — with the control units of the plan's
    duration (a fixed runtime's, or the binding row's whole days or weeks of traffic), in
    ``PlanResult.duration_powers``: a secondary row's real chance in the test as planned.
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
Incomplete plans
    A plan in which a primary or guardrail row cannot be computed is *incomplete*: such a row
    might need longer than every other, so the plan has no duration, total units or binding
    metric (``None``), even with a fixed runtime, and ``PlanResult.incomplete`` names each
    such row with its reason. A secondary row that cannot be computed leaves the plan
    complete (a note names it). A plan file whose rows break the rules of
    :mod:`fourfold.plan.rules` (written by hand, say) is loaded as it is and evaluated this
    way, so that it can be opened and mended.
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
from typing import TYPE_CHECKING

import numpy as np

from fourfold.plan import traffic, windows
from fourfold.plan.arms import row_alphas
from fourfold.plan.fields import METRIC_FIELDS, SETTINGS_FIELDS
from fourfold.plan.model import Plan
from fourfold.plan.results import PlanResult, RowResult, Unfinished
from fourfold.plan.row_cache import RowCache, row_inputs
from fourfold.plan.rows import (
    AtDuration,
    not_settled,
    powers_at,
    runtime_units,
    solve_rows,
    waits_for_duration,
    without_duration,
)
from fourfold.plan.summary import DECIDING_ROLES, RowFacts, summarise

if TYPE_CHECKING:
    import pandas

_RENAMED = {"alpha": "alpha_override", "power": "power_override"}
"""The row overrides' columns in :func:`evaluate` (``alpha`` and ``power`` are the results')."""
_FRAME_METRIC_FIELDS = tuple(name for name in METRIC_FIELDS if name != "simulation")
_RESULT_FIELDS = tuple(item.name for item in dataclasses.fields(RowResult))
_FLOAT_RESULT_FIELDS = frozenset(item.name for item in dataclasses.fields(RowResult)
                                 if item.type == "float")
_FRAME_METRIC_NAMES = tuple(_RENAMED.get(name, name) for name in _FRAME_METRIC_FIELDS)

__all__ = ["PlanResult", "RowCache", "RowResult", "Unfinished", "compute", "evaluate",
           "runtime_units"]


def _columns(names: tuple[str, ...]):
    """A function of a sequence of rows giving one list per attribute in ``names``.

    Written out from the names once, as ``[row.name for row in rows]`` each: a comprehension
    reads a fixed attribute about twice as fast as ``operator.attrgetter`` does (the
    interpreter specialises the read), and reading the rows is most of :func:`evaluate`'s own
    time on a large plan. The names are dataclass fields, never input.
    """
    lists = ", ".join(f"[row.{name} for row in rows]" for name in names)
    return eval(f"lambda rows: ({lists},)")


_metric_columns = _columns(_FRAME_METRIC_FIELDS)
_result_columns = _columns(_RESULT_FIELDS)


def _evaluate_rows(plan: Plan, designs: dict, cache: RowCache | None = None
                   ) -> tuple[list[RowResult], list[int]]:
    """Every row of the plan, with one engine call per group of rows that share a solve, and
    the rows whose key changed (all of them without a cache).

    Rows found in ``cache`` are reused; the cache is left holding this plan's rows, and the
    list returned is its own (copy it before changing it). Only the rows the cache has not
    keyed since they changed (:meth:`RowCache.take_unkeyed`, synced with this plan) may differ
    from its keys.
    """
    metrics = plan.metrics
    dirty = None if cache is None else cache.take_unkeyed()
    if not metrics:
        return [], []
    if cache is None:
        results: list[RowResult | None] = [None] * len(metrics)
        solve_rows(plan, designs, row_alphas(plan), range(len(metrics)), results)
        return results, list(range(len(metrics)))
    try:
        return _evaluate_cached(plan, designs, cache, dirty)
    except BaseException:
        # the cache's lists are changed in place: one left half done is not to be trusted
        cache.keys, cache.results, cache.unkeyed = [], [], None
        raise


def _evaluate_cached(plan: Plan, designs: dict, cache: RowCache, dirty: list[int] | None
                     ) -> tuple[list[RowResult], list[int]]:
    """:func:`_evaluate_rows` with a cache (``dirty``: the rows not keyed since they changed;
    ``None``: any row). The cache's α, keys and results change in place: an edit of one row
    of a large plan copies none of them."""
    metrics = plan.metrics
    primaries = int(np.count_nonzero(cache.primary))
    if dirty is None or primaries != cache.primaries or len(cache.keys) != len(metrics):
        alphas = row_alphas(plan, primaries=primaries)
        keys = list(zip(alphas, map(row_inputs, metrics), strict=True))
        if len(keys) == len(cache.keys):  # an edit in place: look up only the rows that differ
            changed = [index for index, (key, before)
                       in enumerate(zip(keys, cache.keys, strict=True)) if key != before]
            old, results = [cache.keys[index] for index in changed], cache.results
        else:
            changed, old, results = list(range(len(keys))), None, [None] * len(keys)
        cache.alphas, cache.keys = alphas, keys
    else:  # only the rows in ``dirty`` may differ, and no other row's α moved
        alphas, keys, results = cache.alphas, cache.keys, cache.results
        changed, old = [], []
        for index, alpha in zip(dirty, row_alphas(plan, dirty, primaries), strict=True):
            alphas[index] = alpha
            key = (alpha, row_inputs(metrics[index]))
            if key != keys[index]:
                old.append(keys[index])
                keys[index] = key
                changed.append(index)
    cache.primaries = primaries
    missing = []
    for index in changed:
        results[index] = cache.rows.get(keys[index])
        if results[index] is None:
            missing.append(index)
    if missing and cache.shared is not None:
        missing = cache.borrow(keys, missing, results)
    if missing:
        solve_rows(plan, designs, alphas, missing, results)
        if cache.shared is not None:
            cache.lend(keys, missing, results)
    _remember(cache, keys, changed, old, results)
    return results, changed


def _remember(cache: RowCache, keys: list, changed: list, old: list | None,
              results: list) -> None:
    """Leave ``cache`` holding exactly the rows of this evaluation.

    Rows with the same inputs share one result, now and next time; only the rows in
    ``changed``, whose keys were ``old`` (``None``: every row is new), are looked at.
    """
    if old is None:
        cache.rows, cache.uses = {}, {}
    else:
        for before in old:
            left = cache.uses[before] - 1
            if left:
                cache.uses[before] = left
            else:
                del cache.uses[before], cache.rows[before]
    for index in changed:
        key = keys[index]
        results[index] = cache.rows.setdefault(key, results[index])
        cache.uses[key] = cache.uses.get(key, 0) + 1
    cache.keys, cache.results = keys, results


def compute(plan: Plan, *, cache: RowCache | None = None, powers: bool = True,
            edited: list[int] | None = None) -> PlanResult:
    """Evaluate every metric row of a plan and the plan's duration.

    Parameters
    ----------
    plan : Plan
        A plan whose fields are valid (as loaded or edited through the command stack).
    cache : RowCache, optional
        The document's cache: rows whose inputs did not change since the last call are not
        solved again (the result is the same).
    powers : bool
        Also each row's power at the plan's duration (``duration_powers``); ``False`` leaves
        them ``nan``, for a caller that reads only the duration and the rows.
    edited : list of int, optional
        With ``cache``: the rows assigned to in place since the cache last saw the plan, when
        the caller knows them (the window's command stack reports them), so that the cache
        looks at those rows only (:meth:`RowCache.sync`). ``None``: it looks at every row.

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
        return (_settle(plan, None, powers) if windows.uses_windows(plan)
                else _compute(plan, None, powers=powers))
    cache.start()
    cache.sync(plan, edited)
    if cache.follows.any():
        if edited is not None:
            cache.sync(plan)  # the fixed point's rounds left other rows' stamps behind
        # what the rounds give differs from the latest result in ways the cache does not note
        cache.moved, cache.plain = None, False
        if not powers:
            return _settle(plan, cache, powers)
        settings, rows = cache.settings, cache.stamps.copy()
        memo = cache.settled
        if memo is not None and memo[0] == settings and np.array_equal(memo[1], rows):
            return memo[2]
        result = _settle(plan, cache, powers)
        cache.settled = (settings, rows, result)
        return result
    cache.plain = True
    return _compute(plan, cache, powers, synced=True)


def _settle(plan: Plan, cache: RowCache | None, powers: bool) -> PlanResult:
    """Rows that follow their history windows: the fixed point of duration and figures
    (:mod:`fourfold.plan.windows`)."""
    runtime = plan.settings.runtime_days
    if runtime is not None:
        result = _compute(windows.at_days(plan, runtime), cache, powers)
        return dataclasses.replace(result, window_days=float(runtime), notes=(
            *result.notes, *windows.notes(plan, runtime, "the fixed runtime")))
    days = windows.start(plan)
    tried: list[float] = []
    found: list[float] = []
    for _ in range(windows.MAX_ROUNDS):
        shown = windows.at_days(plan, days)
        result = _compute(shown, cache, powers)
        duration = result.duration_days
        if duration is None or windows.is_settled(days, duration):
            why = ("the plan's duration" if duration is not None else
                   "the plan has no duration to match; the shortest window")
            return dataclasses.replace(result, window_days=days, notes=(
                *result.notes, *windows.notes(plan, days, why)))
        tried.append(days)
        found.append(duration)
        if duration in tried:
            break
        days = duration
    # A cycle: longer windows' figures shorten the duration. Halve the days between the
    # longest tried whose figures need more and the shortest whose figures need fewer.
    step = 7.0 if plan.settings.whole_weeks else 1.0
    bracket = windows.bracket(tried, found)
    while bracket is not None and (days := windows.between(*bracket, step)) is not None:
        shown = windows.at_days(plan, days)
        result = _compute(shown, cache, powers)
        duration = result.duration_days
        if duration is None or windows.is_settled(days, duration):
            return dataclasses.replace(result, window_days=days, notes=(
                *result.notes, *windows.notes(plan, days, "the plan's duration")))
        tried.append(days)
        found.append(duration)
        bracket = (days, bracket[1]) if duration > days else (bracket[0], days)
    return _unsettled(shown, result, windows.rounds_text(tried, found))


def _unsettled(shown: Plan, result: PlanResult, reason: str) -> PlanResult:
    """The plan as incomplete: its windowed deciding rows' duration does not settle."""
    rows = list(result.rows)
    for index, metric in enumerate(shown.metrics):
        if rows[index].reason:
            continue
        if metric.role in DECIDING_ROLES and windows.follows(metric):
            rows[index] = not_settled(rows[index], reason)
        elif waits_for_duration(shown.settings, metric):
            rows[index] = without_duration(rows[index])
    final = summarise(shown, tuple(rows), RowFacts(shown.metrics, rows))
    return dataclasses.replace(final, duration_powers=(math.nan,) * len(rows))


class _Summary:
    """:func:`fourfold.plan.summary.summarise` of one evaluation's rows, through the cache's
    facts (refreshed where the rows changed) or facts of its own."""

    def __init__(self, plan: Plan, designs: dict, cache: RowCache | None) -> None:
        self.plan, self.designs, self.cache = plan, designs, cache

    def __call__(self, rows, waiting: np.ndarray | None = None, fresh=((),)) -> PlanResult:
        """The summary of ``rows``; ``fresh``: lists of the rows whose results were replaced
        since the last call."""
        rows = tuple(rows)
        if self.cache is None:
            facts = RowFacts(self.plan.metrics, rows)
        else:
            self.cache.mark(*fresh)
            facts = self.cache.summary_facts(self.plan, rows)
            self.cache.summarised = rows
        return summarise(self.plan, rows, facts, self.designs, waiting)


def _compute(plan: Plan, cache: RowCache | None, powers: bool = True,
             synced: bool = False) -> PlanResult:
    """:func:`compute` of a plan whose rows' figures are fixed (``synced``: the caller has
    synced the cache with ``plan`` already)."""
    if cache is None:
        designs: dict = {}
        waits = np.array([waits_for_duration(plan.settings, metric) for metric in plan.metrics],
                         dtype=bool)
    else:
        if not synced:
            cache.sync(plan)
        designs, waits = cache.designs, cache.waits
    base, changed = _evaluate_rows(plan, designs, cache)
    rows, fresh = base, (changed,)
    waiting = np.flatnonzero(waits).tolist()
    held = None if cache is None or not waiting else cache.take_held()
    if waiting:  # solved at the duration below; the cache keeps their results before it
        if held is not None and len(cache.summarised) == len(base):
            # the rows as last summarised: the waiting rows as they were made then (at the
            # duration, say), the rows whose keys changed as they are now
            rows = list(cache.summarised)
            for index in changed:
                rows[index] = base[index]
        else:
            rows, fresh, held = list(base), (changed, waiting), _BEFORE
    summary = _Summary(plan, designs, cache)
    result = summary(rows, waits, fresh=fresh)
    at = _at_duration(plan, result)
    if waiting:
        alphas = cache.alphas if cache is not None else row_alphas(plan)
        redo = waiting if cache is None else [index for index in changed if waits[index]]
        result, held = _solve_waiting(plan, (base, rows), designs, alphas, (waiting, redo),
                                      held, result, at, summary)
        at = at if result.status == "complete" else None
        if cache is not None:
            cache.held = held
    found, where, solved = (math.nan,) * len(rows), None, None
    if not powers:
        if cache is not None:
            cache.powers_at = None  # the rows changed now are not in the kept powers
    elif at is not None and rows:
        found, solved = _duration_powers(plan, result.rows, at, designs, cache, changed)
        where = _where(at)
    if cache is not None:
        cache.note_powers(found, where, solved)
    return dataclasses.replace(result, duration_powers=found)


def _where(at: AtDuration) -> tuple:
    """The units and days of ``at`` as a key (days ``None`` without traffic: nan equals
    nothing, not even itself)."""
    return at.units, at.days if math.isfinite(at.days) else None


def _at_duration(plan: Plan, result: PlanResult) -> AtDuration | None:
    """The control units and days the plan's duration brings (``None``: no duration)."""
    settings = plan.settings
    if result.incomplete:
        return None
    if settings.runtime_days is not None:
        units = runtime_units(settings)
        return None if units is None else AtDuration(units, float(settings.runtime_days))
    if result.binding_index is None:
        return None
    if result.duration_days is None:  # no traffic: the binding row's units, no days
        return AtDuration(result.rows[result.binding_index].units_control, math.nan)
    days = result.duration_days
    return AtDuration(runtime_units(dataclasses.replace(settings, runtime_days=days)), days)


_BEFORE, _WITHOUT = ("before",), ("without",)
"""What the waiting rows of a list of rows hold: their results before the duration, or
without one (the plan is incomplete); ``("at", units, days)``: solved at that duration."""


def _solve_waiting(plan: Plan, lists: tuple[list, list], designs: dict, alphas: list[float],
                   todo: tuple[list[int], list[int]], held: tuple, result: PlanResult,
                   at: AtDuration | None, summary: _Summary) -> tuple[PlanResult, tuple | None]:
    """Solve the rows without units of their own at the plan's duration, then summarise; the
    final result and what its waiting rows hold (``None``: not known).

    ``lists``: the rows' results before the duration and the rows summarised, whose waiting
    rows hold ``held``; ``todo``: the waiting rows and those of them that changed (only they
    are made again when the waiting rows are to hold what they hold). Without a duration they
    stay not computed; when one of them leaves the plan incomplete, the others lose the
    duration they were solved at too.
    """
    base, rows = lists
    waiting, changed = todo
    target = ("at", *_where(at)) if at is not None else _WITHOUT if result.incomplete else _BEFORE
    redo = changed if held == target else waiting
    if at is not None:
        solve_rows(plan, designs, alphas, redo, rows, at)
    else:
        for index in redo:
            rows[index] = without_duration(base[index]) if target is _WITHOUT else base[index]
    final = summary(rows, fresh=(redo,))
    if at is not None and final.incomplete:
        for index in waiting:
            if not rows[index].reason:
                rows[index] = without_duration(rows[index])
        return summary(rows, fresh=(waiting,)), None
    return final, target


def _duration_powers(plan: Plan, rows: tuple[RowResult, ...], at: AtDuration, designs: dict,
                     cache: RowCache | None, changed: list[int]
                     ) -> tuple[tuple[float, ...], list[int] | None]:
    """Each row's power at the plan's duration, and the rows solved again (``None``: all);
    with a cache, only the rows whose key changed (``changed``) are solved again while the
    duration's units and days stay, and a shared pool's powers of rows with the same settings,
    key and duration are taken from it (:meth:`RowCache.borrow_powers`)."""
    where = _where(at)
    if cache is not None and cache.powers_at == where and len(cache.powers) == len(rows):
        powers, missing, solved = cache.powers, changed, changed  # changed in place
    else:
        powers, missing, solved = [math.nan] * len(rows), range(len(rows)), None
    pooled = cache is not None and cache.shared is not None
    if missing and pooled:
        missing = cache.borrow_powers(where, missing, powers)
    if missing:
        found = powers_at(plan, rows, list(missing), at, designs)
        for index, power in zip(missing, found, strict=True):
            powers[index] = power
        if pooled:
            cache.lend_powers(where, missing, powers)
    if cache is not None:
        cache.powers, cache.powers_at = powers, where
    return tuple(powers), solved


def evaluate(plan: Plan) -> pandas.DataFrame:
    """:func:`compute` as a table: one row per metric with every input and result.

    Inputs keep their field names, except the row overrides of α and power, which are
    ``alpha_override`` and ``power_override``; ``alpha`` and ``power`` are the values the row
    was evaluated at (or solved), ``power_at_duration`` its power at the plan's duration
    (:attr:`PlanResult.duration_powers`). The plan-level results and the settings are in
    ``df.attrs`` (``duration_days``, ``total_units``, ``binding_index``, ``binding_name``,
    ``notes``, ``status`` — ``"complete"`` or ``"incomplete"`` —, ``incomplete`` — one dict of
    ``index``, ``name`` and ``reason`` per deciding row that cannot be computed — and
    ``settings``, whose traffic model fields — :data:`fourfold.plan.traffic.TRAFFIC_SETTINGS`
    — are there only for a plan that uses them).

    Examples
    --------
    >>> from fourfold.plan.model import Plan
    >>> frame = evaluate(Plan.empty())
    >>> list(frame["role"]), frame.attrs["binding_name"]
    (['primary'], 'Primary metric')
    """
    import pandas

    result = compute(plan)
    # Column by column, without copying a row into a dict: a float field of the results is a
    # float array (what pandas makes of the same numbers), every other field a list pandas
    # reads as before (a row of the user's may hold ints or None where the sample has floats).
    data = dict(zip(_FRAME_METRIC_NAMES, _metric_columns(plan.metrics), strict=True))
    for name, values in zip(_RESULT_FIELDS, _result_columns(result.rows), strict=True):
        data[name] = (np.fromiter(values, float, count=len(values))
                      if name in _FLOAT_RESULT_FIELDS else values)
    binding = np.zeros(len(result.rows), dtype=bool)
    if result.binding_index is not None:
        binding[result.binding_index] = True
    data["binding"] = binding
    data["power_at_duration"] = np.array(result.duration_powers, dtype=float)
    # The arrays are the frame's own: taken as they are (copy=False), each column its own block.
    frame = (pandas.DataFrame(data, copy=False) if plan.metrics else
             pandas.DataFrame(columns=list(data), dtype=object))  # no rows: no types to read
    frame.attrs.update(
        duration_days=result.duration_days,
        total_units=result.total_units,
        binding_index=result.binding_index,
        binding_name=result.binding_name,
        notes=list(result.notes),
        status=result.status,
        incomplete=[dataclasses.asdict(item) for item in result.incomplete],
        settings={name: getattr(plan.settings, name) for name in SETTINGS_FIELDS
                  if name not in traffic.TRAFFIC_SETTINGS or traffic.uses_model(plan.settings)},
    )
    return frame
