"""Many arms: how the units are split between them, and how they share α.

A plan's ``allocation`` is ``"fixed"`` (each treatment arm gets ``ratio`` units per control
unit) or ``"sqrt-k"``: the control gets √k times the units of each of the k treatment arms,
the split that minimises the total units for k comparisons with one control at a given
power (Dunnett 1955). :func:`treatment_ratio` is the ratio every computation uses;
:func:`equal_allocation_saving` sets the plan's needs beside those of equal allocation.
:func:`row_alphas` gives each row its α after the plan's multiple-comparison correction.

References
----------
Dunnett, C. W. (1955). A multiple comparison procedure for comparing several treatments with
a control. *JASA* 50, 1096–1121.

Examples
--------
>>> from fourfold.plan.model import Settings
>>> treatment_ratio(Settings(arms=4, allocation="sqrt-k"))
0.5
"""

from __future__ import annotations

import dataclasses
import functools
import math
from dataclasses import dataclass

import numpy as np

from fourfold import engine
from fourfold.plan.model import Plan, Settings


def treatment_ratio(settings: Settings) -> float:
    """Units of each treatment arm per control unit under the plan's allocation."""
    if settings.allocation == "sqrt-k":
        return float(engine.allocation_ratio(settings.arms, "sqrt-k"))
    return settings.ratio


def row_alphas(plan: Plan, rows=None, primaries: int | None = None) -> list[float]:
    """Each row's α after the plan's correction (one engine call for all rows).

    Primary rows share α over arms × primary metrics, other rows over the arms; Dunnett's
    correction takes the primary metrics by Bonferroni and the arms by its critical value at
    the plan's allocation and each row's sidedness. ``rows`` (indices) asks for those rows
    only, ``primaries`` gives the plan's number of primary rows when the caller knows it
    (an edit that leaves the roles alone changes no other row's α).

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, Settings
    >>> plan = Plan(Settings(arms=2, correction="dunnett"), [Metric(role="primary")])
    >>> [round(alpha, 5) for alpha in row_alphas(plan)]
    [0.02696]
    """
    settings = plan.settings
    metrics = plan.metrics if rows is None else [plan.metrics[index] for index in rows]
    alphas = [settings.alpha if metric.alpha is None else metric.alpha for metric in metrics]
    if settings.correction == "none" or not alphas:
        return alphas
    if primaries is None:
        primaries = sum(metric.role == "primary" for metric in plan.metrics)
    primary = [metric.role == "primary" for metric in metrics]
    counts = np.where(primary, float(primaries), 1.0)
    if settings.correction == "dunnett":  # Bonferroni over primary metrics, Dunnett over arms
        ratio = treatment_ratio(settings)
        return [_dunnett(alpha / count, settings.arms, ratio, metric.alternative)
                for alpha, count, metric in zip(alphas, counts.tolist(), metrics, strict=True)]
    adjusted = engine.adjusted_alpha(np.array(alphas, dtype=float), settings.arms * counts,
                                     settings.correction)
    return adjusted.tolist()


@functools.lru_cache(maxsize=64)
def _dunnett(alpha: float, arms: int, ratio: float, alternative: str) -> float:
    """Dunnett's per-comparison α; a plan has few distinct ones, recomputed on every edit."""
    return float(engine.adjusted_alpha(alpha, arms, "dunnett", ratio=ratio,
                                       alternative=alternative))


@dataclass(frozen=True)
class Saving:
    """The plan's total units and days beside those of equal allocation (ratio 1).

    ``units`` and ``days`` are the plan's, ``equal_units`` and ``equal_days`` those of the same
    plan with every arm as large as the control; days are ``nan`` without daily units.
    """

    units: float
    days: float
    equal_units: float
    equal_days: float

    @property
    def units_saved(self) -> float:
        return self.equal_units - self.units

    @property
    def days_saved(self) -> float:
        return self.equal_days - self.days


def equal_allocation_saving(plan: Plan, result=None, cache=None) -> Saving | None:
    """What the plan's allocation saves against equal allocation, for the binding metric.

    ``None`` when the allocation is already equal, or when either plan has no binding metric
    (a runtime plan, or no row that decides the duration). ``cache`` is a
    :class:`~fourfold.plan.evaluation.RowCache` kept for the equal plan by a caller that asks
    again after every edit (the window).

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, Settings
    >>> plan = Plan(Settings(arms=4, allocation="sqrt-k", daily_units=10_000,
    ...                      whole_weeks=False),
    ...             [Metric(name="Spend", role="primary", kind="mean", baseline=10.0, sd=5.0,
    ...                     effect=0.01)])
    >>> saving = equal_allocation_saving(plan)
    >>> saving.units, saving.equal_units, saving.days_saved
    (176603.0, 196225.0, 2.0)
    """
    from fourfold.plan.evaluation import compute

    if treatment_ratio(plan.settings) == 1.0:
        return None
    result = compute(plan) if result is None else result
    equal = Plan(dataclasses.replace(plan.settings, allocation="fixed", ratio=1.0),
                 plan.metrics)
    other = compute(equal, cache=cache)
    if result.total_units is None or other.total_units is None or \
            plan.settings.runtime_days is not None:
        return None
    nan = math.nan
    days = nan if result.duration_days is None else result.duration_days
    equal_days = nan if other.duration_days is None else other.duration_days
    return Saving(result.total_units, days, other.total_units, equal_days)
