"""Work done ahead for the other numbers of looks: it makes the later evaluation cheap and
never changes it.

The reference is the same evaluation with every cache of designs emptied and no pool, or
without a cache (a consistency check, no outside source); the varied plans are made by the
edits of ``test_evaluation_cache``.
"""

import dataclasses
from unittest import mock

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_evaluation_cache import EDITS, _apply, _same_result
from test_evaluation_cache import _plan as _evaluation_plan

from fourfold.engine import sequential as engine_sequential
from fourfold.plan import evaluation, load, prepare, sample_path, sequential, tradeoffs
from fourfold.plan.comparison import Caches
from fourfold.plan.evaluation import RowCache, compute
from fourfold.plan.fields import MAX_LOOKS
from fourfold.plan.model import Plan


def _forget():
    for cached in (engine_sequential._boundaries, sequential.shared_design,
                   sequential.shared_boundaries, sequential._power_of, tradeoffs._inflation,
                   tradeoffs._node_inflations):
        cached.cache_clear()


class _Counted:
    """Counts the grid work (designs, boundaries) and the rows solved."""

    def __init__(self, monkeypatch):
        self.designs, self.rows = 0, 0
        design, bounds, solve = (engine_sequential.design, engine_sequential.boundaries,
                                 evaluation.solve_rows)

        def counted_design(*args, **kwargs):
            self.designs += 1
            return design(*args, **kwargs)

        def counted_bounds(*args, **kwargs):
            self.designs += 1
            return bounds(*args, **kwargs)

        def counted_solve(plan, designs, alphas, missing, *rest, **kwargs):
            self.rows += len(missing)
            return solve(plan, designs, alphas, missing, *rest, **kwargs)

        monkeypatch.setattr(engine_sequential, "design", counted_design)
        monkeypatch.setattr(engine_sequential, "boundaries", counted_bounds)
        monkeypatch.setattr(evaluation, "solve_rows", counted_solve)


def _with_looks(plan, looks, **settings):
    return dataclasses.replace(plan, settings=dataclasses.replace(plan.settings, looks=looks,
                                                                   **settings))


def _run(plan, pool):
    for _ in prepare.preparation(plan, pool):
        pass


@pytest.mark.parametrize("looks", range(1, MAX_LOOKS + 1))
def test_the_work_ahead_meets_every_other_number_of_looks_the_nearest_first(looks):
    ahead = prepare.looks_ahead(looks)
    assert sorted(ahead) == [k for k in range(1, MAX_LOOKS + 1) if k != looks]
    distances = [abs(k - looks) for k in ahead]
    assert distances == sorted(distances)
    for first, second in zip(ahead, ahead[1:], strict=False):
        if abs(first - looks) == abs(second - looks):
            assert first > looks > second  # one more before one fewer


COMPARED = (1, 2, 4, 8, 20)
"""The numbers of looks whose prepared result is held to a fresh one (every number is
checked for work left undone; a fresh result at each would double the time)."""


@pytest.mark.parametrize("settings", [{}, {"whole_weeks": True}, {"whole_weeks": False},
                                      {"futility": True}, {"spending": "pocock"}])
def test_after_the_work_ahead_any_number_of_looks_makes_no_design_and_solves_no_row(
        monkeypatch, settings):
    # a step (4, 2) or a number typed (any other): the evaluation finds its work done
    plan = _with_looks(load(sample_path()), 3, **settings)
    pool = {}
    _forget()
    _run(plan, pool)
    counted = _Counted(monkeypatch)
    prepared = {}
    for looks in prepare.looks_ahead(3):
        prepared[looks] = compute(_with_looks(plan, looks), cache=RowCache(shared=pool))
        assert (counted.designs, counted.rows) == (0, 0), looks
    monkeypatch.undo()
    _forget()
    for looks in COMPARED:
        fresh = compute(_with_looks(plan, looks))
        assert prepared[looks].rows == fresh.rows
        assert prepared[looks].notes == fresh.notes
        assert prepared[looks].duration_powers == fresh.duration_powers
        assert prepared[looks].duration_days == fresh.duration_days


def test_without_the_work_ahead_the_same_step_makes_designs_and_solves_rows(monkeypatch):
    # the counts above can fail: the same step on an empty pool and caches does the work
    plan = _with_looks(load(sample_path()), 3)
    _forget()
    counted = _Counted(monkeypatch)
    compute(_with_looks(plan, 4), cache=RowCache(shared={}))
    assert counted.designs > 0 and counted.rows == len(plan.metrics)


def test_a_large_plan_gets_its_designs_ahead_but_not_its_rows(monkeypatch):
    sample = _with_looks(load(sample_path()), 3)
    rows = [dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}")
            for i in range(prepare.PREPARED_ROWS + 1)]
    plan = Plan(sample.settings, rows)
    pool = {}
    _forget()
    _run(plan, pool)
    assert pool == {}
    keys = prepare.design_keys(_with_looks(plan, 4))
    counted = _Counted(monkeypatch)
    for alpha, power, alternative in keys:
        sequential.row_design(_with_looks(plan, 4).settings, alpha, power, alternative)
    assert keys and counted.designs == 0


def test_an_impossible_design_is_left_for_the_evaluation_to_report():
    # power not above the one-sided α: the design cannot be made; the work ahead goes on and
    # the row says why when the plan is evaluated at that number of looks
    plan = load(sample_path())
    plan = _with_looks(plan, 2, alpha=0.5, power=0.2)
    _run(plan, {})
    result = compute(_with_looks(plan, 3))
    assert any(row.reason for row in result.rows)


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(1, 5), st.integers(1, MAX_LOOKS), st.booleans(), st.booleans(),
       st.sampled_from(["ld-obrien-fleming", "pocock", "hsd"]),
       st.sampled_from([None, 28.0]), st.lists(EDITS, max_size=4))
def test_a_varied_plan_prepared_ahead_gives_the_fresh_result(looks, target, weeks, futility,
                                                            spending, runtime, edits):
    # the document's path: its shown cache has the plan at its looks, the work ahead fills
    # the shared pool, then the looks change (a step, or a number typed: ``target``) and the
    # same cache evaluates the plan again. The work ahead is held to the step up and the
    # target here (each number is prepared alike; all of them would take 20 × as long).
    plan = _evaluation_plan(12)
    plan.settings = dataclasses.replace(plan.settings, looks=looks, whole_weeks=weeks,
                                        futility=futility, spending=spending,
                                        runtime_days=runtime)
    for edit in edits:
        _apply(plan, edit)
    caches = Caches()
    compute(plan, cache=caches.get(None))
    moves = tuple(dict.fromkeys(k for k in (looks + 1, target) if k != looks))
    with mock.patch.object(prepare, "looks_ahead", lambda _looks: moves):
        _run(plan, caches.pool)
    for moved in moves:
        stepped = _with_looks(plan, moved)
        _same_result(compute(stepped, cache=caches.get(None)), compute(stepped))
