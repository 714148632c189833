"""What moves the duration: the plan's days when one assumption is off by a given amount.

For the binding row's baseline, its sd, its effect (its margin when the effect is zero, as
for a non-inferiority guardrail), its CUPED ρ when it uses one, and the plan's daily units
and traffic share, :func:`sensitivity` gives the duration with that one input scaled by
``1 − amount`` and ``1 + amount`` (the share at most 100 %, ρ below 1), every other input as
planned. The plan's primary and guardrail rows — the only rows the duration reads — are
evaluated again each time, so another row may become binding; an input that makes the plan
incomplete gives no duration for that side. The assumptions come
sorted by swing — the spread of their two durations — largest first: the plan is most fragile
to the first.

The traffic — the daily units of a constant model, or every point of a reach curve scaled
alike ("Reach") — and the share change every row's days alike and no row's units, so their
durations come from the binding row's units directly through the plan's traffic model
(:func:`fourfold.plan.traffic.days_for`, as the evaluation computes days; ramp-up steps above a
lowered share are capped at it); the row inputs are re-solved through
:func:`fourfold.plan.evaluation.compute` with a scratch :class:`RowCache`, which keeps the
cost at one row per perturbation.

Examples
--------
>>> from fourfold.plan import load, sample_path
>>> found = sensitivity(load(sample_path()))
>>> found.days, found.binding, [(s.label, s.low_days, s.high_days) for s in found.swings][:2]
(35.0, 'Checkout conversion', [('Effect', 49.0, 21.0), ('Baseline', 42.0, 28.0)])
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

from fourfold.plan import traffic, windows
from fourfold.plan.evaluation import DECIDING_ROLES, PlanResult, RowCache, compute
from fourfold.plan.model import Plan, Settings
from fourfold.plan.row_cache import settings_key

DEFAULT_AMOUNT = 0.2


@dataclass(frozen=True)
class Swing:
    """The duration with one input scaled down and up.

    Attributes
    ----------
    label : str
        The input ("Baseline", "Daily units", …).
    field : str
        Its field (a metric field of the binding row, or a settings field).
    value, low_value, high_value : float
        The input as planned and scaled by ``1 − amount`` and ``1 + amount`` (capped).
    low_days, high_days : float
        The plan's duration at those values (``nan`` when the plan cannot be computed then).
    note : str
        Why a side was capped or cannot be computed; ``""`` otherwise.
    percent : bool
        Whether the input reads as a percentage (a share, a proportion's baseline, a relative
        effect or margin).
    """

    label: str
    field: str
    value: float
    low_value: float
    high_value: float
    low_days: float
    high_days: float
    note: str = ""
    percent: bool = False

    @property
    def swing(self) -> float:
        """``|high_days − low_days|``; ``nan`` when a side has no duration."""
        return abs(self.high_days - self.low_days)


@dataclass(frozen=True)
class Sensitivity:
    """The swings of a plan's duration, largest first.

    Attributes
    ----------
    amount : float
        The relative change applied (0.2: ±20 %).
    days : float
        The duration as planned (``nan`` when none).
    binding : str or None
        The binding row's name.
    swings : tuple of Swing
        Sorted by swing, largest first; those without a swing last.
    message : str
        Why there is nothing to show (a fixed runtime, no binding row, no daily units, an
        incomplete plan); ``""`` when there are swings.
    """

    amount: float
    days: float
    binding: str | None
    swings: tuple[Swing, ...]
    message: str = ""


def _scaled(value: float, factor: float, low: float | None, high: float | None) -> float:
    scaled = float(f"{value * factor:.12g}")  # 0.05 × 0.8 is 0.04, not 0.04000000000000001
    if high is not None:
        scaled = min(scaled, high)
    if low is not None:
        scaled = max(scaled, low)
    return scaled


def _complete(plan: Plan, result: PlanResult) -> bool:
    return all(not row.reason for metric, row in zip(plan.metrics, result.rows, strict=True)
               if metric.role in DECIDING_ROLES)


def _duration(plan: Plan, cache: RowCache) -> tuple[float, float]:
    """The plan's duration, and its days before rounding up (to order equal durations)."""
    result = compute(plan, cache=cache, powers=False)
    if not _complete(plan, result) or result.duration_days is None:
        return math.nan, math.nan
    return float(result.duration_days), _exact(plan.settings, result.total_units)


def _exact(settings, total: float) -> float:
    return float(traffic.exact_days(settings, total))


def _traffic_value(settings: Settings, field: str) -> float:
    """The traffic input as a number: the daily units, the share, or a reach curve's units
    by its last day."""
    if field == "reach":
        return float(settings.reach[-1][1])
    return getattr(settings, field)


def _traffic_moved(settings: Settings, field: str, factor: float,
                   high: float | None) -> Settings:
    """``settings`` with the traffic input scaled (a reach curve: every point alike)."""
    if field == "reach":
        reach = tuple((day, _scaled(units, factor, None, None)) for day, units in settings.reach)
        return dataclasses.replace(settings, reach=reach)
    return dataclasses.replace(settings, **{field: _scaled(getattr(settings, field), factor,
                                                           None, high)})


def _row_inputs(metric) -> list[tuple[str, str, float | None, float | None]]:
    """(label, field, lower bound, upper bound) of the row inputs that apply."""
    inputs = [("Baseline", "baseline", None, None)]
    if metric.sd is not None:
        inputs.append(("sd", "sd", None, None))
    if metric.effect:
        inputs.append(("Effect", "effect", None, None))
    elif metric.margin:
        inputs.append(("Margin", "margin", None, None))
    if metric.rho:
        inputs.append(("CUPED ρ", "rho", -0.99, 0.99))
    return inputs


def sensitivity(plan: Plan, amount: float = DEFAULT_AMOUNT, *,
                result: PlanResult | None = None, cache: RowCache | None = None) -> Sensitivity:
    """The duration of ``plan`` with each assumption off by ``amount`` (module notes).

    Parameters
    ----------
    plan : Plan
        A plan (an effective plan for a scenario, :func:`fourfold.plan.effective`).
    amount : float
        The relative change, in (0, 1): 0.2 scales each input by 0.8 and 1.2.
    result : PlanResult, optional
        ``compute(plan)``, when the caller has it.
    cache : RowCache, optional
        A scratch cache kept between calls (not the document's: it is left holding a
        perturbed plan).

    Raises
    ------
    ValueError
        For an ``amount`` outside (0, 1).
    """
    if not (isinstance(amount, (int, float)) and 0 < amount < 1):
        raise ValueError(f"amount must satisfy 0 < amount < 1; got {amount!r}")
    result = compute(plan) if result is None else result
    plan = windows.frozen(plan, result)  # windowed rows keep the figures of the duration
    settings = plan.settings
    days = math.nan if result.duration_days is None else float(result.duration_days)
    if settings.runtime_days is not None:
        return Sensitivity(amount, days, None, (), "A fixed runtime sets the duration: it does "
                           "not move with the assumptions (the detectable effect does).")
    if not _complete(plan, result):
        return Sensitivity(amount, math.nan, None, (), "The plan is incomplete: a primary or "
                           "guardrail row cannot be computed, so there is no duration to move.")
    index = result.binding_index
    if index is None or not traffic.has_traffic(settings):
        why = ("No primary or guardrail row solves for sample size: nothing sets the duration."
               if index is None else "Without daily units the plan has no duration."
               if settings.traffic == "constant" else
               "Without a reach curve the plan has no duration.")
        return Sensitivity(amount, days, None, (), why)
    cache = RowCache() if cache is None else cache
    metric = plan.metrics[index]
    deciding = [row for row, each in enumerate(plan.metrics) if each.role in DECIDING_ROLES]
    at = deciding.index(index)
    swings = []
    for label, field, low, high in _row_inputs(metric):
        value = getattr(metric, field)
        sides = []
        for factor in (1 - amount, 1 + amount):
            changed = dataclasses.replace(metric, **{field: _scaled(value, factor, low, high)})
            metrics = [plan.metrics[row] for row in deciding]
            metrics[at] = changed
            sides.append((getattr(changed, field),
                          *_duration(Plan(settings, metrics), cache)))
        percent = ((field == "baseline" and metric.kind == "proportion")
                   or (field in ("effect", "margin") and metric.relative))
        swings.append(_swing(label, field, value, sides, percent=percent))
    total = result.rows[index].units_total
    volume = ((f"Reach by day {settings.reach[-1][0]:g}", "reach", None)
              if settings.traffic == "reach" else
              ("Daily units", "daily_units", None))
    for label, field, high in (volume, ("Traffic share", "share", 1.0)):
        value = _traffic_value(settings, field)
        sides = []
        for factor in (1 - amount, 1 + amount):
            moved = _traffic_moved(settings, field, factor, high)
            sides.append((_traffic_value(moved, field),
                          float(traffic.days_for(moved, total)), _exact(moved, total)))
        capped = field == "share" and value * (1 + amount) > 1.0
        swings.append(_swing(label, field, value, sides,
                             "the share is at most 100 %" if capped else "",
                             percent=field == "share"))
    swings.sort(key=lambda pair: (math.isnan(pair[0].swing), -_finite(pair[0].swing),
                                  -_finite(pair[1])))
    return Sensitivity(amount, days, metric.name, tuple(swing for swing, _ in swings))


def inputs(plan: Plan, amount: float, result: PlanResult) -> tuple:
    """What :func:`sensitivity` of ``plan`` at ``amount`` with ``result`` reads, to compare:
    the settings, the primary and guardrail rows (by their stamps, which every assignment
    renews), and the result's duration, window days and binding row. Equal inputs give an
    equal answer; a row that decides nothing does not move the bars.

    Examples
    --------
    >>> from fourfold.plan import load, sample_path
    >>> plan = load(sample_path())
    >>> before = inputs(plan, 0.2, compute(plan))
    >>> plan.metrics[1].sd = 15.0  # revenue per visitor, a secondary row
    >>> inputs(plan, 0.2, compute(plan)) == before
    True
    >>> plan.metrics[0].baseline = 0.032  # the primary row
    >>> inputs(plan, 0.2, compute(plan)) == before
    False
    """
    return (amount, settings_key(plan.settings),
            [metric.stamp for metric in plan.metrics if metric.role in DECIDING_ROLES],
            result.duration_days, result.window_days, result.binding_index)


def _finite(value: float) -> float:
    return 0.0 if math.isnan(value) else value


def _swing(label: str, field: str, value: float, sides: list,
           note: str = "", *, percent: bool) -> tuple[Swing, float]:
    """The swing, and its spread in days before rounding up (to order equal swings)."""
    (low_value, low_days, low_exact), (high_value, high_days, high_exact) = sides
    if math.isnan(low_days) or math.isnan(high_days):
        note = note or "the plan cannot be computed on one side"
    return (Swing(label, field, value, low_value, high_value, low_days, high_days, note,
                  percent), abs(high_exact - low_exact))
