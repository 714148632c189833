"""Every row's power at the plan's duration is the power of that row asked alone.

:func:`fourfold.plan.rows.powers_at` reads the rows as columns, makes one engine call per group
of rows and, with interim looks, asks each design's boundaries once per distinct fixed power of
its rows (:func:`fourfold.plan.rows._through_looks`). The reference here is the row asked alone,
the way the rule reads: one engine call of one element with the row's α, effect, margin and
design factor at the duration's units, then, with looks, the boundaries of its own design
(:func:`fourfold.plan.sequential.row_boundaries`) through
:func:`fourfold.plan.sequential.power_of`. A consistency check (no outside source): a row given
another row's design, fixed power or engine group would differ; the two must agree to the
last bit.
"""

import dataclasses
import math

import numpy as np
import pytest
from test_solved_rows import _reach, _rows

from fourfold import engine
from fourfold.plan import Metric, Plan, compute, kinds, load, sample_path, sequential
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.rows import AtDuration, powers_at, runtime_units


def _alone(plan: Plan, result, index: int, at: AtDuration) -> float:
    """Row ``index``'s power at ``at``, asked on its own."""
    metric, row = plan.metrics[index], result.rows[index]
    if row.reason:
        return math.nan
    sd, own = kinds.unit_sds([metric])
    values, reasons = engine.values_and_reasons(
        "power", metric.kind, np.array([metric.baseline]), effect=np.array([row.effect_abs]),
        n=at.units / np.array([row.design_factor]),
        sd=None if sd is None else np.where(own == "", sd, 1.0), alpha=np.array([row.alpha]),
        alternative=metric.alternative, ratio=treatment_ratio(plan.settings), relative=False,
        margin=np.array([row.margin_abs]), method=metric.method)
    if own[0] or reasons[0]:
        return math.nan
    value = float(values[0])
    settings = plan.settings
    if settings.looks <= 1:
        return value
    power = settings.power if metric.power is None else metric.power
    try:
        staged = sequential.row_boundaries(settings, row.alpha, power, metric.alternative, {},
                                           at.days)
    except ValueError:
        return math.nan
    return sequential.power_of(staged, value)


def _at(plan: Plan, result) -> AtDuration:
    settings = plan.settings
    if settings.runtime_days is not None:
        return AtDuration(runtime_units(settings), float(settings.runtime_days))
    days = result.duration_days
    return AtDuration(runtime_units(dataclasses.replace(settings, runtime_days=days)), days)


def _varied() -> list:
    """The rows of ``test_solved_rows`` twice over (rows of one design and fixed power
    apart), with rows that fail (no effect) and a power asked of one row only."""
    rows = _rows()
    conversion = rows[0]
    return [*rows,
            dataclasses.replace(conversion, name="No effect", role="secondary", effect=None),
            dataclasses.replace(rows[5], name="Revenue at power 0.85", power=0.85),
            Metric(name="Impossible design", role="secondary", kind="mean", baseline=1.0,
                   sd=1.0, effect=0.1, power=0.01, alpha=0.2),
            *[dataclasses.replace(row, name=f"{row.name} again") for row in rows]]


@pytest.mark.parametrize("settings", [
    dict(looks=1),
    dict(looks=2),
    dict(looks=3, futility=True),
    dict(looks=4, whole_weeks=False),
    dict(looks=5, spending="pocock"),
    dict(looks=6),
    dict(looks=3, runtime_days=28.0),
    dict(looks=4, correction="bonferroni"),
    "reach",
], ids=["fixed design", "2 looks", "futility", "4 looks by day", "5 Pocock looks",
        "6 looks", "fixed runtime", "bonferroni", "reach curve"])
def test_each_rows_power_at_the_duration_is_the_row_asked_alone(settings):
    base = _reach().settings if settings == "reach" else load(sample_path()).settings
    chosen = dict(looks=3) if settings == "reach" else settings
    plan = Plan(dataclasses.replace(base, **chosen), _varied())
    result = compute(plan)
    at = _at(plan, result)
    expected = [_alone(plan, result, index, at) for index in range(len(plan.metrics))]
    assert any(math.isnan(value) for value in expected)  # a row not computed
    assert len({value for value in expected if not math.isnan(value)}) > 5
    np.testing.assert_array_equal(np.array(result.duration_powers), np.array(expected))
    some = list(range(len(plan.metrics)))[::3]  # a part of the rows, as an edit asks
    np.testing.assert_array_equal(
        np.array(powers_at(plan, result.rows, some, at, {})),
        np.array([expected[index] for index in some]))



def test_derived_sds_are_kept_by_row_stamp_through_a_looks_change(monkeypatch):
    """The ratio and quantile rows' sds are kept by row stamp (they outlive a change of the
    settings); a row edited in place gets a new stamp, so its sd alone is worked out again,
    and the powers stay those of an evaluation with nothing kept."""
    from fourfold.plan import rows as rows_module
    from fourfold.plan.row_cache import RowCache

    plan = Plan(load(sample_path()).settings, _varied())
    cache = RowCache()
    for looks in (2, 3):
        shown = dataclasses.replace(plan, settings=dataclasses.replace(plan.settings,
                                                                       looks=looks))
        compute(shown, cache=cache)
    ratio = next(index for index, metric in enumerate(plan.metrics) if metric.kind == "ratio")
    plan.metrics[ratio].numerator_sd *= 1.5
    shown = dataclasses.replace(plan, settings=dataclasses.replace(plan.settings, looks=4))
    found = compute(shown, cache=cache)
    np.testing.assert_array_equal(np.array(found.duration_powers),
                                  np.array(compute(shown).duration_powers))

    asked = []
    made = kinds.unit_sds
    monkeypatch.setattr(rows_module.kinds, "unit_sds",
                        lambda metrics: asked.append([m.name for m in metrics]) or made(metrics))
    plan.metrics[ratio].numerator_sd *= 1.5
    at = _at(shown, found)
    everything = list(range(len(plan.metrics)))
    powers = powers_at(shown, found.rows, everything, at, {})
    derived = [names for names in asked if plan.metrics[ratio].name in names
               or any("p95" in name for name in names)]
    assert derived == [[plan.metrics[ratio].name]]
    monkeypatch.setattr(rows_module.kinds, "unit_sds", made)
    kinds._kept.clear()
    np.testing.assert_array_equal(np.array(powers),
                                  np.array(powers_at(shown, found.rows, everything, at, {})))


def test_powers_met_before_come_from_the_documents_pool(monkeypatch):
    """Caches sharing a pool (a document's scenarios) take a row's power at a duration from it
    for the same settings, row key and duration: back to a number of looks met before, no
    power is asked of the engine or a design, and the powers are those of an evaluation
    without a cache; a duration not met before asks again."""
    from fourfold.plan import evaluation
    from fourfold.plan.comparison import Caches

    sample = load(sample_path())
    plan = Plan(sample.settings, _varied())

    def at(looks: int, metrics=None) -> Plan:
        return Plan(dataclasses.replace(plan.settings, looks=looks), metrics or plan.metrics)

    fresh = compute(at(3))
    binding = fresh.binding_index
    longer = list(plan.metrics)
    longer[binding] = dataclasses.replace(longer[binding], effect=longer[binding].effect * 0.9)
    fresh_longer = compute(at(3, longer))
    assert fresh_longer.duration_days > fresh.duration_days
    caches = Caches()
    for looks in (3, 4):
        compute(at(looks), cache=caches.get(None))
    asked = []
    made = evaluation.powers_at
    monkeypatch.setattr(evaluation, "powers_at",
                        lambda *args, **kwargs: asked.append(args[2]) or made(*args, **kwargs))
    found = compute(at(3), cache=caches.get("other scenario"))
    assert asked == []
    np.testing.assert_array_equal(np.array(found.duration_powers),
                                  np.array(fresh.duration_powers))
    found = compute(at(3, longer), cache=caches.get(None))
    assert asked == [list(range(len(longer)))]
    np.testing.assert_array_equal(np.array(found.duration_powers),
                                  np.array(fresh_longer.duration_powers))
