"""compute() solves rows in groups: one engine call per group, results as if row by row.

The reference is the engine's own scalar solvers (one call per row, as a user would make them)
and one-row plans; no outside source is involved in these consistency checks.
"""

import dataclasses
import math

import pytest

from fourfold import engine
from fourfold.plan import Plan, arms, load, sample_path
from fourfold.plan.evaluation import RowCache, compute
from fourfold.plan.kinds import unit_sd
from fourfold.plan.rules import is_margin_row

SOLVES = ("sample_size", "power", "detectable_effect", "significance_level")


def _mixed_plan(rows: int, **settings) -> Plan:
    sample = load(sample_path())
    metrics = []
    for i in range(rows):
        metric = sample.metrics[i % len(sample.metrics)]
        solve = SOLVES[(i // len(sample.metrics)) % len(SOLVES)]
        metrics.append(dataclasses.replace(
            metric, name=f"Metric {i}", solve=solve, n=20_000.0 + 37.0 * i,
            baseline=metric.baseline * (1.0 + 0.001 * i),
        ))
    return Plan(dataclasses.replace(sample.settings, **settings), metrics)


def _same(a, b) -> bool:
    both_nan = isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b)
    return a == b or both_nan


def _count_engine_calls(monkeypatch) -> dict:
    counts: dict = {}
    for name in ("values_and_reasons", "problems", "sample_size", "power",
                 "detectable_effect", "significance_level", "variance_factor",
                 "duration_days", "adjusted_alpha"):
        original = getattr(engine, name)

        def counted(*args, _name=name, _original=original, **kwargs):
            counts[_name] = counts.get(_name, 0) + 1
            return _original(*args, **kwargs)

        monkeypatch.setattr(engine, name, counted)
    return counts


@pytest.mark.parametrize("looks", [1, 3])
def test_engine_calls_do_not_grow_with_the_number_of_rows(monkeypatch, looks):
    counts = _count_engine_calls(monkeypatch)
    every = 4 * len(load(sample_path()).metrics)  # each sample row with each of the 4 solves
    arms._dunnett.cache_clear()  # Dunnett's α per (α, sides) is cached across evaluations
    compute(_mixed_plan(every, looks=looks))
    small = dict(counts)
    counts.clear()
    arms._dunnett.cache_clear()
    result = compute(_mixed_plan(500, looks=looks))
    assert counts == small
    assert sum(counts.values()) <= 40  # the solve groups, then one power call per group
    assert not any(counts.get(name) for name in SOLVES)
    assert sum(1 for row in result.rows if not row.reason) > 300


def test_rows_in_a_plan_equal_one_row_plans():
    plan = _mixed_plan(48, correction="none", looks=1)
    together = compute(plan).rows
    for metric, row in zip(plan.metrics, together, strict=True):
        alone = compute(Plan(plan.settings, [metric])).rows[0]
        for field in dataclasses.fields(row):
            assert _same(getattr(row, field.name), getattr(alone, field.name)), field.name


def test_grouped_rows_equal_direct_scalar_engine_calls():
    plan = _mixed_plan(48, correction="none", looks=1, runtime_days=None)
    settings = plan.settings
    for metric, row in zip(plan.metrics, compute(plan).rows, strict=True):
        factor = float(engine.variance_factor(metric.rho, metric.cluster_size, metric.icc,
                                              metric.cluster_cv))
        sd = unit_sd(metric) if metric.kind in ("ratio", "quantile") else metric.sd
        common = dict(sd=sd, alpha=settings.alpha, alternative=metric.alternative,
                      ratio=settings.ratio, relative=metric.relative, margin=metric.margin,
                      method=metric.method)
        if row.reason:
            reason = engine.problems(metric.solve, metric.kind, metric.baseline,
                                     effect=metric.effect, n=metric.n / factor,
                                     power=settings.power, **common)
            assert row.reason == str(reason.item())
            continue
        if metric.solve == "sample_size":
            n = float(engine.sample_size(metric.kind, metric.baseline, metric.effect,
                                         power=settings.power, **common))
            assert row.units_control == math.ceil(n * factor - 1e-9 * n * factor)
        elif metric.solve == "power":
            assert row.power == float(engine.power(metric.kind, metric.baseline, metric.effect,
                                                   metric.n / factor, **common))
        elif metric.solve == "detectable_effect" and is_margin_row(metric):
            del common["margin"]
            margin = float(engine.detectable_margin(metric.kind, metric.baseline,
                                                    metric.effect, metric.n / factor,
                                                    power=settings.power, **common))
            assert (row.margin_rel if metric.relative else row.margin_abs) == margin
            assert row.solved == "detectable_margin"
        elif metric.solve == "detectable_effect":
            effect = float(engine.detectable_effect(metric.kind, metric.baseline,
                                                    metric.n / factor, power=settings.power,
                                                    **common))
            assert (row.effect_rel if metric.relative else row.effect_abs) == effect
        else:
            del common["alpha"]
            assert row.alpha == float(engine.significance_level(
                metric.kind, metric.baseline, metric.effect, metric.n / factor,
                power=settings.power, **common))


def _assert_same_result(a, b):
    assert len(a.rows) == len(b.rows)
    for x, y in zip(a.rows, b.rows, strict=True):
        for name in (f.name for f in dataclasses.fields(x)):
            assert _same(getattr(x, name), getattr(y, name)), name
    for name in ("duration_days", "total_units", "binding_index", "binding_name", "notes",
                 "incomplete"):
        assert _same(getattr(a, name), getattr(b, name)), name
    assert all(_same(x, y) for x, y in zip(a.duration_powers, b.duration_powers, strict=True))


@pytest.mark.parametrize("looks", [1, 3])
def test_a_cache_solves_only_changed_rows_and_changes_no_result(monkeypatch, looks):
    plan = _mixed_plan(60, looks=looks)
    cache = RowCache()
    compute(plan, cache=cache)
    counts = _count_engine_calls(monkeypatch)
    plan.metrics[7] = dataclasses.replace(plan.metrics[7], baseline=plan.metrics[7].baseline * 1.1)
    cached = compute(plan, cache=cache)
    # the row, then (a complete plan having a duration) its power at the plan's duration
    assert counts.get("values_and_reasons", 0) == 1 + (cached.status == "complete")
    _assert_same_result(cached, compute(plan))
    assert len(cache.rows) == len({(m.kind, m.baseline, m.solve, m.n) for m in plan.metrics})


def test_a_cache_follows_the_correction_and_the_settings():
    plan = _mixed_plan(30, correction="bonferroni")
    cache = RowCache()
    compute(plan, cache=cache)
    # one more primary row changes the α of every primary row (Bonferroni: α / k)
    index = next(i for i, m in enumerate(plan.metrics) if m.role != "primary")
    plan.metrics[index] = dataclasses.replace(plan.metrics[index], role="primary")
    _assert_same_result(compute(plan, cache=cache), compute(plan))
    for change in (dict(power=0.9), dict(arms=1), dict(daily_units=None),
                   dict(runtime_days=21.0), dict(looks=2)):
        plan.settings = dataclasses.replace(plan.settings, **change)
        _assert_same_result(compute(plan, cache=cache), compute(plan))
