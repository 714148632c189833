"""The designs remembered for every evaluation, scenario and curve never give a stale answer.

The reference is the same computation with every cache of designs emptied first (a
consistency check, no outside source): after a change of interim looks, then of α, the
evaluation and the trade-off curves equal a fresh computation value for value.
"""

import dataclasses

import numpy as np
import pytest

from fourfold.engine import sequential as engine_sequential
from fourfold.plan import load, sample_path, sequential, tradeoffs
from fourfold.plan.evaluation import RowCache, compute


def _forget():
    for cached in (engine_sequential._boundaries, sequential.shared_design,
                   sequential.shared_boundaries, sequential._power_of, tradeoffs._inflation,
                   tradeoffs._node_inflations):
        cached.cache_clear()


def _fresh(plan, index):
    _forget()
    result = compute(plan)
    return result, tradeoffs.tradeoffs(plan, index, result)


def _same_curves(a, b):
    for x, y in zip(a.figures, b.figures, strict=True):
        for name in ("curve", "neighbour", "marks"):
            np.testing.assert_array_equal(getattr(x, name).x, getattr(y, name).x)
            np.testing.assert_array_equal(getattr(x, name).y, getattr(y, name).y)
        assert x.point == y.point


def test_a_looks_change_then_an_alpha_change_equal_fresh_computations():
    plan = load(sample_path())
    cache = RowCache()
    compute(plan, cache=cache)
    for settings in ({"looks": 3}, {"looks": 4}, {"alpha": 0.04}, {"looks": 3},
                     {"futility": True}, {"spending": "pocock"}, {"alpha": 0.05}):
        plan.settings = dataclasses.replace(plan.settings, **settings)
        kept = compute(plan, cache=cache)
        curves = tradeoffs.tradeoffs(plan, 0, kept)
        fresh, fresh_curves = _fresh(plan, 0)
        assert kept.rows == fresh.rows, settings
        assert kept.notes == fresh.notes
        assert kept.duration_powers == fresh.duration_powers
        _same_curves(curves, fresh_curves)


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_a_shared_design_is_the_design_of_its_values(alternative):
    made = sequential.row_design(dataclasses.replace(load(sample_path()).settings, looks=4),
                                 0.03, 0.85, alternative, days=35.0)
    fresh = engine_sequential.design(4, alpha=0.03, power=0.85, alternative=alternative,
                                     timing=made.fractions.tolist())
    for name in ("upper", "nominal_p", "alpha_spent", "stop_h0", "stop_h1", "efficacy_h1"):
        np.testing.assert_array_equal(getattr(made, name), getattr(fresh, name))
    assert made.inflation == fresh.inflation and made.drift == fresh.drift
    assert sequential.power_of(made, 0.7) == sequential.power_of(fresh, 0.7)


@pytest.mark.parametrize("looks", range(1, 21))
def test_equal_shares_are_the_fractions_of_equally_spaced_looks(looks):
    # the key that lets week ends at equal shares share the equally spaced design must be
    # the design's own fractions to the last bit (consistency check, no outside source)
    assert sequential._equal_shares(looks) == tuple(engine_sequential.design(looks).fractions)


def test_week_ends_at_equal_shares_share_the_equally_spaced_design():
    settings = dataclasses.replace(load(sample_path()).settings, looks=4, whole_weeks=True)
    designs = {}
    at_week_ends = sequential.row_design(settings, 0.05, 0.8, "two-sided", designs, 28.0)
    equally_spaced = sequential.row_design(settings, 0.05, 0.8, "two-sided", designs)
    assert at_week_ends is equally_spaced
    later = sequential.row_design(settings, 0.05, 0.8, "two-sided", designs, 35.0)
    assert later is not equally_spaced and tuple(later.fractions) == (0.4, 0.6, 0.8, 1.0)
