"""Stable, mergeable moments checked against numpy's two-pass statistics.

Reference: numpy 2.4 (``numpy.var(ddof=1)`` is a two-pass computation, ``numpy.cov`` and
``numpy.corrcoef``). The cancellation of the one-pass formula Σx² − (Σx)²/n is the textbook
example of Chan, Golub & LeVeque (1983), *The American Statistician* 37:242–247, section 2.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold.history.moments import CoMoments, Moments


def _merged(values, sizes):
    out = Moments()
    start = 0
    for size in sizes:
        out = out.merge(Moments.of(values[start:start + size]))
        start += size
    return out.merge(Moments.of(values[start:]))


@settings(max_examples=40, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    n=st.integers(2, 400),
    loc=st.floats(-1e6, 1e6),
    scale=st.floats(1e-3, 1e3),
    cuts=st.lists(st.integers(0, 50), max_size=8),
)
def test_merged_chunks_match_numpy_two_pass(seed, n, loc, scale, cuts):
    x = np.random.default_rng(seed).normal(loc, scale, n)
    got = _merged(x, cuts)
    assert got.n == n
    assert got.mean == pytest.approx(np.mean(x), rel=1e-12, abs=1e-9 * scale)
    assert got.variance == pytest.approx(np.var(x, ddof=1), rel=1e-9)


def test_one_value_at_a_time_is_welford_and_matches_numpy():
    x = np.random.default_rng(7).exponential(3.0, 500)
    got = Moments()
    for value in x:
        got = got.merge(Moments.of([value]))
    assert got.variance == pytest.approx(np.var(x, ddof=1), rel=1e-12)
    assert got.sd == pytest.approx(np.std(x, ddof=1), rel=1e-12)


def test_huge_offset_breaks_the_naive_formula_but_not_the_merge():
    # mean 1e9, sd 1: float64 keeps about 16 digits, Σx² ≈ n·1e18 loses the variance.
    x = np.random.default_rng(11).normal(1e9, 1.0, 10_000)
    reference = np.var(x, ddof=1)  # numpy two-pass; close to 1 (the generating sd)
    assert reference == pytest.approx(1.0, rel=0.05)

    naive = (np.sum(x * x) - np.sum(x) ** 2 / x.size) / (x.size - 1)
    assert abs(naive - reference) > 0.5  # the one-pass formula is wrong by order 1 or more

    for chunk in (1, 7, 1000):
        got = Moments()
        for start in range(0, x.size, chunk):
            got = got.merge(Moments.of(x[start:start + chunk]))
        assert got.variance == pytest.approx(reference, rel=1e-6)


def test_empty_and_single_values():
    assert Moments.of([]).n == 0
    assert math.isnan(Moments.of([4.0]).variance)
    assert Moments().merge(Moments.of([2.0, 4.0])) == Moments.of([2.0, 4.0])
    assert Moments.of([2.0, 4.0]).merge(Moments()) == Moments.of([2.0, 4.0])


def test_from_summary_round_trips():
    x = np.random.default_rng(3).gamma(2.0, 5.0, 300)
    m = Moments.of(x)
    back = Moments.from_summary(m.n, m.mean, m.variance)
    assert back.m2 == pytest.approx(m.m2, rel=1e-12)


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(3, 300), cut=st.integers(0, 300),
       slope=st.floats(-5.0, 5.0))
def test_co_moments_match_numpy_cov_and_corrcoef(seed, n, cut, slope):
    rng = np.random.default_rng(seed)
    x = rng.normal(100.0, 3.0, n)
    y = slope * x + rng.normal(0.0, 2.0, n)
    cut = min(cut, n)
    got = CoMoments.of(x[:cut], y[:cut]).merge(CoMoments.of(x[cut:], y[cut:]))
    assert got.covariance == pytest.approx(np.cov(x, y)[0, 1], rel=1e-9, abs=1e-9)
    assert got.correlation == pytest.approx(np.corrcoef(x, y)[0, 1], rel=1e-9, abs=1e-12)
    assert got.x.variance == pytest.approx(np.var(x, ddof=1), rel=1e-9)


def test_co_moments_reject_unequal_lengths():
    with pytest.raises(ValueError, match="same length"):
        CoMoments.of([1.0, 2.0], [1.0])
