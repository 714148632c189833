"""Upper percentiles in fixed memory, against numpy 2.4's ``numpy.percentile`` (default
"linear" interpolation, Hyndman & Fan 1996 definition 7)."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold.history.tail import TailSketch


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 3000), chunks=st.integers(1, 20),
       percentile=st.sampled_from([50.5, 90.0, 99.0, 99.5, 99.9, 99.99]))
def test_exact_while_the_tail_fits(seed, n, chunks, percentile):
    x = np.random.default_rng(seed).lognormal(0.0, 2.0, n)
    sketch = TailSketch(capacity=4096, reservoir=64)
    for part in np.array_split(x, chunks):
        sketch.add(part)
    got = sketch.estimate(percentile)
    assert got.exact
    assert got.value == pytest.approx(np.percentile(x, percentile), rel=1e-12)


def test_exact_on_a_long_column_with_a_small_tail_memory():
    x = np.random.default_rng(5).pareto(1.5, 200_000)
    sketch = TailSketch(capacity=300, reservoir=1000)
    for part in np.array_split(x, 50):
        sketch.add(part)
    got = sketch.estimate(99.9)  # needs the top 200 values + 2
    assert got.exact
    assert got.value == pytest.approx(np.percentile(x, 99.9), rel=1e-12)


def test_falls_back_to_the_reservoir_and_says_so():
    x = np.random.default_rng(9).normal(0.0, 1.0, 100_000)
    sketch = TailSketch(capacity=100, reservoir=20_000)
    for part in np.array_split(x, 10):
        sketch.add(part)
    got = sketch.estimate(90.0)  # the top 10 % is 10,000 values, more than the 100 kept
    assert not got.exact
    # A 20,000-value uniform sample puts the 90th percentile of N(0, 1) within about ±0.03 of
    # the exact quantile (scipy 1.17, scipy.stats.norm.ppf).
    from scipy.stats import norm

    assert got.value == pytest.approx(norm.ppf(0.9), abs=0.05)


def test_memory_is_bounded():
    sketch = TailSketch(capacity=50, reservoir=40)
    for _ in range(30):
        sketch.add(np.random.default_rng(_).random(10_000))
    assert sketch.seen == 300_000
    assert sketch._top.size == 50 and sketch._sample.size == 40


def test_rejects_impossible_arguments():
    with pytest.raises(ValueError, match="percentile"):
        TailSketch().estimate(100.0)
    with pytest.raises(ValueError, match="capacity"):
        TailSketch(capacity=1)
