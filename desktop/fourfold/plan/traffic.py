"""The traffic model: how many units a test has analysed after d days, and the days for n units.

Models
------
``constant`` (the default)
    ``daily_units`` new eligible units every day, none of them seen before: after d days the
    test has d × daily units × share.
``reach``
    A **reach curve** R(d): the distinct eligible units seen in the first d days (from a
    history import, or typed for a few days). Units come back, so R grows more slowly than
    days. Between the days given R is read linearly (from R(0) = 0); beyond the last it is
    extrapolated by the reach model fitted to the curve (:mod:`fourfold.engine.reach`), and a
    duration that lands there is flagged with the model's stated error.

Ramp-up and burn-in (both models)
---------------------------------
The **ramp-up** gives the share of traffic in the test by day range (days 1–2 at 5 %, 3–4 at
25 %, then the plan's share); the **burn-in** is the first days, whose units are not analysed.

A unit joins the test on its first visit while its hash bucket is open. A ramp opens buckets
and never closes them (the shares only rise), so the test's traffic is a set of bands: band j
holds the share w_j by which the ramp rose on day o_j, and it takes every unit seen from day
o_j on. Assuming the traffic is stationary — any d consecutive days reach R(d) distinct units,
wherever they start — band j has w_j · R(d − o_j + 1) units after day d, and the test

    C(d) = Σ_j w_j · R(d − o_j + 1)     (R(x) = 0 for x ≤ 0).

With a constant model R(d) = daily units × d, so C(d) is the daily units times the sum of
each day's share. Units that joined in the burn-in's B days are not analysed, so the analysed
units are A(d) = C(d) − C(B) after day d > B (0 before). Each arm gets its share of them:
control A(d) / (1 + arms × allocation). Ramp shares above the plan's share are capped at it.

Units → days is the inverse: the first whole day d with A(d) ≥ the units the test needs
(whole weeks round it up to a multiple of 7); days → units the forward form, read linearly
between whole days for the runtime figure. A constant plan without ramp-up or burn-in keeps
the exact arithmetic of :func:`fourfold.engine.duration_days`. A day beyond ten years
(:data:`fourfold.plan.fields.MAX_DAYS`), or beyond a reach curve that cannot be extrapolated,
is not known: such a row cannot be computed and says why.

Examples
--------
>>> from fourfold.plan.model import Settings
>>> ramped = Settings(daily_units=1_000, share=0.6, ramp=((2, 0.05), (4, 0.25)), burn_in=1,
...                   whole_weeks=False)
>>> [float(units_after(ramped, d)) for d in (1, 2, 4, 5)]
[0.0, 50.0, 550.0, 1150.0]
>>> float(days_for(ramped, 1_150.0)), float(days_for(ramped, 1_151.0))
(5.0, 6.0)
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from fourfold import engine
from fourfold.engine.reach import ReachFit, can_extrapolate, fit_reach
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.fields import MAX_DAYS
from fourfold.plan.model import Settings

TRAFFIC_SETTINGS = ("traffic", "reach", "reach_source", "ramp", "burn_in")
"""The settings of the traffic model beyond daily units and share (plan files, exports and
:func:`fourfold.plan.evaluate` give them only for a plan that uses them)."""

_DUST = 1e-12
"""Units within this relative amount of a day's units count as reached (as
:func:`fourfold.engine.duration_days` forgives floating-point dust)."""


@dataclass(frozen=True)
class Model:
    """The analysed units of a traffic model by whole day (see the module notes).

    Attributes
    ----------
    kind : str
        ``"constant"`` or ``"reach"``.
    analysed : numpy.ndarray
        A(t) for t = 0, 1, …, T: analysed units of all arms after day t.
    eligible, joined : numpy.ndarray
        R(t), the distinct eligible units after day t (the curve, then its extrapolation),
        and C(t), the units in the test (burn-in included), for t = 0, 1, …, T.
    rate : float
        Analysed units a day after day T (a constant model's daily units × share); nan when
        the days after T are not known.
    observed : float
        The reach curve's last day (inf for a constant model): later days are extrapolated.
    fit : ReachFit or None
        The reach model beyond ``observed`` (None: constant, or not extrapolated).
    why : str
        Why the days after T are not known ("" when only ten years limit them).
    capped : bool
        Whether a ramp step above the plan's share was capped at it.
    """

    kind: str
    analysed: np.ndarray
    eligible: np.ndarray
    joined: np.ndarray
    rate: float
    observed: float
    fit: ReachFit | None
    why: str
    capped: bool

    @property
    def last(self) -> int:
        """T, the last whole day of the table."""
        return self.analysed.size - 1

    def units(self, days) -> np.ndarray:
        """A(d), read linearly between whole days (nan where not known)."""
        d = np.asarray(days, dtype=float)
        inside = np.interp(d, np.arange(self.analysed.size, dtype=float), self.analysed)
        with np.errstate(invalid="ignore"):
            beyond = self.analysed[-1] + self.rate * (d - self.last)
        return np.where(d <= self.last, inside, beyond)

    def days(self, totals) -> np.ndarray:
        """The first whole day by which ``totals`` units are analysed (nan where not known)."""
        t = np.asarray(totals, dtype=float)
        target = t * (1.0 - _DUST)
        found = np.searchsorted(self.analysed, target, side="left").astype(float)
        with np.errstate(invalid="ignore", divide="ignore"):
            later = self.last + np.ceil((target - self.analysed[-1]) / self.rate)
        return np.where(np.isfinite(t), np.where(found <= self.last, found, later), np.nan)

    def exact_days(self, totals) -> np.ndarray:
        """The day (fractional, read linearly) by which ``totals`` units are analysed."""
        t = np.asarray(totals, dtype=float)
        table = self.analysed
        index = np.clip(np.searchsorted(table, t, side="left"), 1, self.last)
        low, high = table[index - 1], table[index]
        with np.errstate(invalid="ignore", divide="ignore"):
            inside = (index - 1) + np.where(high > low, (t - low) / (high - low), 1.0)
            beyond = self.last + (t - table[-1]) / self.rate
        return np.where(t <= table[-1], np.where(t > 0, inside, 0.0), beyond)


def uses_model(settings: Settings) -> bool:
    """Whether any traffic setting differs from its default (a plain constant plan's do not).

    Examples
    --------
    >>> uses_model(Settings()), uses_model(Settings(burn_in=2))
    (False, True)
    """
    plain = Settings()
    return any(getattr(settings, name) != getattr(plain, name) for name in TRAFFIC_SETTINGS)


def is_plain(settings: Settings) -> bool:
    """Constant daily units, no ramp-up, no burn-in: the plain arithmetic applies."""
    return settings.traffic == "constant" and not settings.ramp and not settings.burn_in


def has_traffic(settings: Settings) -> bool:
    """Whether units become days: daily units for a constant model, a reach curve for one."""
    if settings.traffic == "reach":
        return bool(settings.reach)
    return settings.daily_units is not None


def missing_text(settings: Settings, what: str = "days") -> str:
    """What the plan needs before units become days (``what``: of what they are days).

    Examples
    --------
    >>> missing_text(Settings(traffic="reach"), "days of runtime")
    'enter the reach curve (distinct units by day) to see days of runtime'
    """
    if settings.traffic == "reach":
        return f"enter the reach curve (distinct units by day) to see {what}"
    return f"set the plan's daily units to see {what}"


def needs_text(settings: Settings) -> str:
    """What a fixed runtime needs to give units.

    Examples
    --------
    >>> needs_text(Settings()), needs_text(Settings(traffic="reach"))
    ("the plan's daily units", "the plan's reach curve")
    """
    return "the plan's reach curve" if settings.traffic == "reach" else "the plan's daily units"


def model(settings: Settings) -> Model | None:
    """The plan's traffic model, or None without traffic (cached per traffic settings)."""
    if not has_traffic(settings):
        return None
    return _model(settings.traffic, settings.daily_units, settings.share, settings.reach,
                  settings.ramp, settings.burn_in)


@functools.lru_cache(maxsize=64)
def _model(kind: str, daily: float | None, share: float, reach: tuple, ramp: tuple,
           burn_in: int) -> Model:
    days = np.arange(MAX_DAYS + 1, dtype=float)
    fit, why, observed = None, "", math.inf
    if kind == "reach":
        points = np.array(reach, dtype=float)
        observed = float(points[-1, 0])
        eligible = np.interp(days, np.concatenate([[0.0], points[:, 0]]),
                             np.concatenate([[0.0], points[:, 1]]))
        why = can_extrapolate(points[:, 0])
        if not why:
            fit = fit_reach(points[:, 0], points[:, 1])
            eligible = np.where(days <= observed, eligible, fit.extend(days))
        else:
            eligible = eligible[:int(observed) + 1]
        rate = math.nan
    else:
        eligible = daily * days
        rate = daily * share
    steps = [(day, min(step, share)) for day, step in ramp]
    capped = any(step > share for _, step in ramp)
    opened, bands = 1, []
    level = 0.0
    for day, step in [*steps, (math.inf, share)]:
        if step > level:
            bands.append((opened, step - level))
            level = step
        opened = int(day) + 1 if math.isfinite(day) else opened
    joined = np.zeros_like(eligible)
    for start, width in bands:
        shift = start - 1
        if shift < eligible.size:
            joined[shift:] += width * eligible[:eligible.size - shift]
    analysed = joined
    if burn_in:
        before = joined[min(burn_in, joined.size - 1)]
        analysed = np.where(days[:joined.size] > burn_in, joined - before, 0.0)
    if kind == "reach" and why:
        why = f"{why} (it ends on day {observed:g})"
    return Model(kind, analysed, eligible, joined, rate, observed, fit, why, capped)


def share_on(settings: Settings, days) -> np.ndarray:
    """The share of traffic in the test on each of ``days`` (the ramp-up's, capped at the
    plan's share, then the plan's).

    Examples
    --------
    >>> share_on(Settings(share=0.6, ramp=((2, 0.05), (4, 0.25))), [1, 2, 3, 5]).tolist()
    [0.05, 0.05, 0.25, 0.6]
    """
    d = np.asarray(days, dtype=float)
    out = np.full(d.shape, settings.share)
    for day, step in reversed(settings.ramp):
        out = np.where(d <= day, min(step, settings.share), out)
    return out


def units_after(settings: Settings, days):
    """Analysed units of all arms after ``days`` days (vectorised; nan without traffic).

    Examples
    --------
    >>> float(units_after(Settings(daily_units=1_000, share=0.5), 14))
    7000.0
    """
    if is_plain(settings):
        if settings.daily_units is None:
            return np.full(np.shape(days), np.nan)
        return np.asarray(days, dtype=float) * settings.daily_units * settings.share
    found = model(settings)
    if found is None:
        return np.full(np.shape(days), np.nan)
    return found.units(days)


def control_units(settings: Settings, days):
    """Control-arm units after ``days`` days: analysed units / (1 + arms × allocation).

    A constant plan without ramp-up or burn-in computes
    ``days × daily_units × share / (1 + arms × ratio)`` exactly so.

    Examples
    --------
    >>> control_units(Settings(daily_units=30_000, share=0.5, arms=2), 14.0)
    70000.0
    """
    if is_plain(settings):
        if settings.daily_units is None:
            return math.nan
        return (days * settings.daily_units * settings.share
                / (1.0 + settings.arms * treatment_ratio(settings)))
    return units_after(settings, days) / (1.0 + settings.arms * treatment_ratio(settings))


def days_for(settings: Settings, totals, whole_weeks: bool | None = None):
    """Whole days until ``totals`` units (all arms) are analysed; whole weeks when the plan
    (or ``whole_weeks``) asks. nan without traffic or where the days are not known.

    A constant plan without ramp-up or burn-in is :func:`fourfold.engine.duration_days`.
    """
    weeks = settings.whole_weeks if whole_weeks is None else whole_weeks
    if is_plain(settings):
        if settings.daily_units is None:
            return np.full(np.shape(totals), np.nan)
        return engine.duration_days(totals, settings.daily_units, settings.share, weeks)
    found = model(settings)
    if found is None:
        return np.full(np.shape(totals), np.nan)
    days = found.days(totals)
    if weeks:
        days = 7.0 * np.ceil(days / 7.0)
    return days if np.ndim(totals) else float(days)


def exact_days(settings: Settings, totals):
    """Days (fractional, read linearly between whole days) until ``totals`` units are
    analysed: where a row's point sits on the runtime figure."""
    if is_plain(settings):
        if settings.daily_units is None:
            return np.full(np.shape(totals), np.nan)
        return np.asarray(totals, dtype=float) / (settings.daily_units * settings.share)
    found = model(settings)
    return np.full(np.shape(totals), np.nan) if found is None else found.exact_days(totals)


def control_days(settings: Settings, n_control: float) -> float:
    """Days (fractional) until the control arm has ``n_control`` units: a row's point on the
    runtime figure (nan without traffic).

    Examples
    --------
    >>> control_days(Settings(daily_units=30_000, share=0.5, arms=2), 70_000.0)
    14.0
    """
    if is_plain(settings):
        if settings.daily_units is None:
            return math.nan
        per_day = control_units(settings, 1.0)
        return n_control / per_day if per_day > 0 else math.inf
    arms = 1.0 + settings.arms * treatment_ratio(settings)
    return float(exact_days(settings, n_control * arms))


def unknown_text(settings: Settings, total: float) -> str:
    """Why the days for ``total`` units are not known (a row's reason).

    Examples
    --------
    >>> short = Settings(traffic="reach", reach=((1, 100.0), (7, 400.0)))
    >>> unknown_text(short, 1_000.0)
    'needs 1,000 units, more than the 400 analysed by day 7; the reach curve covers 7 days; \
extrapolating it needs at least 14 (it ends on day 7)'
    """
    found = model(settings)
    if found is None:
        return missing_text(settings)
    reached = float(found.analysed[-1])
    text = f"needs {total:,.0f} units, more than the {reached:,.0f} analysed by day {found.last}"
    if found.why:
        return f"{text}; {found.why}"
    return f"{text} (the longest run considered, {MAX_DAYS:,} days)"


def extrapolated(settings: Settings, days: float) -> bool:
    """Whether ``days`` of the plan lie beyond its reach curve's last day."""
    found = model(settings) if settings.traffic == "reach" else None
    return found is not None and math.isfinite(days) and days > found.observed


def extrapolation_note(settings: Settings, days: float, total: float | None = None) -> str:
    """The flag of a duration in the extrapolated part of the reach curve ("" otherwise),
    with the stated error and, given the units, the days that error would make.

    Examples
    --------
    >>> d = np.arange(1, 29)
    >>> curve = tuple(zip(d.tolist(), (30_000 * (1 - (1 + d / 3) ** -0.6) + 900 * d).tolist()))
    >>> print(extrapolation_note(Settings(traffic="reach", reach=curve), 42.0))
    ... # doctest: +ELLIPSIS
    The duration of 42 days lies beyond the reach curve's 28 days: its units after day 28 are \
extrapolated (...; fit error ...; stated error ±... on day 42).
    """
    if not extrapolated(settings, days):
        return ""
    found = model(settings)
    fit = found.fit
    error = float(fit.error(days))
    text = (f"The duration of {days:g} days lies beyond the reach curve's {found.observed:g} "
            f"days: its units after day {found.observed:g} are extrapolated ({fit.describe()}; "
            f"fit error {fit.rms * 100:.2g} %; stated error ±{error * 100:.2g} % on day "
            f"{days:g})")
    if total is not None and math.isfinite(total) and error > 0:
        low, high = (_days_with(found, total, sign) for sign in (1.0, -1.0))
        if settings.whole_weeks:
            low, high = (7.0 * math.ceil(x / 7.0) if math.isfinite(x) else x
                         for x in (low, high))
        if math.isfinite(high) and (low, high) != (days, days):
            text += f"; within that error the test needs {low:g} to {high:g} days"
        elif math.isfinite(low):
            text += (f"; within that error the test needs at least {low:g} days, with no upper "
                     "bound")
    return text + "."


def _days_with(found: Model, total: float, sign: float) -> float:
    """Whole days for ``total`` units when every extrapolated day's units are off by the
    stated error (``sign`` +1: more units, −1: fewer)."""
    error = found.fit.error(np.arange(found.analysed.size, dtype=float))
    scaled = np.maximum.accumulate(found.analysed * (1.0 + sign * error))
    day = int(np.searchsorted(scaled, total * (1.0 - _DUST), side="left"))
    return float(day) if day <= found.last else math.nan


def _percent(value: float) -> str:
    return f"{value * 100:.3g} %"


def ramp_text(settings: Settings) -> str:
    """The ramp-up in words ("" without one).

    Examples
    --------
    >>> ramp_text(Settings(share=0.6, ramp=((2, 0.05), (4, 0.25))))
    'days 1–2 at 5 %, days 3–4 at 25 %, then 60 %'
    >>> ramp_text(Settings(share=0.5, ramp=((1, 0.1),)))
    'day 1 at 10 %, then 50 %'
    """
    steps = tuple((day, min(step, settings.share)) for day, step in settings.ramp)
    return f"{steps_text(steps)}, then {_percent(settings.share)}" if steps else ""


def steps_text(ramp) -> str:
    """The steps of a ramp-up, ``((last day, share), ...)``, in words.

    Examples
    --------
    >>> steps_text(((2, 0.05), (4, 0.25)))
    'days 1–2 at 5 %, days 3–4 at 25 %'
    """
    parts, first = [], 1
    for day, step in ramp:
        days = f"day {first}" if day == first else f"days {first}–{day:g}"
        parts.append(f"{days} at {_percent(step)}")
        first = int(day) + 1
    return ", ".join(parts)


def short_text(settings: Settings) -> str:
    """The traffic model in a few words (the settings' button).

    Examples
    --------
    >>> short_text(Settings()), short_text(Settings(traffic="reach", ramp=((2, 0.1),), burn_in=1))
    ('Constant', 'Reach curve, ramp-up, burn-in 1 d')
    """
    parts = ["Reach curve" if settings.traffic == "reach" else "Constant"]
    if settings.ramp:
        parts.append("ramp-up")
    if settings.burn_in:
        parts.append(f"burn-in {settings.burn_in} d")
    return ", ".join(parts)


def describe(settings: Settings) -> str:
    """The traffic model in one sentence, for the summary, the report and the settings.

    Examples
    --------
    >>> describe(Settings(daily_units=42_000, share=0.6))
    'Constant traffic: 42,000 new eligible units a day, 60 % in the test.'
    >>> print(describe(Settings(traffic="reach", share=0.6, burn_in=1,
    ...                         reach=((1, 1_000.0), (7, 3_000.0)), reach_source="typed")))
    Reach curve (typed): 3,000 distinct eligible units by day 7, read linearly between its \
days; 60 % in the test; the first day's units not analysed (burn-in).
    """
    if settings.traffic == "reach":
        if not settings.reach:
            text = "Reach curve: none entered yet"
        else:
            day, units = settings.reach[-1]
            source = f" ({settings.reach_source})" if settings.reach_source else ""
            text = (f"Reach curve{source}: {units:,.0f} distinct eligible units by day {day:g}, "
                    "read linearly between its days")
            found = model(settings)
            if found is not None and found.fit is not None:
                text += f", extrapolated beyond by {found.fit.describe()}"
    elif settings.daily_units is None:
        text = "Constant traffic: no daily units yet"
    else:
        text = f"Constant traffic: {settings.daily_units:,.0f} new eligible units a day"
    text += "; " if settings.traffic == "reach" else ", "
    text += ("in the test " + ramp_text(settings) if settings.ramp else
             f"{_percent(settings.share)} in the test")
    if settings.burn_in:
        days = "day's" if settings.burn_in == 1 else f"{settings.burn_in} days'"
        text += f"; the first {days} units not analysed (burn-in)"
    return text + "."
