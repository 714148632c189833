"""The row cache under every kind of edit: results equal an evaluation without the cache.

The reference is :func:`fourfold.plan.evaluation.compute` without a cache on the same plan
(a consistency check; no outside source is involved). Edits are drawn by hypothesis: a cell
changed by replacing its row, two rows swapped, a row's inputs copied onto another (equal inputs
share one result), rows inserted and removed, a row override of α, the plan's correction; and,
as the command stack makes them, assignments to a row in place: a cell, a name (no input), a
role (which moves every primary row's α) and a row that comes to wait for the plan's duration.
"""

import dataclasses
import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fourfold.plan import Plan, load, sample_path
from fourfold.plan.comparison import Caches, outcomes
from fourfold.plan.evaluation import RowCache, compute
from fourfold.plan.model import Scenario

INPUTS = ("kind", "method", "baseline", "sd", "effect", "relative", "alternative",
          "margin", "power", "rho", "cluster_size", "icc", "cluster_cv", "solve", "n")


def _plan(rows: int) -> Plan:
    sample = load(sample_path())
    metrics = [dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}",
                                   n=30_000.0 + i)
               for i in range(rows)]
    return Plan(dataclasses.replace(sample.settings, correction="none"), metrics)


def _same(a, b) -> bool:
    both_nan = isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b)
    return a == b or both_nan


def _apply(plan: Plan, edit: tuple) -> None:
    what, first, second, scale = edit
    metrics = plan.metrics
    first, second = first % len(metrics), second % len(metrics)
    if what == "cell":
        metrics[first] = dataclasses.replace(metrics[first],
                                             baseline=metrics[first].baseline * scale)
    elif what == "swap":
        metrics[first], metrics[second] = metrics[second], metrics[first]
    elif what == "copy":
        metrics[first] = dataclasses.replace(metrics[second], name=metrics[first].name)
    elif what == "insert":
        metrics.insert(first, dataclasses.replace(metrics[second], name="Inserted"))
    elif what == "remove" and len(metrics) > 2:
        del metrics[first]
    elif what == "alpha":
        metrics[first] = dataclasses.replace(metrics[first], alpha=0.05 * scale)
    elif what == "solve":
        metrics[first] = dataclasses.replace(metrics[first], solve="power")
    elif what == "correction":
        plan.settings = dataclasses.replace(plan.settings, correction="bonferroni")
    elif what == "in_place":
        metrics[first].baseline = metrics[first].baseline * scale
    elif what == "rename":
        metrics[first].name = f"Renamed {scale}"
    elif what == "role":
        metrics[first].role = "secondary" if metrics[first].role == "primary" else "primary"
    elif what == "waits":
        metrics[first].solve, metrics[first].n = "power", None


EDITS = st.tuples(
    st.sampled_from(["cell", "swap", "copy", "insert", "remove", "alpha", "solve",
                     "correction", "in_place", "rename", "role", "waits"]),
    st.integers(0, 40), st.integers(0, 40), st.sampled_from([0.5, 0.9, 1.1, 1.5]),
)


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(EDITS, min_size=1, max_size=6))
def test_cached_results_equal_uncached_ones_after_any_edits(edits):
    plan = _plan(18)
    cache = RowCache()
    compute(plan, cache=cache)
    for edit in edits:
        _apply(plan, edit)
        cached = compute(plan, cache=cache)
        fresh = compute(plan)
        assert len(cached.rows) == len(fresh.rows) == len(plan.metrics)
        for x, y in zip(cached.rows, fresh.rows, strict=True):
            for name in (f.name for f in dataclasses.fields(x)):
                assert _same(getattr(x, name), getattr(y, name)), (edit, name)
        for name in ("duration_days", "total_units", "binding_index", "binding_name", "notes",
                     "incomplete"):
            assert _same(getattr(cached, name), getattr(fresh, name)), (edit, name)
        assert all(_same(x, y) for x, y in zip(cached.duration_powers, fresh.duration_powers,
                                               strict=True))
        # a row's key: the α it is tested at (after the correction) and its inputs
        keys = [(row.alpha, *(getattr(metric, name) for name in INPUTS))
                for row, metric in zip(fresh.rows, plan.metrics, strict=True)]
        assert len(cache.rows) == len(set(keys))
        for i, key in enumerate(keys):  # equal inputs share one result (rows solved at
            j = keys.index(key)           # the plan's duration are solved anew each time)
            if plan.metrics[i].solve == "sample_size" or plan.metrics[i].n is not None:
                assert cached.rows[i] is cached.rows[j]


def _same_result(cached, fresh) -> None:
    for x, y in zip(cached.rows, fresh.rows, strict=True):
        for name in (f.name for f in dataclasses.fields(x)):
            assert _same(getattr(x, name), getattr(y, name)), name
    assert (cached.duration_days, cached.binding_index) == (fresh.duration_days,
                                                            fresh.binding_index)
    assert all(_same(x, y) for x, y in zip(cached.duration_powers, fresh.duration_powers,
                                           strict=True))


@settings(max_examples=10, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(EDITS, EDITS), min_size=1, max_size=5))
def test_caches_that_share_a_pool_give_each_plan_its_own_results(edits):
    # Two plans (as two scenarios of one document) whose rows are partly alike, each with its
    # own cache and one shared pool: each result equals that plan evaluated without a cache.
    caches = Caches()
    plans = [_plan(12), _plan(12)]
    for plan, name in zip(plans, ("a", "b"), strict=True):
        compute(plan, cache=caches.get(name))
    for one, other in edits:
        _apply(plans[0], one)
        _apply(plans[1], other)
        for plan, name in zip(plans, ("a", "b"), strict=True):
            _same_result(compute(plan, cache=caches.get(name)), compute(plan))


def test_a_row_shown_alike_in_several_scenarios_is_solved_once(monkeypatch):
    from fourfold.plan import rows as plan_rows
    from fourfold.plan import scenarios

    plan = _plan(6)
    ids = [metric.id for metric in plan.metrics]
    plan.scenarios = [Scenario("Larger effect", rows={ids[0]: {"effect": 0.07}}),
                      Scenario("Without row 2", omitted=[ids[1]])]
    caches = Caches()
    outcomes(plan, caches)
    solved = []
    real = plan_rows.solve_rows

    def counting(plan, designs, alphas, indices, results, *args):
        solved.append(len(indices))
        return real(plan, designs, alphas, indices, results, *args)

    monkeypatch.setattr("fourfold.plan.evaluation.solve_rows", counting)
    plan.metrics[3].baseline *= 1.1
    found = outcomes(plan, caches)
    assert sum(solved) == 1  # the base and every scenario show the edited row alike
    for outcome in found:
        _same_result(outcome.result, compute(scenarios.effective(plan, outcome.name)))


def test_an_evaluation_without_powers_leaves_the_cache_right_for_the_next():
    plan, cache = _plan(12), RowCache()
    compute(plan, cache=cache)
    plan.metrics[3].baseline *= 1.2
    quick = compute(plan, cache=cache, powers=False)
    fresh = compute(plan)
    assert quick.duration_days == fresh.duration_days
    assert all(math.isnan(power) for power in quick.duration_powers)
    _same_result(compute(plan, cache=cache), fresh)
