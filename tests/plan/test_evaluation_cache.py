"""The row cache under every kind of edit: results equal an evaluation without the cache.

The reference is :func:`fourfold.plan.evaluation.compute` without a cache on the same plan
(a consistency check; no outside source is involved). Edits are drawn by hypothesis: a cell
changed by replacing its row, two rows swapped, a row's inputs copied onto another (equal inputs
share one result), rows inserted and removed, a row override of α, the plan's correction; and,
as the command stack makes them, assignments to a row in place: a cell, a name (no input), a
role (which moves every primary row's α) and a row that comes to wait for the plan's duration.
The same edits are made on plans whose rows follow their history windows, and with the cache
told the rows edited in place (as the window's document tells it), where the rows it reports
as moved must hold every row whose result or power at the duration changed.
"""

import dataclasses
import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fourfold.plan import Plan, load, sample_path, scenarios
from fourfold.plan.comparison import Caches, outcomes
from fourfold.plan.evaluation import RowCache, compute
from fourfold.plan.model import Scenario
from fourfold.plan.windows import follows, uses_windows

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


def _apply(plan: Plan, edit: tuple) -> list[int] | None:
    """Make ``edit``; the rows it assigned to in place (what the command stack reports for a
    cell edit), ``None`` for any other edit."""
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
    else:
        return None
    return [first] if what in ("in_place", "rename", "role", "waits") else None


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


def _windowed_plan(rows: int) -> Plan:
    """The sample's returning-visitors scenario (five of its seven rows follow their history
    windows, on a reach curve), its rows repeated to ``rows``."""
    sample = load(sample_path())
    name = next(scenario.name for scenario in sample.scenarios if "reach" in scenario.settings)
    shown = scenarios.effective(sample, name)
    metrics = [dataclasses.replace(shown.metrics[i % len(shown.metrics)], name=f"Metric {i}",
                                   n=30_000.0 + i if i % 7 == 3 else None)
               for i in range(rows)]
    return Plan(shown.settings, metrics)


def _differs(a, b) -> bool:
    return any(not _same(getattr(a, f.name), getattr(b, f.name)) for f in dataclasses.fields(a))


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(EDITS, min_size=1, max_size=6), st.booleans(), st.booleans())
def test_a_cache_told_the_rows_edited_in_place_gives_the_same_results(edits, told, windowed):
    plan = _windowed_plan(14) if windowed else _plan(18)
    assert uses_windows(plan) == windowed
    cache = RowCache()
    before = compute(plan, cache=cache)
    for edit in edits:
        edited = _apply(plan, edit)
        cached = compute(plan, cache=cache, edited=edited if told else None)
        fresh = compute(plan)
        _same_result(cached, fresh)
        for name in ("total_units", "binding_name", "notes", "incomplete"):
            assert _same(getattr(cached, name), getattr(fresh, name)), (edit, name)
        if cache.moved is not None and len(before.rows) == len(cached.rows):
            changed = {index for index, (a, b) in enumerate(zip(before.rows, cached.rows,
                                                                strict=True)) if _differs(a, b)}
            changed |= {index for index, (a, b) in enumerate(zip(
                before.duration_powers, cached.duration_powers, strict=True)) if not _same(a, b)}
            assert changed <= cache.moved, edit
        before = cached


def test_an_edit_in_place_of_a_row_beside_rows_that_follow_their_windows_is_seen():
    # The rows that follow their windows are evaluated in rounds, each with the plan at that
    # round's days; a row edited in place must be solved again all the same.
    plan, cache = _windowed_plan(7), RowCache()
    compute(plan, cache=cache)
    row = next(index for index, metric in enumerate(plan.metrics)
               if not follows(metric) and metric.kind == "mean")
    plan.metrics[row].sd *= 2
    _same_result(compute(plan, cache=cache), compute(plan))
