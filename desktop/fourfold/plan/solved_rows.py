"""The rows the engine solved, as columns: their whole units, days and interim looks.

:func:`fourfold.plan.rows.solve_rows` solves a plan's rows in one engine call per group of
rows that share a solve; what follows the engine call is done here for every solved row at
once, one numpy array per quantity instead of one Python call per row:

- :meth:`Solved.of_group` reads a group's solved values into the row's units, effect, power,
  α and margin, and fails the rows whose figures cannot be counted;
- :func:`finish` gives them days of traffic (:func:`fourfold.plan.traffic.days_for`), moves
  the looks of sample-size rows in a plan of whole weeks to week ends (:func:`week_ends`),
  and fills the sequential fields (:func:`fourfold.plan.sequential.rows_fields`).

The arithmetic is that of the rules in :mod:`fourfold.plan.evaluation`, operation for operation
in the same order on the same doubles, so that a row's figures do not depend on the other rows
solved with it (``tests/plan/test_solved_rows.py`` holds each row of a varied plan equal to the
row solved alone). Overflow gives inf and says nothing, as Python's own arithmetic does: the
caller runs these under ``numpy.errstate`` (:func:`~fourfold.plan.rows.solve_rows` does).
Group sequential designs are looked up in the evaluation's dict of designs
(:func:`fourfold.plan.sequential.row_design`), so rows that share α, power, sidedness and days
share one design.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fourfold.plan import sequential, traffic
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.model import Settings
from fourfold.plan.results import RowResult

WEEK_ROUNDS = 6
"""At most this many rounds move a row's run by the weeks its week-end design needs."""


def failed(solved: str, factor: float, alpha: float, power: float, reason: str) -> RowResult:
    """A row that was not computed, and why."""
    nan = math.nan
    return RowResult(nan, nan, nan, nan, nan, nan, power, alpha, reason, solved, factor,
                     nan, nan, nan, None)


def column(values: list, dtype: type = float) -> np.ndarray:
    """``values`` as an array (``None`` reads as nan in a float column)."""
    return np.array(values, dtype=dtype)


def ceil(values) -> np.ndarray:
    """Round up to whole numbers, forgiving floating-point dust just above an integer; nan
    where a value is not finite.

    Examples
    --------
    >>> ceil([2.0000000001, 2.1, np.nan]).tolist()
    [2.0, 3.0, nan]
    """
    values = np.asarray(values, dtype=float)
    up = np.ceil(values - 1e-9 * np.maximum(1.0, np.abs(values)))
    return np.where(np.isfinite(values), up, np.nan)


def totals(settings: Settings, n_control) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Whole units: control, each treatment arm, all arms.

    Examples
    --------
    >>> [units.tolist() for units in totals(Settings(arms=2), [1569.2])]
    [[1570.0], [1570.0], [4710.0]]
    """
    control = ceil(n_control)
    treatment = ceil(treatment_ratio(settings) * control)
    return control, treatment, control + settings.arms * treatment


def days_of(settings: Settings, n_control) -> np.ndarray:
    """Days for ``n_control`` control units, as :func:`fourfold.engine.duration_days` counts
    them (whole days, whole weeks when asked; nan without daily units)."""
    n_control = np.asarray(n_control, dtype=float)
    if not traffic.has_traffic(settings):
        return np.full(n_control.shape, np.nan)
    total = totals(settings, n_control)[2]
    if not traffic.is_plain(settings):
        return np.asarray(traffic.days_for(settings, total), dtype=float)
    days = ceil(total / (settings.daily_units * settings.share))
    return 7.0 * np.ceil(days / 7.0) if settings.whole_weeks else days


def both(relative: np.ndarray, baseline: np.ndarray,
         value: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Effects or margins in the rows' units as (difference, fraction of the baseline)."""
    share = np.where(baseline != 0, value / baseline, np.nan)
    return np.where(relative, value * baseline, value), np.where(relative, value, share)


@dataclass
class Solved:
    """Solved rows that passed the engine, one entry per row (in the order of ``index``).

    ``alpha_in``/``power_in`` are the row's own α (corrected) and power, ``alpha``/``power``
    what it reports (solved or given); ``fixed`` the fixed design's control units of a
    sample-size row; ``staged`` its design (``None``: fixed); ``waits`` whether it takes the
    plan's duration as its days; ``units`` control, treatment and total units.
    """

    index: list
    solved: list
    factor: np.ndarray
    alpha_in: np.ndarray
    power_in: np.ndarray
    alternative: list
    staged: list
    waits: np.ndarray
    fixed: np.ndarray
    units: tuple
    effect: tuple
    power: np.ndarray
    alpha: np.ndarray
    margin: tuple

    @classmethod
    def of_group(cls, settings: Settings, solved: str, metrics: list, rows: list,
                 members: list[int], values: np.ndarray, reasons: list[str],
                 results: list) -> Solved | None:
        """A group's solved ``values`` (one engine call's, with its ``reasons``) read into
        units, effect, power, α and margin; the rows that fail go to ``results`` at their
        index. ``None`` when none is left."""
        factor = column([row.factor for row in rows])
        alpha_in = column([row.alpha for row in rows])
        power_in = column([row.power for row in rows])
        staged = [row.staged for row in rows]
        effect = column([metric.effect for metric in metrics])
        margin = column([metric.margin for metric in metrics])
        ok = np.array([not reason for reason in reasons], dtype=bool)
        alpha, power = alpha_in, power_in
        if solved == "sample_size":
            n_control = values * (factor * column([sequential.inflation(made)
                                                  for made in staged]))
        else:
            n_control = column([row.n_control for row in rows])
            if solved == "detectable_effect":
                effect = values
            elif solved == "detectable_margin":
                margin = values
            elif solved == "power":
                power = column([
                    value if made is None or not good else sequential.power_of(made, value)
                    for made, value, good in zip(staged, values.tolist(), ok.tolist(),
                                                 strict=True)])
            else:
                alpha = values
        arms = n_control * (1 + settings.arms * treatment_ratio(settings))
        uncounted = ok & np.isfinite(values) & ~np.isfinite(arms)
        finite = (np.isfinite(n_control) & np.isfinite(effect) & np.isfinite(power)
                  & np.isfinite(alpha) & np.isfinite(margin))
        good = ok & ~uncounted & finite
        if not good.all():
            _fail_rows(solved, members, factor, alpha_in, power_in, reasons, uncounted,
                       good, results)
            if not good.any():
                return None
        chosen = np.flatnonzero(good)
        picked = chosen.tolist()
        relative = column([metrics[i].relative for i in picked], bool)
        baseline = column([metrics[i].baseline for i in picked])
        return cls(
            index=[members[i] for i in picked], solved=[solved] * len(picked),
            factor=factor[chosen], alpha_in=alpha_in[chosen], power_in=power_in[chosen],
            alternative=[metrics[i].alternative for i in picked],
            staged=[staged[i] for i in picked],
            waits=column([rows[i].at_duration for i in picked], bool),
            fixed=(values * factor)[chosen], units=totals(settings, n_control[chosen]),
            effect=both(relative, baseline, effect[chosen]), power=power[chosen],
            alpha=alpha[chosen], margin=both(relative, baseline, margin[chosen]),
        )

    @classmethod
    def joined(cls, parts: list[Solved]) -> Solved:
        """The rows of several groups as one set of columns."""
        if len(parts) == 1:
            return parts[0]
        out = {}
        for name in cls.__dataclass_fields__:
            first = getattr(parts[0], name)
            if isinstance(first, list):
                out[name] = [item for part in parts for item in getattr(part, name)]
            elif isinstance(first, tuple):
                out[name] = tuple(np.concatenate([getattr(part, name)[k] for part in parts])
                                  for k in range(len(first)))
            else:
                out[name] = np.concatenate([getattr(part, name) for part in parts])
        return cls(**out)


def _fail_rows(solved: str, members: list[int], factor: np.ndarray, alpha: np.ndarray,
               power: np.ndarray, reasons: list[str], uncounted: np.ndarray, good: np.ndarray,
               results: list) -> None:
    """The failed rows of a group (see :meth:`Solved.of_group`), each with its reason."""
    shown_alpha = math.nan if solved == "significance_level" else None
    shown_power = math.nan if solved == "power" else None
    none_found = f"the engine found no finite {solved.replace('_', ' ')} for this row"
    for i in np.flatnonzero(~good).tolist():
        reason = reasons[i]
        if not reason and uncounted[i]:
            reason = "needs more units than can be counted" + (
                f" (variance factor {factor[i]:g})" if factor[i] != 1 else "")
        elif not reason:
            reason = none_found
        results[members[i]] = failed(
            solved, float(factor[i]),
            float(alpha[i]) if shown_alpha is None else shown_alpha,
            float(power[i]) if shown_power is None else shown_power, reason)


def week_ends(settings: Settings, rows: Solved, chosen: np.ndarray, days: np.ndarray,
              designs: dict) -> None:
    """Sample-size rows (``chosen``) with interim looks in a plan of whole weeks: the design
    with its looks at the ends of each row's weeks, its units (the fixed design's × that
    design's inflation) and days, in place of ``rows``' units and staged designs and of
    ``days``.

    The weeks come from the units and the units from the design at those weeks: from the
    equally spaced design's days, a row's run grows by weeks until its traffic holds the
    units (at most :data:`WEEK_ROUNDS` rounds).
    """
    control, treatment, total = rows.units
    active = chosen
    for _ in range(WEEK_ROUNDS):
        made = [sequential.row_design(settings, rows.alpha_in[i], rows.power_in[i],
                                      rows.alternative[i], designs, day)
                for i, day in zip(active.tolist(), days[active].tolist(), strict=True)]
        for i, design in zip(active.tolist(), made, strict=True):
            rows.staged[i] = design
        n_control = rows.fixed[active] * column([design.inflation for design in made])
        control[active], treatment[active], total[active] = totals(settings, n_control)
        needed = days_of(settings, n_control)
        more = ~(needed <= days[active])
        active = active[more]
        days[active] = needed[more]
        if not active.size:
            return


def finish(settings: Settings, rows: Solved, results: list, at_duration,
           designs: dict) -> None:
    """Days (one call for all rows) and the sequential fields of the solved ``rows``, into
    ``results`` at their index; ``at_duration`` gives the days of the rows that wait for
    the plan's duration."""
    total = rows.units[2]
    if settings.runtime_days is not None:
        days = np.full(total.shape, float(settings.runtime_days))
    elif not traffic.has_traffic(settings):
        days = np.full(total.shape, np.nan)
    else:
        days = np.array(traffic.days_for(settings, total), dtype=float)
    if rows.waits.any():
        days[rows.waits] = at_duration.days
    sample = np.array([solved == "sample_size" for solved in rows.solved], dtype=bool)
    finite = np.isfinite(days)
    uncounted = ~finite if settings.daily_units is not None else np.zeros(days.shape, bool)
    if settings.looks > 1 and settings.whole_weeks and settings.runtime_days is None:
        weekly = np.flatnonzero(sample & finite)
        if weekly.size:
            week_ends(settings, rows, weekly, days, designs)
    unknown = sample & np.isnan(days) & ~uncounted if traffic.has_traffic(settings) else \
        np.zeros(days.shape, bool)
    fields = sequential.rows_fields(rows.staged, total, days, settings, designs)
    why = f"needs more days than can be counted at {settings.daily_units:g} daily units" \
        if settings.daily_units is not None else ""
    columns = zip(rows.index, rows.solved, rows.factor.tolist(), rows.alpha_in.tolist(),
                  rows.power_in.tolist(), *(units.tolist() for units in rows.units),
                  days.tolist(), *(part.tolist() for part in rows.effect),
                  rows.power.tolist(), rows.alpha.tolist(),
                  *(part.tolist() for part in rows.margin), *fields,
                  uncounted.tolist(), unknown.tolist(), strict=True)
    for (index, solved, factor, alpha_in, power_in, control, treatment, units_total, day,
         effect_abs, effect_rel, power, alpha, margin_abs, margin_rel, units_max,
         expected_units, expected_days, looks, too_long, not_known) in columns:
        if too_long:
            results[index] = failed(solved, factor, alpha, power, why)
        elif not_known:
            results[index] = failed(solved, factor, alpha_in, power_in,
                                    traffic.unknown_text(settings, units_total))
        else:
            results[index] = RowResult(control, treatment, units_total, day, effect_abs,
                                       effect_rel, power, alpha, "", solved, factor,
                                       units_max, expected_units, expected_days, looks,
                                       margin_abs, margin_rel)
