"""Work done ahead, while the window is idle, so that a change of the number of looks is quick.

A plan meeting a number of interim looks for the first time has to make each group sequential
design its rows need (a millisecond or more each: a recursion over a grid at every look, for
the boundaries and for the drift that gives the design its power) and to solve its rows with
them. :func:`preparation` does that work ahead for the plan at every other number of looks,
the nearest first (:func:`looks_ahead`: one look more, one fewer, two more, ...), so that a
step and a number typed both find their work done, in slices of a few milliseconds, each
slice a ``next()`` of the generator. For each number of looks:

1. the equally spaced designs of the rows' α, power and sidedness at that number of looks,
   one slice each (:func:`fourfold.plan.sequential.shared_design` keeps them for every later
   evaluation);
2. the plan's rows at that number of looks, by :func:`fourfold.plan.evaluation.compute` with a
   row cache that shares the document's pool (:class:`fourfold.plan.row_cache.RowCache`), so
   that the document's own caches find them there (the designs at week ends are made on the
   way), then in a slice of their own the rows' powers at the plan's duration (with their
   boundaries). A plan of more than :data:`PREPARED_ROWS` rows gets its designs only (its
   rows would be one slice too long).

The first time (a plan just opened, or a new α, power, spending or sidedness) this is about
0.55 s of processor time for the sample plan and 0.85 s for a 500-row plan on the 2-core
development machine; after an edit the pool holds every row the edit left alone, and the work
is what the edit changed (0.02–0.4 s there). Its longest slices, 16–22 ms there, are the
designs at 17 looks or more, which come last.

Nothing here changes a result: designs are pure functions of their keys, and the pool gives a
row only to an evaluation of the same settings and the same row key. A change of the plan
makes the work out of date; the caller drops the generator and starts a new one.

Examples
--------
>>> from fourfold.plan import load, sample_path
>>> plan = load(sample_path())
>>> looks_ahead(4)[:6], looks_ahead(1)[:3], looks_ahead(20)[:3]
((5, 3, 6, 2, 7, 1), (2, 3, 4), (19, 18, 17))
>>> pool = {}
>>> slices = sum(1 for _ in preparation(plan, pool))
>>> slices > 2 and len(pool) > 0
True
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterator

from fourfold.errors import FourfoldError
from fourfold.plan import sequential
from fourfold.plan.arms import row_alphas
from fourfold.plan.evaluation import RowCache, compute
from fourfold.plan.fields import MAX_LOOKS
from fourfold.plan.model import Plan

PREPARED_ROWS = 500
"""The most rows whose results are prepared ahead (a larger plan gets its designs only): the
slice that solves 500 rows at 6 looks afresh takes about 16 ms on the 2-core development
machine, and an input that arrives during a slice waits for its end."""

MOST_DESIGNS = 16
"""The most designs prepared ahead for one number of looks (one per distinct α, power and
sidedness of the rows, the first met first)."""


def looks_ahead(looks: int) -> tuple[int, ...]:
    """The numbers of looks prepared ahead of a plan with ``looks``, in the order they are
    prepared: every other number from 1 to :data:`~fourfold.plan.fields.MAX_LOOKS`, the
    nearest first, one more before one fewer."""
    return tuple(sorted((k for k in range(1, MAX_LOOKS + 1) if k != looks),
                        key=lambda k: (abs(k - looks), k < looks)))


def design_keys(plan: Plan) -> list[tuple[float, float, str]]:
    """The distinct (α, power, alternative) the rows ask their designs for, in row order, at
    most :data:`MOST_DESIGNS` of them: a row's α after the plan's correction and its power
    (its own, else the plan's), as :func:`fourfold.plan.rows.solve_rows` asks
    :func:`fourfold.plan.sequential.row_design`.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Settings
    >>> plan = Plan(Settings(alpha=0.05, power=0.8),
    ...             [Metric(), Metric(power=0.9), Metric(alternative="greater"), Metric()])
    >>> design_keys(plan)
    [(0.05, 0.8, 'two-sided'), (0.05, 0.9, 'two-sided'), (0.05, 0.8, 'greater')]
    """
    power = plan.settings.power
    keys = dict.fromkeys(
        (alpha, power if metric.power is None else metric.power, metric.alternative)
        for alpha, metric in zip(row_alphas(plan), plan.metrics, strict=True))
    return list(keys)[:MOST_DESIGNS]


def preparation(plan: Plan, pool: dict) -> Iterator[None]:
    """Prepare ``plan`` at its :func:`looks_ahead` numbers of looks, one slice per ``next()``.

    ``pool`` is the shared pool of the document's row caches. A design or a plan that cannot
    be made is left for the evaluation that needs it, which reports why.
    """
    for looks in looks_ahead(plan.settings.looks):
        settings = dataclasses.replace(plan.settings, looks=looks)
        moved = dataclasses.replace(plan, settings=settings)
        keys = design_keys(moved) if looks > 1 else []
        yield
        for alpha, power, alternative in keys:
            try:
                sequential.row_design(settings, alpha, power, alternative)
            except ValueError:
                pass  # an impossible design: the row says so when it is solved
            yield
        if len(plan.metrics) <= PREPARED_ROWS:
            cache = RowCache(shared=pool)
            for powers in (False, True):  # the rows, then their powers at the duration
                try:
                    compute(moved, cache=cache, powers=powers)
                except FourfoldError:
                    break  # the evaluation at that number of looks reports it
                yield
