"""Inflation factors for curves against the exact group sequential designs of the engine.

Reference: :func:`fourfold.engine.sequential.design` (whose inflation factors are checked
against Jennison & Turnbull 2000, ch. 2, in test_sequential.py); the curves' factors come
from a coarser grid and must stay within 5·10⁻⁴ of them (up to 20 looks).
"""

import numpy as np
import pytest

from fourfold.engine import sequential
from fourfold.engine.inflation import inflations


@pytest.mark.parametrize("looks, spending, futility", [
    (2, "ld-obrien-fleming", None), (4, "ld-obrien-fleming", None), (10, "ld-pocock", None),
    (5, "pocock", None), (4, "ld-obrien-fleming", "ld-obrien-fleming"), (20, "hsd", "hsd")])
@pytest.mark.parametrize("alternative", ["two-sided", "greater"])
def test_curve_factors_stay_near_the_designs(looks, spending, futility, alternative):
    alphas = np.array([0.001, 0.01, 0.05, 0.2, 0.05, 0.05, 0.05])
    powers = np.array([0.8, 0.8, 0.8, 0.8, 0.5, 0.9, 0.99])
    found = inflations(looks, alphas, powers, alternative=alternative, spending=spending,
                       futility=futility)
    exact = [sequential.design(looks, alpha=a, power=p, alternative=alternative,
                               spending=spending, futility=futility).inflation
             for a, p in zip(alphas, powers, strict=True)]
    np.testing.assert_allclose(found, exact, rtol=5e-4)


def test_impossible_pairs_give_nan_and_bad_arguments_raise():
    found = inflations(3, [0.05, 0.5, 1.2], [0.8, 0.2, 0.8])
    assert np.isfinite(found[0]) and np.isnan(found[1:]).all()
    with pytest.raises(ValueError, match="looks"):
        inflations(0, [0.05], [0.8])
    with pytest.raises(ValueError, match="spending"):
        inflations(3, [0.05], [0.8], spending="linear")
