"""Rows measured over the test's own window: figures from history that follow the duration.

A per-unit metric depends on how long each unit is watched: revenue per visitor over 28 days
has a larger mean and sd than over 7. A history import with unit and time columns gives each
metric's figures over each unit's first 7, 14, 21 and 28 days (and the history's length); a row
keeps them in ``Metric.windows`` and, with ``Metric.windowed``, takes its baseline, sd (and ρ,
a ratio's inputs) from the window as long as the plan's duration instead of its own fields.

Matching a duration
-------------------
A duration equal to a window's days takes that window; between two windows each figure is
read linearly in days; shorter than the first or longer than the last window takes that
window's figures, and a note says so (beyond the last window the figures are those of a shorter
run than the test's). Every unit is taken to be watched for the whole duration — units that
arrive late in the test are watched for less, so the figures lean towards the longer window.

The fixed point
---------------
The duration depends on the figures (a larger sd needs more units, hence more days) and the
figures on the duration. :func:`fourfold.plan.evaluation.compute` solves it by iteration:
starting from the shortest window of the windowed rows, it evaluates the plan with the figures
of the current days, takes the duration that gives, and repeats until the duration is the one
its figures came from. Days are whole (or whole weeks), so it either settles or comes back to
days it tried (a cycle). Starting from the shortest window, a duration that grows with the
window settles on the shortest duration consistent with its own window. A cycle comes from
figures that shorten the duration as the window grows (a conversion over 28 days is higher,
hence easier to move by 5 %): then the duration lies between the longest days tried whose
figures need more days and the shortest longer days whose figures need fewer, and halving
that interval (on whole days, or whole weeks) finds it (:func:`bracket`, :func:`between`).
When no duration between them is its own window's — or the rounds go on past
:data:`MAX_ROUNDS` — the plan is incomplete: its windowed primary and guardrail rows say that
the duration does not settle and list the rounds, and no duration is shown. With a fixed
runtime the figures are those of the runtime, without iteration.

Examples
--------
>>> from fourfold.plan.model import Metric
>>> row = Metric(kind="mean", baseline=1.0, sd=2.0, windowed=True, windows=(
...     {"days": 7, "baseline": 2.0, "sd": 9.0}, {"days": 14, "baseline": 3.0, "sd": 12.0}))
>>> figures(row, 7.0), figures(row, 10.5)[0]
(({'baseline': 2.0, 'sd': 9.0}, ''), {'baseline': 2.5, 'sd': 10.5})
>>> print(figures(row, 21.0)[1])
the duration (21 days) is longer than the longest window (14 days): its figures are used
"""

from __future__ import annotations

import dataclasses
import math

from fourfold.plan.fields import WINDOW_FIELDS
from fourfold.plan.model import Metric, Plan

MAX_ROUNDS = 20
"""Rounds of the fixed point before the duration is said not to settle."""


def follows(metric: Metric) -> bool:
    """Whether a row takes its figures from its history windows."""
    return metric.windowed and bool(metric.windows)


def uses_windows(plan: Plan) -> bool:
    """Whether any row of ``plan`` follows its windows."""
    return any(follows(metric) for metric in plan.metrics)


def start(plan: Plan) -> float:
    """The fixed point's first days: the shortest window of the rows that follow one."""
    return float(min(metric.windows[0]["days"] for metric in plan.metrics if follows(metric)))


def figures(metric: Metric, days: float) -> tuple[dict, str]:
    """The row's fields over a window of ``days`` days (see the module notes) and a note
    when ``days`` lies outside its windows ("" otherwise)."""
    windows = metric.windows
    first, last = windows[0], windows[-1]

    def fields(window: dict) -> dict:
        return {name: window[name] for name in WINDOW_FIELDS if name in window}

    if days <= first["days"]:
        note = "" if days == first["days"] else (
            f"the duration ({days:g} days) is shorter than the shortest window "
            f"({first['days']} days): its figures are used")
        return fields(first), note
    if days >= last["days"]:
        note = "" if days == last["days"] else (
            f"the duration ({days:g} days) is longer than the longest window "
            f"({last['days']} days): its figures are used")
        return fields(last), note
    above = next(index for index, window in enumerate(windows) if window["days"] >= days)
    low, high = windows[above - 1], windows[above]
    if high["days"] == days:
        return fields(high), ""
    share = (days - low["days"]) / (high["days"] - low["days"])
    out = {}
    for name in WINDOW_FIELDS:
        a, b = low.get(name), high.get(name)
        if a is not None and b is not None:
            out[name] = a + share * (b - a)
        elif name in high:
            out[name] = b
    return out, ""


def at_days(plan: Plan, days: float | None) -> Plan:
    """``plan`` with each row that follows its windows given their figures for ``days``
    (``plan`` itself for None or a plan without such rows)."""
    if days is None or not uses_windows(plan):
        return plan
    metrics = [dataclasses.replace(metric, **figures(metric, days)[0]) if follows(metric)
               else metric for metric in plan.metrics]
    return dataclasses.replace(plan, metrics=metrics)


def evaluated(plan: Plan, result) -> Plan:
    """The plan as ``result`` evaluated it: windowed rows with the figures of the days they
    settled on (``plan`` itself without such rows)."""
    return at_days(plan, getattr(result, "window_days", None))


def frozen(plan: Plan, result) -> Plan:
    """:func:`evaluated`, with its rows no longer following their windows: their figures
    stay put when an input is moved (what moves the duration, the trade-off curves)."""
    shown = evaluated(plan, result)
    if shown is plan:
        return plan
    metrics = [dataclasses.replace(metric, windowed=False) if follows(metric) else metric
               for metric in shown.metrics]
    return dataclasses.replace(shown, metrics=metrics)


def notes(plan: Plan, days: float, why: str) -> tuple[str, ...]:
    """One note per row that follows its windows: the days of its figures and why."""
    out = []
    for metric in plan.metrics:
        if not follows(metric):
            continue
        _, outside = figures(metric, days)
        text = (f"{metric.name}: figures over each unit's first {days:g} days "
                f"({why}; from its history windows)")
        out.append(text + (f"; {outside}." if outside else "."))
    return tuple(out)


def rounds_text(tried: list[float], found: list[float]) -> str:
    """The rounds of an unsettled fixed point in words.

    Examples
    --------
    >>> rounds_text([14.0, 21.0], [21.0, 14.0])
    'the duration does not settle: with the figures of 14 days the plan needs 21 days, with \
those of 21 days 14 days'
    """
    steps = [f"with the figures of {tried[0]:g} days the plan needs {found[0]:g} days"]
    steps += [f"with those of {a:g} days {b:g} days" for a, b in zip(tried[1:], found[1:],
                                                                      strict=True)]
    if len(steps) > 4:
        steps = [*steps[:2], "…", *steps[-2:]]
    return "the duration does not settle: " + ", ".join(steps)


def bracket(tried: list[float], found: list[float]) -> tuple[float, float] | None:
    """The longest days tried whose figures need more days, and the shortest longer ones
    whose figures need fewer (None when the rounds give no such pair).

    Examples
    --------
    >>> bracket([7.0, 28.0, 14.0], [28.0, 14.0, 28.0])
    (14.0, 28.0)
    """
    more = [days for days, needs in zip(tried, found, strict=True) if needs > days]
    fewer = [days for days, needs in zip(tried, found, strict=True) if needs < days]
    if not more or not fewer or max(more) >= min(fewer):
        return None
    return max(more), min(fewer)


def between(low: float, high: float, step: float) -> float | None:
    """The middle of the durations (multiples of ``step`` days) strictly between ``low`` and
    ``high`` (None when there is none).

    Examples
    --------
    >>> between(14.0, 28.0, 7.0), between(14.0, 21.0, 7.0), between(10.0, 20.0, 1.0)
    (21.0, None, 15.0)
    """
    first = (math.floor(low / step) + 1) * step
    last = (math.ceil(high / step) - 1) * step
    if first > last:
        return None
    return first + step * ((last - first) // step // 2)


def is_settled(days: float, found: float | None) -> bool:
    """Whether the duration ``found`` is the ``days`` its figures came from."""
    return found is not None and math.isfinite(found) and found == days
