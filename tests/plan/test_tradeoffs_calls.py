"""The trade-off curves of a row cost two engine calls, whatever the grid: one for the units of
the effect, power and α figures, one for the runtime figure's detectable effects.

A count of calls (monkeypatched), not a timing; the curve values themselves are checked against
direct engine calls in test_tradeoffs.py.
"""

import dataclasses

import pytest

from fourfold import engine
from fourfold.plan import load, sample_path
from fourfold.plan.evaluation import compute
from fourfold.plan.tradeoffs import tradeoffs


@pytest.mark.parametrize("points", [20, 200])
def test_two_engine_calls_per_row(monkeypatch, points):
    plan = load(sample_path())
    plan = dataclasses.replace(plan, settings=dataclasses.replace(plan.settings, looks=1))
    result = compute(plan)
    calls = []
    for name in ("sample_size", "detectable_effect", "power", "significance_level"):
        real = getattr(engine, name)
        monkeypatch.setattr(engine, name, lambda *a, _real=real, _name=name, **k:
                            calls.append(_name) or _real(*a, **k))
    data = tradeoffs(plan, 1, result, points=points)
    assert not data.reason
    assert sorted(calls) == ["detectable_effect", "sample_size"]
    assert data.effect.curve.y.size == points
    assert data.effect.point[1] == result.rows[1].units_control
