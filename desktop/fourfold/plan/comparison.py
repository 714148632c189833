"""The base and its scenarios side by side: one evaluation per scenario, and their table.

:func:`outcomes` evaluates the base and every scenario (each through its effective plan, with
a row cache of its own, so an edit re-solves only the rows it changed in each scenario);
:func:`compare` is that as a :class:`pandas.DataFrame`, one row per scenario, base first;
:func:`evaluate` is :func:`fourfold.plan.evaluation.evaluate` of one scenario.

Complete and incomplete
-----------------------
A scenario whose primary or guardrail rows cannot all be computed is **incomplete**: its
duration, total units and binding metric are not given (``nan`` / empty), because the rows
that were computed may not be the ones that decide — the comparison never shows a confident
duration for it. Its rows' reasons are in ``notes``.

Examples
--------
>>> from fourfold.plan import load, sample_path
>>> frame = compare(load(sample_path()))
>>> list(frame["scenario"])[:2], float(frame["duration_days"].iloc[0])
(['Base', 'Without arm B'], 35.0)
"""

from __future__ import annotations

import math
import operator
from dataclasses import dataclass, field, fields
from functools import cached_property
from typing import TYPE_CHECKING

import numpy as np

from fourfold.plan import scenarios, traffic
from fourfold.plan.evaluation import DECIDING_ROLES, PlanResult, RowCache, compute
from fourfold.plan.model import Plan, Settings
from fourfold.plan.summary import stamps

if TYPE_CHECKING:
    import pandas


@dataclass(frozen=True)
class Outcome:
    """One scenario's evaluation.

    Attributes
    ----------
    name : str or None
        The scenario (``None``: the base).
    label : str
        Its name as shown ("Base" for the base).
    plan : Plan
        Its effective plan (rows keep the base rows' ids).
    result : PlanResult
        Its evaluation.
    problems : tuple of str
        Its stale changes, in words.
    complete : bool
        Whether every primary and guardrail row could be computed (module notes).
    inputs : tuple or None
        The settings' values and the rows' stamps when they were evaluated (``None``: not
        recorded), by which :func:`outcome` tells that the scenario is still what it was.
    """

    name: str | None
    label: str
    plan: Plan
    result: PlanResult
    problems: tuple[str, ...]
    complete: bool
    inputs: tuple | None = field(default=None, compare=False, repr=False)

    @cached_property
    def positions(self) -> dict[str, int]:
        """The index of each row of :attr:`plan` by its row id."""
        return {metric.id: index for index, metric in enumerate(self.plan.metrics)}

    @property
    def duration_days(self) -> float:
        """The duration, ``nan`` when incomplete or when nothing sets it."""
        value = self.result.duration_days
        return math.nan if value is None or not self.complete else float(value)

    @property
    def total_units(self) -> float:
        """Units over all arms, ``nan`` when incomplete or when nothing sets them."""
        value = self.result.total_units
        return math.nan if value is None or not self.complete else float(value)

    @property
    def binding_name(self) -> str | None:
        """The binding metric's name, ``None`` when incomplete or when nothing binds."""
        return self.result.binding_name if self.complete else None


def complete(plan: Plan, result: PlanResult) -> bool:
    """Whether every primary and guardrail row of ``plan`` was computed.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan
    >>> plan = Plan(metrics=[Metric(role="primary", effect=None)])
    >>> complete(plan, compute(plan))
    False
    """
    return not result.incomplete


@dataclass
class Caches:
    """One :class:`~fourfold.plan.evaluation.RowCache` per scenario of an open document.

    Keyed by scenario name (``None``: the base); :func:`outcomes` drops the caches of
    scenarios that no longer exist.

    Examples
    --------
    >>> caches = Caches()
    >>> caches.get("A") is caches.get("A"), caches.get(None) is caches.get("A")
    (True, False)
    """

    caches: dict = field(default_factory=dict)
    pool: dict = field(default_factory=dict)
    """Row results the caches share (:attr:`RowCache.shared`)."""

    def get(self, name: str | None) -> RowCache:
        """The cache of scenario ``name``, made on first use."""
        cache = self.caches.get(name)
        if cache is None:
            cache = self.caches[name] = RowCache(shared=self.pool)
        return cache

    def keep(self, names) -> None:
        """Forget the caches of every scenario not in ``names``."""
        for name in [name for name in self.caches if name not in names]:
            del self.caches[name]


def outcome(plan: Plan, name: str | None, cache: RowCache | None = None, *,
            edited: list[int] | None = None, kept: Outcome | None = None) -> Outcome:
    """Evaluate scenario ``name`` of ``plan`` (``None``: the base); ``edited``: the rows of
    the scenario's plan edited in place since ``cache`` last saw it, when known
    (:func:`fourfold.plan.evaluation.compute`).

    ``kept``: an earlier outcome of the same scenario, returned as it is when the scenario's
    settings, rows (the same objects, not assigned to since: their stamps) and stale changes
    are still those it was evaluated with — nothing is computed again.

    Examples
    --------
    >>> from fourfold.plan import load, sample_path
    >>> plan = load(sample_path())
    >>> first = outcome(plan, "Without arm B")
    >>> outcome(plan, "Without arm B", kept=first) is first
    True
    >>> plan.metrics[0].effect = 0.06  # every scenario shows the base's row 0
    >>> outcome(plan, "Without arm B", kept=first) is first
    False
    """
    resolved = scenarios.resolve(plan, name)
    metrics = resolved.plan.metrics
    settings = _SETTINGS(resolved.plan.settings)
    if (kept is not None and kept.inputs is not None and kept.name == name
            and kept.problems == resolved.problems and kept.inputs[0] == settings
            and len(kept.plan.metrics) == len(metrics)
            and all(map(operator.is_, kept.plan.metrics, metrics))
            and np.array_equal(kept.inputs[1], stamps(metrics))):
        return kept
    result = compute(resolved.plan, cache=cache, edited=edited)
    # the stamps the cache has just seen (of these rows, unless rows that follow their
    # windows were evaluated in rounds): an edit of one row reads no other row here either
    seen = cache.stamps if cache is not None and cache.plain else None
    found = seen.copy() if seen is not None and seen.size == len(metrics) else stamps(metrics)
    return Outcome(name, scenarios.BASE if name is None else name, resolved.plan, result,
                   resolved.problems, complete(resolved.plan, result), (settings, found))


_SETTINGS = operator.attrgetter(*(each.name for each in fields(Settings)))
"""Every settings value, as a tuple (settings are changed in place: a copy to compare)."""


def outcomes(plan: Plan, caches: Caches | None = None) -> list[Outcome]:
    """The base and every scenario, evaluated; base first, then the scenarios in order."""
    names = [None, *(scenario.name for scenario in plan.scenarios)]
    if caches is not None:
        caches.keep(names)
    return [outcome(plan, name, None if caches is None else caches.get(name))
            for name in names]


def deciding_rows(found: list[Outcome]) -> list[tuple[str, str]]:
    """``(row id, label)`` of every row that is primary or guardrail in some scenario.

    In base order; the label is the base row's name (with its row number when two rows
    share a name).
    """
    base = found[0].plan.metrics
    wanted = {metric.id for each in found for metric in each.plan.metrics
              if metric.role in DECIDING_ROLES}
    names = [metric.name for metric in base]
    return [(metric.id, metric.name if names.count(metric.name) == 1 else
             f"{metric.name} #{index + 1}")
            for index, metric in enumerate(base) if metric.id in wanted]


def table(found: list[Outcome], base: Plan) -> pandas.DataFrame:
    """The comparison table of evaluated scenarios (see :func:`compare`)."""
    import pandas

    return pandas.DataFrame.from_records(records(found, base))


def records(found: list[Outcome], base: Plan) -> list[dict]:
    """The rows of :func:`table` as dictionaries, column names as keys (no pandas)."""
    rows = deciding_rows(found)
    found_records = []
    for each in found:
        record = {
            "scenario": each.label,
            "status": "complete" if each.complete else "incomplete",
            "duration_days": each.duration_days,
            "duration_weeks": each.duration_days / 7.0,
            "total_units": each.total_units,
            "binding_metric": each.binding_name,
            "changes": ("" if each.name is None else scenarios.describe(base, each.name)),
            "notes": " ".join([*each.problems, *_failures(each), *_flags(each)]),
        }
        index = each.positions
        for row_id, label in rows:
            row = each.result.rows[index[row_id]] if row_id in index else None
            for column, value in _row_cells(row):
                record[f"{label}: {column}"] = value
        found_records.append(record)
    return found_records


def _failures(each: Outcome) -> list[str]:
    """Why the scenario's primary and guardrail rows that cannot be computed cannot."""
    return [f"{metric.name}: not computed — {row.reason}."
            for metric, row in zip(each.plan.metrics, each.result.rows, strict=True)
            if row.reason and metric.role in DECIDING_ROLES]


def _flags(each: Outcome) -> list[str]:
    """A duration past the scenario's reach curve, flagged with its stated error."""
    if not each.complete or not math.isfinite(each.duration_days):
        return []
    flag = traffic.extrapolation_note(each.plan.settings, each.duration_days,
                                      each.total_units)
    return [flag] if flag else []


def _row_cells(row) -> list[tuple[str, float]]:
    nan = math.nan
    if row is None:  # left out by the scenario
        return [("units_control", nan), ("units_treatment_per_arm", nan), ("effect_abs", nan),
                ("effect_rel_frac", nan), ("power_frac", nan)]
    return [("units_control", row.units_control),
            ("units_treatment_per_arm", row.units_treatment),
            ("effect_abs", row.effect_abs), ("effect_rel_frac", row.effect_rel),
            ("power_frac", row.power)]


def compare(plan: Plan, *, caches: Caches | None = None) -> pandas.DataFrame:
    """The base and every scenario side by side: one row per scenario, base first.

    Columns: ``scenario``, ``status`` (``complete`` / ``incomplete``), ``duration_days``,
    ``duration_weeks``, ``total_units`` (all arms), ``binding_metric``, ``changes`` (what the
    scenario changes, in words), ``notes`` (stale changes and rows that cannot be computed),
    then for every row that is primary or guardrail in some scenario ``"NAME: units_control"``,
    ``"NAME: units_treatment_per_arm"``, ``"NAME: effect_abs"``, ``"NAME: effect_rel_frac"``
    (the detectable effect, given or solved) and ``"NAME: power_frac"`` (``nan`` where the
    scenario leaves the row out or cannot compute it). An incomplete scenario has no duration,
    total or binding metric (module notes).

    Each scenario's row equals :func:`evaluate` of that scenario.
    """
    return table(outcomes(plan, caches), plan)


def evaluate(plan: Plan, scenario: str | None = None) -> pandas.DataFrame:
    """:func:`fourfold.plan.evaluation.evaluate` of scenario ``scenario`` (``None``: the base).

    ``df.attrs`` also holds ``scenario`` (its name, ``"Base"`` for the base) and the stale
    changes of the scenario first in ``notes``.

    Raises
    ------
    fourfold.plan.PlanError
        When the plan has no scenario of that name.

    Examples
    --------
    >>> from fourfold.plan import load, sample_path
    >>> plan = load(sample_path())
    >>> evaluate(plan, "Without arm B").attrs["settings"]["arms"], plan.settings.arms
    (1, 2)
    """
    from fourfold.plan import evaluation

    resolved = scenarios.resolve(plan, scenario)
    table = evaluation.evaluate(resolved.plan)
    table.attrs["scenario"] = scenarios.BASE if scenario is None else scenario
    table.attrs["notes"] = [*resolved.problems, *table.attrs["notes"]]
    return table
