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
solved once for all of them, and of its powers at a duration by settings, duration and key,
so that a change of the settings back to ones met before (a number of looks, say) solves no
power again.

What changed is kept as sets of row indices, each emptied by the step that reads it:
:attr:`RowCache.unkeyed` (rows whose key is to be built again), :attr:`RowCache.unread` (rows
the summary's facts are to read again) and :attr:`RowCache.moved` (rows whose inputs, result
or power at the duration may differ from the latest result ``compute`` returned: what a table
repaints). ``None`` in any of them means every row. A caller that knows which rows were
assigned to since the cache last saw the plan (the window's command stack reports them) passes
them to :meth:`RowCache.sync`, which then reads only those rows' stamps; without them it reads
every row's, which also finds rows replaced, added, removed or reordered.
"""

from __future__ import annotations

import operator
from collections.abc import Iterable
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

SHARED_KEPT = 100_000
"""The most entries a shared pool keeps: row results and their powers at a duration (about
100 scenarios of a 500-row plan)."""

_POWER = "power at"
"""The first item of a shared pool's key of a row's power at a duration (a row result's key
has two items: settings and row key)."""

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
    results: list = field(default_factory=list)
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
    unkeyed: set | None = None
    """Rows whose inputs changed since their keys were last built (``None``: every row)."""
    unread: set | None = None
    """Rows whose inputs or result changed since the summary's facts last read them."""
    moved: set | None = None
    """Rows whose inputs, result or power at the duration may differ from the latest result
    :func:`~fourfold.plan.evaluation.compute` returned with this cache (``None``: any row)."""
    shown_powers: tuple = ()
    """The powers at the duration of the latest evaluation (for :meth:`note_powers`)."""
    shown_at: tuple | None = None
    """The units and days those powers are at (``None``: not computed, all ``nan``)."""
    summarised: tuple = ()
    """The rows the summary's facts last read (the latest evaluation's, at its duration)."""
    held: tuple | None = None
    """What the rows waiting for the duration hold in :attr:`summarised` (their results
    before the duration, without one, or at a duration; ``None``: not known)."""
    plain: bool = False
    """Whether the latest result came from one evaluation of the plan's rows as they are (not
    from the rounds of rows that follow their history windows)."""

    def sync(self, plan: Plan, edited: Iterable[int] | None = None) -> None:
        """Note the rows of ``plan`` that changed since the last call in :attr:`unkeyed`,
        :attr:`unread` and :attr:`moved` (every row for new settings or rows added or removed).

        ``edited``: the rows assigned to since the last call, when the caller knows them (the
        rows of the command stack's cell edits); only their stamps are read. ``None``: every
        row's stamp is read, which also finds rows replaced or reordered.
        """
        settings = settings_key(plan.settings)
        if settings != self.settings:
            shared = self.shared
            self.__init__()
            self.settings, self.shared = settings, shared
        metrics = plan.metrics
        size = len(metrics)
        if edited is not None:
            edited = sorted(set(edited))
            if edited and not 0 <= edited[0] <= edited[-1] < size:
                edited = None
        if self.stamps is None or size != self.stamps.size:
            self.stamps = stamps(metrics)
            self.primary = np.array([metric.role == "primary" for metric in metrics], dtype=bool)
            self.waits = np.array([waits_for_duration(plan.settings, metric)
                                   for metric in metrics], dtype=bool)
            self.follows = np.array([windows.follows(metric) for metric in metrics],
                                    dtype=bool)
            self.unkeyed = self.unread = self.moved = None
            return
        if edited is None:
            now = stamps(metrics)
            changed = np.flatnonzero(now != self.stamps).tolist()
            self.stamps = now
        else:
            changed = [index for index in edited if metrics[index].stamp != self.stamps[index]]
        for index in changed:
            metric = metrics[index]
            self.stamps[index] = metric.stamp
            self.primary[index] = metric.role == "primary"
            self.waits[index] = waits_for_duration(plan.settings, metric)
            self.follows[index] = windows.follows(metric)
        if self.unkeyed is not None:
            self.unkeyed.update(changed)
        self.mark(changed)

    def mark(self, *rows: Iterable[int]) -> None:
        """Note the rows of each of ``rows`` as changed for the summary's facts and in
        :attr:`moved`."""
        for found in (self.unread, self.moved):
            if found is not None:
                found.update(*rows)

    def take_held(self) -> tuple | None:
        """:attr:`held`, not known from now on (until an evaluation sets it again)."""
        found, self.held = self.held, None
        return found

    def take_unkeyed(self) -> list[int] | None:
        """The rows whose keys are to be built again, ascending (``None``: every row); from
        now on none."""
        found, self.unkeyed = self.unkeyed, set()
        return None if found is None else sorted(found)

    def summary_facts(self, plan: Plan, rows) -> RowFacts:
        """The summary's :class:`RowFacts` of ``rows`` (of the plan last synced), read again
        where they changed (:attr:`unread`)."""
        if self.facts is None or self.unread is None or self.facts.size != len(rows):
            self.facts = RowFacts(plan.metrics, rows)
        else:
            self.facts.reread(plan.metrics, rows, sorted(self.unread))
        self.unread = set()
        return self.facts

    def note_powers(self, powers: tuple, at: tuple | None, solved: Iterable[int] | None) -> None:
        """Note in :attr:`moved` the rows whose power at the duration differs from the latest
        evaluation's: only rows in ``solved`` (the powers solved again) while the duration
        ``at`` (units and days; ``None``: no powers) stays; otherwise every row whose power
        differs (``nan`` equal to ``nan``)."""
        before = self.shown_powers
        if at is not None and at == self.shown_at and solved is not None:
            self.mark(solved)
        elif at is None and self.shown_at is None and len(before) == len(powers):
            pass  # all nan, before and now
        elif len(before) == len(powers):
            old, new = np.array(before, dtype=float), np.array(powers, dtype=float)
            self.mark(np.flatnonzero((old != new) & ~(np.isnan(old) & np.isnan(new))).tolist())
        else:
            self.moved = None
        self.shown_powers, self.shown_at = powers, at

    def start(self) -> None:
        """Begin an evaluation's record of :attr:`moved` (what differs from the latest result):
        empty, or every row when there is no latest result it can be told from."""
        self.moved = set() if self.stamps is not None and self.plain else None

    def borrow(self, keys: list, missing: list[int], results: list) -> list[int]:
        """Fill ``results`` at ``missing`` from the shared pool; the indices still missing."""
        return self._take((self.settings,), keys, missing, results)

    def lend(self, keys: list, solved: list[int], results: list) -> None:
        """Put the rows just ``solved`` into the shared pool (the oldest go past its size)."""
        self._put((self.settings,), keys, solved, results)

    def borrow_powers(self, where: tuple, missing: Iterable[int], powers: list) -> list[int]:
        """Fill ``powers`` at ``missing`` with the powers at the duration ``where`` (units and
        days) the shared pool holds for rows of the same settings and keys (:attr:`keys`: a
        row's power there depends on nothing else); the indices still missing."""
        return self._take((_POWER, self.settings, where), self.keys, missing, powers)

    def lend_powers(self, where: tuple, solved: list[int], powers: list) -> None:
        """Put the powers at the duration ``where`` of the rows just ``solved`` into the
        shared pool (the oldest entries go past its size)."""
        self._put((_POWER, self.settings, where), self.keys, solved, powers)

    def _take(self, head: tuple, keys: list, missing: Iterable[int], into: list) -> list[int]:
        """Fill ``into`` at ``missing`` with the pool's entries ``(*head, key)``; the indices
        it has none for."""
        pool, left = self.shared, []
        for index in missing:
            found = pool.get((*head, keys[index]))
            if found is None:
                left.append(index)
            else:
                into[index] = found
        return left

    def _put(self, head: tuple, keys: list, indices: list[int], values: list) -> None:
        """Keep ``values`` at ``indices`` as the pool's entries ``(*head, key)``; the oldest
        entries go past the pool's size."""
        pool = self.shared
        for index in indices:
            pool[(*head, keys[index])] = values[index]
        while len(pool) > SHARED_KEPT:
            del pool[next(iter(pool))]
