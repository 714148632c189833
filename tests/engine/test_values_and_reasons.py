"""values_and_reasons: the solver's values and problems()' reasons from one solve.

The reference is the engine's own public solvers and problems() (consistency checks; no
outside source is involved).
"""

import numpy as np
import pytest

from fourfold import engine

CASES = [
    ("sample_size", dict(kind="proportion", baseline=[0.1, 1.5, 0.3, 0.02],
                         effect=[0.02, 0.01, -0.3, 1e-12])),
    ("power", dict(kind="mean", baseline=[1.0, 2.0, 3.0], effect=[0.1, 0.2, 0.3],
                   n=[100.0, -1.0, 1.5], sd=[1.0, 1.0, 0.0], method="t")),
    ("detectable_effect", dict(kind="rate", baseline=[0.5, 2.0, -1.0], n=[1e3, 1e5, 1e3],
                               relative=[True, False, False])),
    ("significance_level", dict(kind="mean", baseline=[1.0, 1.0], effect=[0.5, 0.5],
                                n=[64.0, 1e7], sd=1.0)),
]


def _solver_kwargs(solve, kwargs):
    kind, baseline = kwargs["kind"], kwargs["baseline"]
    rest = {k: v for k, v in kwargs.items() if k not in ("kind", "baseline", "effect", "n")}
    positional = {
        "sample_size": ("effect",), "power": ("effect", "n"),
        "detectable_effect": ("n",), "significance_level": ("effect", "n"),
    }[solve]
    return (kind, baseline, *(kwargs[name] for name in positional)), rest


@pytest.mark.parametrize(("solve", "kwargs"), CASES)
def test_values_and_reasons_equal_the_solver_and_problems(solve, kwargs):
    values, reasons = engine.values_and_reasons(solve, **kwargs)
    args, rest = _solver_kwargs(solve, kwargs)
    expected = getattr(engine, solve)(*args, **rest)
    np.testing.assert_array_equal(values, expected)
    kind, baseline = kwargs["kind"], kwargs["baseline"]
    others = {k: v for k, v in kwargs.items() if k not in ("kind", "baseline")}
    assert reasons.tolist() == engine.problems(solve, kind, baseline, **others).tolist()
    assert any(reasons) and not all(reasons)


def test_scalar_impossible_input_gives_a_reason_not_an_error():
    values, reasons = engine.values_and_reasons("sample_size", "proportion", 1.5, effect=0.1)
    assert values.shape == () and np.isnan(values)
    assert reasons.item() == "baseline must be between 0 and 1 (exclusive) for a proportion"


def test_a_name_not_allowed_is_every_elements_reason():
    values, reasons = engine.values_and_reasons("power", "mean", [1.0, 2.0], effect=0.1,
                                                n=100.0, sd=1.0, method="w")
    assert np.isnan(values).all()
    assert set(reasons.tolist()) == {"method must be one of 'z', 't' for a mean, not 'w'"}
    with pytest.raises(ValueError, match="solve must be one of"):
        engine.values_and_reasons("duration", "mean", 1.0, effect=0.1, sd=1.0)
