"""The traffic model in the exports: settings rows, the day-by-day table and the curve.

Only a plan that uses the traffic model beyond constant daily units (a reach curve, a ramp-up
or a burn-in; :func:`fourfold.plan.traffic.uses_model`) or rows that follow their history
windows gets these; a plain constant plan's exports are as before.

``NAME-traffic.csv`` (beside the plan's CSV) holds one row per day up to the plan's duration
(at least the reach curve's days): ``day``, ``share_frac`` (that day's share of traffic),
``eligible_units`` (the reach curve, or the daily units times the day), ``extrapolated``
(beyond the curve's last day), ``stated_error_frac`` (the extrapolation's), ``units_in_test``
(burn-in included), ``analysed_units`` (all arms) and ``control_units``.

Examples
--------
>>> from fourfold.plan import Metric, Plan, Settings, compute
>>> plan = Plan(Settings(daily_units=1_000, share=0.5, burn_in=1, whole_weeks=False),
...             [Metric(name="Spend", role="primary", kind="mean", baseline=10.0, sd=5.0,
...                     effect=0.5, relative=False)])
>>> rows = table_rows(plan, compute(plan))
>>> rows[0][:3], rows[1][:3], rows[1][5:], rows[2][5:]
(['day', 'share_frac', 'eligible_units'], ['1', '0.5', '1000'], ['500', '0', '0.0'], \
['1000', '500', '250.0'])
"""

from __future__ import annotations

import math
import os
from pathlib import Path

import numpy as np

from fourfold.plan import traffic, windows
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.fields import MAX_DAYS

TABLE_COLUMNS = ("day", "share_frac", "eligible_units", "extrapolated", "stated_error_frac",
                 "units_in_test", "analysed_units", "control_units")


def uses(plan) -> bool:
    """Whether the exports describe the traffic model (see the module notes)."""
    return traffic.uses_model(plan.settings) or windows.uses_windows(plan)


def traffic_path(path: os.PathLike | str) -> Path:
    """The day-by-day file beside ``path``: ``plan.csv`` → ``plan-traffic.csv``.

    Examples
    --------
    >>> traffic_path("out/checkout.csv").as_posix()
    'out/checkout-traffic.csv'
    """
    path = Path(path)
    return path.with_name(f"{path.stem}-traffic{path.suffix or '.csv'}")


def _whole(value: float):
    return int(value) if math.isfinite(value) and value == int(value) else value


def settings_rows(plan, result) -> list[tuple[str, object, str]]:
    """``(key, value, unit)`` rows of the traffic model for the settings file."""
    settings = plan.settings
    if not uses(plan):
        return []
    rows: list[tuple[str, object, str]] = [
        ("traffic", settings.traffic, "text"),
        ("traffic_model", traffic.describe(settings), "text"),
        ("ramp", traffic.ramp_text(settings), "text"),
        ("burn_in_days", settings.burn_in, "days"),
    ]
    if settings.traffic == "reach" and settings.reach:
        day, units = settings.reach[-1]
        rows += [("reach_source", settings.reach_source, "text"),
                 ("reach_days", _whole(day), "days"),
                 ("reach_units", _whole(units), "units")]
        found = traffic.model(settings)
        fit = None if found is None else found.fit
        if fit is not None:
            rows += [("reach_fit", fit.describe(), "text"),
                     ("reach_fit_error_frac", fit.rms, "fraction"),
                     ("reach_extrapolation_growth_frac_per_day", fit.growth, "fraction")]
        elif found is not None:
            rows.append(("reach_not_extrapolated", found.why, "text"))
        duration = result.duration_days
        if duration is not None:
            beyond = traffic.extrapolated(settings, duration)
            rows.append(("duration_extrapolated", beyond, "flag"))
            if beyond:
                rows.append(("duration_stated_error_frac", float(fit.error(duration)),
                             "fraction"))
    if result.window_days is not None:
        rows.append(("window_days", result.window_days, "days"))
    return rows


def assumptions(plan, result=None) -> list[tuple[str, str]]:
    """The traffic model's assumptions (a plan that uses more than constant daily units):
    the model, the ramp-up, the burn-in and, for a reach curve, its extrapolation."""
    from fourfold.formatting import format_days

    s = plan.settings
    rows = [("Traffic model", traffic.describe(s))]
    if s.ramp:
        rows.append(("Ramp-up", traffic.ramp_text(s).capitalize()))
    if s.burn_in:
        rows.append(("Burn-in", f"the units of the first {s.burn_in} "
                                f"{'day' if s.burn_in == 1 else 'days'} are not analysed"))
    if s.ramp or s.traffic == "reach":
        rows.append(("How the days follow", "a unit joins on its first visit while its share "
                     "of traffic is open; shares only rise; any run of d days reaches the "
                     "distinct units of the curve's first d days (stationary traffic)"))
    found = traffic.model(s) if s.traffic == "reach" else None
    if found is not None and found.fit is not None:
        fit = found.fit
        text = (f"after day {fit.last_day:g}: {fit.describe()}, fitted to days "
                f"{fit.first_day:g}–{fit.last_day:g} (fit error {fit.rms * 100:.2g} %); "
                f"stated error 3 × {fit.growth * 100:.2g} % per day beyond")
        duration = None if result is None else result.duration_days
        if duration is not None and traffic.extrapolated(s, duration):
            text += (f"; the duration of {format_days(duration)} days is extrapolated "
                     f"(±{float(fit.error(duration)) * 100:.2g} %)")
        rows.append(("Reach curve extrapolated", text))
    elif found is not None:
        rows.append(("Reach curve extrapolated", f"no: {found.why}"))
    return rows


def figure_caption(plan) -> str:
    """The words under the report's traffic figure."""
    settings = plan.settings
    text = ("Eligible units by day and the units the test analyses (all arms, after the "
            "share of traffic")
    text += ", its ramp-up" if settings.ramp else ""
    text += " and the burn-in" if settings.burn_in else ""
    text += "); the duration is the first day the analysed units reach what the binding row needs."
    if settings.traffic == "reach":
        text += (" The dots are the reach curve's own points; beyond its last day the dashed "
                 "line is the fitted model and the band its stated error.")
    return text


def table_days(plan, result) -> int:
    """The days the day-by-day table covers: the duration, at least the curve's days."""
    settings = plan.settings
    longest = result.duration_days or 0.0
    if settings.traffic == "reach" and settings.reach:
        longest = max(longest, settings.reach[-1][0])
    longest = max(longest, settings.burn_in + 1.0,
                  max((day for day, _ in settings.ramp), default=0.0) + 1.0, 7.0)
    return int(min(longest, MAX_DAYS))


def table_rows(plan, result) -> list[list[str]]:
    """The day-by-day file as lists of cells, header first (see the module notes)."""
    from fourfold.export.csv import cell

    settings = plan.settings
    rows = [list(TABLE_COLUMNS)]
    found = traffic.model(settings)
    if found is None:
        return rows
    days = np.arange(1, min(table_days(plan, result), found.last) + 1)
    error = (found.fit.error(days) if found.fit is not None else np.zeros(days.size))
    arms = 1.0 + settings.arms * treatment_ratio(settings)
    shares = traffic.share_on(settings, days)
    for k, day in enumerate(days.tolist()):
        beyond = day > found.observed
        rows.append([cell(value) for value in (
            day, float(shares[k]), _whole(float(found.eligible[day])), beyond,
            float(error[k]) if beyond else None, _whole(float(found.joined[day])),
            _whole(float(found.analysed[day])), float(found.analysed[day]) / arms)])
    return rows


def curve(plan, result) -> dict:
    """What the report's traffic figure draws: the days, the eligible units (observed, then
    extrapolated, with the stated error's band), the analysed units, the observed days and
    the duration (nan when none)."""
    settings = plan.settings
    found = traffic.model(settings)
    if found is None:
        return {}
    last = min(max(table_days(plan, result) + 7, 14), found.last)
    days = np.arange(0, last + 1, dtype=float)
    error = found.fit.error(days) if found.fit is not None else np.zeros(days.size)
    eligible = found.eligible[:last + 1]
    return {
        "days": days,
        "eligible": eligible,
        "low": eligible * (1.0 - error),
        "high": eligible * (1.0 + error),
        "analysed": found.analysed[:last + 1],
        "observed": found.observed,
        "duration": math.nan if result.duration_days is None else float(result.duration_days),
        "points": np.array(settings.reach, dtype=float).reshape(-1, 2),
        "kind": found.kind,
    }
