"""Work done ahead, while the window is idle, so that stepping the number of looks is quick.

A plan meeting a number of interim looks for the first time has to make each group sequential
design its rows need (a millisecond or more each: a recursion over a grid at every look, for
the boundaries and for the drift that gives the design its power) and to solve its rows with
them. :func:`preparation` does that work ahead for the plan at one look more and one fewer
than it has, in slices of a few milliseconds, each slice a ``next()`` of the generator:

1. the equally spaced designs of the rows' α, power and sidedness at that number of looks,
   one slice each (:func:`fourfold.plan.sequential.shared_design` keeps them for every later
   evaluation);
2. the plan's rows at that number of looks, by :func:`fourfold.plan.evaluation.compute` with a
   row cache that shares the document's pool (:class:`fourfold.plan.row_cache.RowCache`), so
   that the document's own caches find them there (the designs at week ends are made on the
   way), then in a slice of their own the rows' powers at the plan's duration (with their
   boundaries). A plan of more than :data:`PREPARED_ROWS` rows gets its designs only (its
   rows would be one slice too long).

Nothing here changes a result: designs are pure functions of their keys, and the pool gives a
row only to an evaluation of the same settings and the same row key. A change of the plan
makes the work out of date; the caller drops the generator and starts a new one.

Examples
--------
>>> from fourfold.plan import load, sample_path
>>> plan = load(sample_path())
>>> neighbours(4), neighbours(1), neighbours(20)
((5, 3), (2,), (19,))
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


def neighbours(looks: int) -> tuple[int, ...]:
    """The numbers of looks prepared ahead of a plan with ``looks``: one more, one fewer."""
    return tuple(k for k in (looks + 1, looks - 1) if 1 <= k <= MAX_LOOKS)


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
    """Prepare ``plan`` at its :func:`neighbours` numbers of looks, one slice per ``next()``.

    ``pool`` is the shared pool of the document's row caches. A design or a plan that cannot
    be made is left for the evaluation that needs it, which reports why.
    """
    for looks in neighbours(plan.settings.looks):
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
