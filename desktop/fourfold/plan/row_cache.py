"""What an open document's evaluations remember, so that an edit costs what it changes.

:class:`RowCache` belongs to one open document (the window keeps one per scenario). Between two
evaluations it tells the rows that may have changed from the others by their
:attr:`~fourfold.plan.model.Metric.stamp` (every assignment to a row renews it), and keeps, in
the plan's order, each row's key (its corrected α and its inputs), α, result, whether it waits
for the plan's duration or follows its history windows, its power at the plan's duration and
what the summary reads of it (:class:`fourfold.plan.summary.RowFacts`). An edit of one row of
a large plan then looks at that row only; a change of the settings, of the number of rows or of
the number of primary rows (which moves every primary row's α) reads every row again. Results
are the same as without a cache: rows are reused only when their key and the settings are
those they were computed with (``tests/plan/test_evaluation_cache.py`` holds the two equal
under random edits, in place and by replacement). The caches of one document's scenarios share
a pool of results by settings and key, so that a base row several scenarios show alike is
solved once for all of them.
"""

from __future__ import annotations

import operator
from dataclasses import dataclass, field

import numpy as np

from fourfold.plan import kinds, windows
from fourfold.plan.fields import SETTINGS_FIELDS
from fourfold.plan.model import Plan
from fourfold.plan.rows import waits_for_duration
from fourfold.plan.summary import RowFacts, stamps

ROW_INPUTS = ("kind", "method", "baseline", "sd", "effect", "relative", "alternative", "margin",
              "power", "rho", "cluster_size", "icc", "cluster_cv", "solve", "n",
              *kinds.RATIO_FIELDS, *kinds.QUANTILE_FIELDS)
"""The metric fields a row's result depends on (with its corrected α and the settings)."""

row_inputs = operator.attrgetter(*ROW_INPUTS)

SHARED_KEPT = 50_000
"""The most row results a shared pool keeps (about 100 scenarios of a 500-row plan)."""

_SETTINGS_INPUTS = tuple(name for name in SETTINGS_FIELDS if name not in ("title", "description"))


def settings_key(settings) -> tuple:
    """The settings a row's result depends on, as a tuple to compare."""
    return tuple(getattr(settings, name) for name in _SETTINGS_INPUTS)


@dataclass
class RowCache:
    """Row results of earlier evaluations, so that :func:`~fourfold.plan.evaluation.compute`
    solves only changed rows (see the module notes).

    One cache belongs to one open document (the window's); pass it to every ``compute`` of
    that document. A row is reused when its inputs, its corrected α and the plan's settings
    are those it was computed with, so the result is the same as without the cache; rows with
    the same inputs share one :class:`~fourfold.plan.results.RowResult`. Only the rows of the
    latest evaluation are kept.

    Examples
    --------
    >>> from fourfold.plan.evaluation import compute
    >>> plan, cache = Plan.empty(), RowCache()
    >>> first = compute(plan, cache=cache)
    >>> compute(plan, cache=cache).rows[0] is first.rows[0], len(cache.rows)
    (True, 1)
    """

    settings: tuple | None = None
    rows: dict = field(default_factory=dict)
    """Row results by key."""
    designs: dict = field(default_factory=dict)
    keys: list = field(default_factory=list)
    """The latest evaluation's row keys, in the plan's order."""
    results: tuple = ()
    """The latest evaluation's row results, in the plan's order."""
    uses: dict = field(default_factory=dict)
    """How many rows of the latest evaluation have each key of ``rows``."""
    alphas: list = field(default_factory=list)
    """The latest evaluation's corrected α of each row."""
    primaries: int = -1
    """The latest evaluation's number of primary rows."""
    stamps: np.ndarray | None = None
    """The stamps of the rows last seen by :meth:`sync`."""
    primary: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    waits: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    """Rows that take their units from the plan's duration."""
    follows: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    """Rows that take their figures from their history windows."""
    powers: list = field(default_factory=list)
    """The latest evaluation's powers at the plan's duration, in the plan's order."""
    powers_at: tuple | None = None
    """The units and days of the duration those powers are at."""
    facts: RowFacts | None = None
    """What the summary read of the rows last summarised."""
    shared: dict | None = None
    """Row results by settings and key, shared with the caches of the plan's other scenarios
    (:class:`fourfold.plan.comparison.Caches`; ``None``: not shared)."""
    settled: tuple | None = None
    """``(settings key, row stamps, result)`` of the latest plan whose rows follow their
    history windows: the same result again for the same settings and rows (the fixed point's
    rounds, which sync the cache with their own plans, are not run again)."""

    def sync(self, plan: Plan) -> list[int] | None:
        """Note the rows of ``plan`` that changed since the last call: their indices, or
        ``None`` when every row is to be read again (new settings, rows added or removed)."""
        settings = settings_key(plan.settings)
        if settings != self.settings:
            shared = self.shared
            self.__init__()
            self.settings, self.shared = settings, shared
        metrics = plan.metrics
        now = stamps(metrics)
        if self.stamps is None or now.size != self.stamps.size:
            changed = None
            self.primary = np.array([metric.role == "primary" for metric in metrics], dtype=bool)
            self.waits = np.array([waits_for_duration(plan.settings, metric)
                                   for metric in metrics], dtype=bool)
            self.follows = np.array([windows.follows(metric) for metric in metrics],
                                    dtype=bool)
        else:
            changed = np.flatnonzero(now != self.stamps).tolist()
            for index in changed:
                metric = metrics[index]
                self.primary[index] = metric.role == "primary"
                self.waits[index] = waits_for_duration(plan.settings, metric)
                self.follows[index] = windows.follows(metric)
        self.stamps = now
        return changed

    def summary_facts(self, plan: Plan, rows) -> RowFacts:
        """The summary's :class:`RowFacts` of ``rows`` (of the plan last synced), read again
        where they changed."""
        if self.facts is None:
            self.facts = RowFacts(plan.metrics, rows)
        else:
            self.facts.reread(plan.metrics, rows, self.stamps)
        return self.facts

    def borrow(self, keys: list, missing: list[int], results: list) -> list[int]:
        """Fill ``results`` at ``missing`` from the shared pool; the indices still missing."""
        pool, settings, left = self.shared, self.settings, []
        for index in missing:
            found = pool.get((settings, keys[index]))
            if found is None:
                left.append(index)
            else:
                results[index] = found
        return left

    def lend(self, keys: list, solved: list[int], results: list) -> None:
        """Put the rows just ``solved`` into the shared pool (the oldest go past its size)."""
        pool, settings = self.shared, self.settings
        for index in solved:
            pool[(settings, keys[index])] = results[index]
        while len(pool) > SHARED_KEPT:
            del pool[next(iter(pool))]
