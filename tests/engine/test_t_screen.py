"""The exact t's screen: a cheaper power that lets the solver accept the family starts.

The screen (fewer quadrature nodes, an interpolated t quantile) is checked against the
project's exact layers, which tests/engine/test_tdist.py checks against mpmath 1.3, and the
quantile against scipy 1.17.1's ``stdtrit``. The solver's results must be the same bit for
bit with and without the screen.
"""

import numpy as np
import pytest
from scipy import special

from fourfold import engine
from fourfold.engine import _power, _t_family, roots, tdist


def _grid(size, seed):
    rng = np.random.default_rng(seed)
    df = np.exp(rng.uniform(np.log(tdist.QUADRATURE_DF), np.log(tdist.NORMAL_LIMIT_DF), size))
    nc = np.where(rng.random(size) < 0.5, rng.uniform(-8.0, 8.0, size),
                  rng.uniform(-40.0, 40.0, size))
    return df, nc, rng.uniform(-4.0, 4.0, size)


@pytest.mark.parametrize("both", [False, True])
def test_the_screened_tails_are_within_a_fifth_of_the_screen_bound(both):
    df, nc, t = _grid(40_000, 1 + both)
    exact = (tdist.nct_sf_both if both else tdist.nct_sf)(df, nc, t)
    screened = tdist.screen_sf(df, nc, t, both)
    assert np.isfinite(screened).all()
    assert np.max(np.abs(screened - exact)) < tdist.SCREEN_ERROR / 5


def test_the_screen_has_no_value_outside_the_quadrature_layer():
    values = tdist.screen_sf(np.array([20.0, 2.0e4, 200.0, 200.0]),
                             np.array([2.8, 2.8, 2.8, 60.0]), np.array([2.0, 2.0, 4.5, 2.0]),
                             True)
    assert np.isnan(values).all()


@pytest.mark.parametrize("p", [1e-4, 5e-4, 0.005, 0.025, 0.05, 0.1, 0.3, 0.5])
def test_the_screened_quantile_matches_stdtrit(p):
    # reference: scipy 1.17.1 special.stdtrit, at every ν (the screen interpolates in 1/ν)
    df = np.geomspace(tdist.QUADRATURE_DF, tdist.NORMAL_LIMIT_DF * (1 - 1e-12), 4_000)
    screened = tdist.screen_quantile(df, np.full(df.size, p))
    np.testing.assert_allclose(screened, -special.stdtrit(df, p), rtol=0, atol=1e-14)


def test_the_screened_quantile_has_no_value_where_it_is_not_checked():
    df = np.array([30.0, 2.0e4, 200.0, 200.0, 200.0])
    assert np.isnan(tdist.screen_quantile(df, np.array([0.025, 0.025, 5e-5, 0.6, np.nan]))).all()


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_the_screened_power_is_within_a_fifth_of_the_screen_bound(alternative):
    rng = np.random.default_rng(3)
    n = np.exp(rng.uniform(np.log(40.0), np.log(3_000.0), 20_000))  # 58 ≤ ν < 10⁴
    ratio = rng.choice([0.5, 1.0, 2.0], n.size)
    alpha = rng.choice([0.0002, 0.01, 0.05, 0.1], n.size)
    distance = rng.uniform(-0.5, 0.5, n.size)  # |δ| ≤ 26
    s0 = np.sqrt(1.0 + 1.0 / ratio)
    df = _power.degrees_of_freedom(n, ratio)
    u = _power.critical(alpha, alternative, True, df)
    exact = _power.power_of(distance, s0, s0, 0.0, n, u, alternative, True, ratio)
    screened = _power.screen_power(distance, s0, n, alpha, alternative, ratio)
    assert np.isfinite(screened).all()
    assert np.max(np.abs(screened - exact)) < tdist.SCREEN_ERROR / 5


def test_a_start_is_accepted_on_the_screen_only_inside_the_tolerance_by_its_bound():
    # Two starts whose exact f is just outside the tolerance and two just inside; the
    # screen is off by up to its bound toward the other side. Only the starts the screen
    # puts inside by more than its bound are accepted without the exact f.
    ftol, bound = 1e-10, tdist.SCREEN_ERROR
    offset = np.array([0.9, -0.9, 0.5, -0.5])
    exact_f0 = np.array([ftol + 0.5 * bound, -ftol - 0.5 * bound, 0.2 * ftol, -0.2 * ftol])
    calls = []

    def func(y, j):
        calls.append(j.copy())
        return y + exact_f0[j]

    def screen(y, j):
        return exact_f0[j] - np.sign(exact_f0[j]) * offset[j] * bound

    f = _t_family.screened(func, screen, np.ones(4, dtype=bool), ftol)
    y, status = roots.find_root(f, np.zeros(4), 0.5, np.full(4, -5.0), np.full(4, 5.0),
                                ftol=ftol)
    assert calls[0].tolist() == [0, 1]
    assert (status == roots.OK).all()
    assert y[2] == 0.0 and y[3] == 0.0
    np.testing.assert_allclose(y[:2], -exact_f0[:2], rtol=1e-6)


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_the_sample_sizes_are_the_same_bit_for_bit_without_the_screen(alternative,
                                                                       monkeypatch):
    rng = np.random.default_rng(20261205)
    size = 6_000
    sign = -1.0 if alternative == "less" else 1.0
    rows = dict(baseline=np.zeros(size), sd=np.ones(size),
                effect=sign * rng.uniform(0.03, 0.9, size),
                alpha=rng.choice([0.0002, 0.01, 0.05], size), power=rng.choice([0.8, 0.9], size),
                ratio=rng.choice([0.5, 1.0, 2.0], size))
    now = engine.sample_size("mean", method="t", alternative=alternative, **rows)
    monkeypatch.setattr(tdist, "SCREEN_ERROR", 1.0)  # nothing is sure: the exact f throughout
    before = engine.sample_size("mean", method="t", alternative=alternative, **rows)
    assert np.array_equal(now, before, equal_nan=True)
