"""The plan-level results of an evaluation: which row binds, the duration, the total, the notes.

:func:`summarise` reads the rows through :class:`RowFacts`, the few numbers of each row it
needs (role, whether it was computed, whether it solved for sample size, days, units, its
quantile caution) kept as arrays. An open document keeps one :class:`RowFacts` in its row cache
and refreshes only the rows that changed (the cache names them), so that an edit of one row of
a large plan does not read every row again; without a cache the facts are read afresh. The
notes that name a row (not computed, a secondary row that needs more, a quantile's caution) are
kept with the facts (:class:`RowTexts`) and their lists made again only when one of them or the
rows they are of change. The rules are those of :mod:`fourfold.plan.evaluation` (binding
metric, runtime, incomplete plans).

References
----------
Kohavi, R., Tang, D. & Xu, Y. (2020). *Trustworthy Online Controlled Experiments*. Cambridge
University Press (ch. 17: guardrails and the metrics that decide).
"""

from __future__ import annotations

import math
import operator

import numpy as np

from fourfold.plan import kinds, sequential, traffic
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.fields import CORRECTION_LABELS
from fourfold.plan.model import Plan
from fourfold.plan.results import PlanResult, RowResult, Unfinished
from fourfold.plan.rows import runtime_units

DECIDING_ROLES = ("primary", "guardrail")

_ROLES = {"primary": 0, "secondary": 1, "guardrail": 2}
_PRIMARY, _SECONDARY = _ROLES["primary"], _ROLES["secondary"]
_STAMP = operator.attrgetter("stamp")


def stamps(metrics) -> np.ndarray:
    """The rows' :attr:`~fourfold.plan.model.Metric.stamp` values, in order."""
    return np.fromiter(map(_STAMP, metrics), np.int64, len(metrics))


class RowTexts:
    """Texts of some rows (a note each), and their list for a set of rows, made again only
    when a text or the set changes: a plan with thousands of notes does not write them out
    again on an edit of one row.

    Examples
    --------
    >>> texts = RowTexts()
    >>> texts.put(3, "c"); texts.put(1, "a")
    >>> texts.listed(np.array([1, 3])), texts.listed()
    (['a', 'c'], ['a', 'c'])
    """

    def __init__(self) -> None:
        self.texts: dict[int, object] = {}
        self.version = 0
        self._listed: tuple = (None, -1, [])

    def put(self, index: int, text) -> None:
        """Give row ``index`` its text (``None``: none)."""
        if text is None:
            if self.texts.pop(index, None) is not None:
                self.version += 1
        elif self.texts.get(index) != text:
            self.texts[index] = text
            self.version += 1

    def clear(self) -> None:
        """Forget every row's text."""
        if self.texts:
            self.texts = {}
            self.version += 1

    def listed(self, indices: np.ndarray | None = None, make=None) -> list:
        """The texts of the rows at ``indices`` (ascending; ``None``: every row with a text),
        in order; ``make(index)`` gives a row's missing text."""
        kept, version, found = self._listed
        if version == self.version and (indices is None if kept is None else
                                        indices is not None and np.array_equal(kept, indices)):
            return found
        chosen = sorted(self.texts) if indices is None else indices.tolist()
        if make is not None:
            for index in chosen:
                if index not in self.texts:
                    self.put(index, make(index))
        found = [self.texts[index] for index in chosen]
        self._listed = (indices, self.version, found)
        return found


class RowFacts:
    """What :func:`summarise` reads of each row, as arrays in the plan's order.

    Parameters
    ----------
    metrics : list of Metric
    rows : sequence of RowResult
        One per metric.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan
    >>> from fourfold.plan.evaluation import compute
    >>> plan = Plan(metrics=[Metric(role="primary"), Metric(role="guardrail", effect=None)])
    >>> facts = RowFacts(plan.metrics, compute(plan).rows)
    >>> facts.role.tolist(), facts.failed.tolist()
    ([0, 2], [False, True])
    """

    def __init__(self, metrics, rows) -> None:
        self.role = np.full(len(rows), -1, dtype=np.int8)
        self.asks_units = np.zeros(len(rows), dtype=bool)
        """The row's own ``solve`` is the sample size (what a fixed runtime replaces)."""
        self.failed = np.zeros(len(rows), dtype=bool)
        self.sample = np.zeros(len(rows), dtype=bool)
        """The row solved for sample size."""
        self.days = np.zeros(len(rows))
        """Days, 0 where not known (what the binding row's choice counts)."""
        self.units = np.zeros(len(rows))
        self.tails = RowTexts()
        """Quantile rows' cautions (:func:`fourfold.plan.kinds.tail_note`)."""
        self.failures = RowTexts()
        """Rows not computed: a note each (what the summary says of them)."""
        self.unfinished = RowTexts()
        """Rows not computed: their :class:`~fourfold.plan.results.Unfinished`."""
        self.gaps = RowTexts()
        """Secondary rows that need more than the plan gives: a note each, for :attr:`gaps_at`."""
        self.gaps_at: tuple | None = None
        self.reread(metrics, rows, range(len(rows)))

    @property
    def size(self) -> int:
        """The number of rows."""
        return self.role.size

    def reread(self, metrics, rows, indices) -> None:
        """Read again the rows at ``indices``: those whose metric or result changed since the
        facts read them (a row cache names them: its ``unread``)."""
        for index in indices:
            self._read(index, metrics[index], rows[index])

    def _read(self, index: int, metric, row: RowResult) -> None:
        self.role[index] = _ROLES.get(metric.role, -1)
        self.asks_units[index] = metric.solve == "sample_size"
        self.failed[index] = bool(row.reason)
        self.sample[index] = row.solved == "sample_size"
        self.days[index] = 0.0 if math.isnan(row.days) else row.days
        self.units[index] = row.units_total
        note = kinds.tail_note(metric, row)
        if note is not None or index in self.tails.texts:
            self.tails.put(index, note)
        reason = row.reason
        if reason:
            self.failures.put(index, f"{metric.name}: not computed — {reason}.")
            self.unfinished.put(index, Unfinished(index, metric.name, reason))
        elif index in self.failures.texts:
            self.failures.put(index, None)
            self.unfinished.put(index, None)
        if index in self.gaps.texts:
            self.gaps.put(index, None)

    def tail_notes(self) -> list[str]:
        """The quantile rows' cautions (:func:`fourfold.plan.kinds.tail_note`), in order."""
        return self.tails.listed()

    def gap_notes(self, metrics, rows, indices: np.ndarray, duration: float,
                  total: float) -> list[str]:
        """The notes of the secondary rows at ``indices``, which need more than the plan's
        ``duration`` (days; nan: none) or ``total`` units give."""
        if self.gaps_at != (duration, total):
            self.gaps.clear()
            self.gaps_at = (duration, total)

        def gap(index: int) -> str:
            metric, row = metrics[index], rows[index]
            if math.isfinite(duration):
                need = f"{row.days:g} days for its power; the test runs {duration:g}"
            else:
                need = f"{row.units_total:,.0f} units for its power; the test has {total:,.0f}"
            return f"{metric.name} (secondary) would need {need}."

        return self.gaps.listed(indices, gap)


def _binding(deciding: np.ndarray, facts: RowFacts) -> int:
    """The deciding row needing the most days, then the most units; the first of equals.

    The units of a computed row are finite (a row whose units cannot be counted fails), so
    the comparison is a plain one.
    """
    days = facts.days[deciding]
    longest = days == days.max()
    units = facts.units[deciding]
    most = longest & (units == units[longest].max())
    return int(deciding[np.flatnonzero(most)[0]])


def summarise(plan: Plan, rows: tuple[RowResult, ...], facts: RowFacts,
              designs: dict | None = None, waiting: np.ndarray | None = None) -> PlanResult:
    """The plan-level results of ``rows`` (read through ``facts``); rows marked in the
    boolean array ``waiting`` (still to be solved at the plan's duration) neither count as not
    computed nor get a note."""
    settings = plan.settings
    metrics = plan.metrics
    notes = []
    if settings.correction != "none":
        primaries = int(np.count_nonzero(facts.role == _PRIMARY))
        arms = f"{settings.arms} {'arm' if settings.arms == 1 else 'arms'}"
        counted = f"{primaries} primary {'metric' if primaries == 1 else 'metrics'}"
        dunnett = (" (Dunnett's critical value over the arms, Bonferroni over the metrics)"
                   if settings.correction == "dunnett" else "")
        notes.append(f"α corrected ({CORRECTION_LABELS[settings.correction]}): primary rows for "
                     f"{arms} × {counted}, other rows for {arms}{dunnett}.")
    notes.extend(sequential.plan_notes(plan, rows, designs))
    notes.extend(facts.tail_notes())
    counted = np.ones(len(rows), dtype=bool) if waiting is None else ~waiting
    failed = facts.failed & counted
    notes.extend(facts.failures.listed(np.flatnonzero(failed)))
    deciding = (facts.role == _PRIMARY) | (facts.role == _ROLES["guardrail"])
    unfinished = facts.unfinished.listed(np.flatnonzero(failed & deciding))
    if unfinished:
        roles = "primary or guardrail row" if len(unfinished) == 1 else "primary or guardrail rows"
        notes.insert(0, f"Incomplete plan: {len(unfinished)} {roles} cannot be computed, so the "
                        "plan has no duration until they can.")
        return PlanResult(rows, None, None, None, None, tuple(notes), tuple(unfinished))

    if settings.runtime_days is not None:
        units = runtime_units(settings)
        if facts.asks_units.any():
            notes.append(f"Fixed runtime of {settings.runtime_days:g} days: rows that solve for "
                         "sample size show the effect they can detect instead (a margin row: "
                         "the tightest margin it rules out).")
        total = None if units is None else units * (1.0 + settings.arms
                                                    * treatment_ratio(settings))
        notes.extend(traffic_notes(settings, float(settings.runtime_days)))
        return PlanResult(rows, float(settings.runtime_days), total, None, None, tuple(notes))

    solved = facts.sample & ~facts.failed & counted
    deciding = np.flatnonzero(solved & deciding)
    if not deciding.size:
        notes.append("No primary or guardrail row solves for sample size: nothing sets the "
                     "duration.")
        return PlanResult(rows, None, None, None, None, tuple(notes))

    binding = _binding(deciding, facts)
    name = metrics[binding].name
    notes.append(f"{name} needs the most traffic among primary and guardrail rows and sets "
                 "the duration; secondary rows are informational.")
    duration = rows[binding].days
    total = rows[binding].units_total
    secondary = np.flatnonzero(solved & (facts.role == _SECONDARY) & (facts.units > total))
    notes.extend(facts.gap_notes(metrics, rows, secondary, duration, total))
    notes.extend(traffic_notes(settings, duration, total))
    return PlanResult(rows, None if math.isnan(duration) else duration, total, binding, name,
                      tuple(notes))


def traffic_notes(settings, days: float, total: float | None = None) -> list[str]:
    """The traffic model's flags: a duration beyond the reach curve, a capped ramp-up."""
    notes = []
    flag = traffic.extrapolation_note(settings, days, total)
    if flag:
        notes.append(flag)
    found = traffic.model(settings) if traffic.uses_model(settings) else None
    if found is not None and found.capped:
        notes.append(f"Ramp-up steps above the plan's share ({settings.share * 100:.3g} %) are "
                     "capped at it.")
    return notes
