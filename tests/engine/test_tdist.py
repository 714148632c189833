"""Noncentral t tails and the exact-t solvers at A/B-test scale (df up to millions).

Reference: mpmath 1.3 (30-digit quadrature of P(T > t) = E[Φ(δ − t·√(V/ν))], V ~ χ²(ν)),
and statsmodels 0.15.0 / scipy 1.17.1 where they are finite.  scipy's ``nctdtr`` (and so
``scipy.stats.nct`` and statsmodels' t power) returns nan for some of these inputs.
"""

import mpmath as mp
import numpy as np
import pytest

from fourfold import engine
from fourfold.engine import _t_family, tdist

MPMATH_VERSION = mp.__version__


def _nct_sf_mpmath(df, nc, t):
    with mp.workdps(30):
        df, nc, t = mp.mpf(df), mp.mpf(nc), mp.mpf(t)
        log_norm = -(df / 2) * mp.log(2) - mp.loggamma(df / 2)

        def integrand(v):
            if v <= 0:
                return mp.mpf(0)
            density = mp.exp(log_norm + (df / 2 - 1) * mp.log(v) - v / 2)
            return density * mp.ncdf(nc - t * mp.sqrt(v / df))

        # break points: the bulk of χ²(ν) and the step of Φ(δ − t·√(v/ν)) in v
        spread = mp.sqrt(2 * df)
        bulk = [df + spread * w for w in (-40, -20, -10, -5, 0, 5, 10, 20, 40)]
        step = [df * ((nc - k) / t) ** 2 for k in range(-12, 13) if t != 0 and (nc - k) / t > 0]
        points = sorted({mp.mpf(0), *(v for v in bulk + step if v > 0)}) + [mp.inf]
        return float(mp.quad(integrand, points))


@pytest.mark.parametrize("df,nc,t", [
    (2.0e6, -6.4, 2.86),    # mirror of a far tail where nctdtr gives nan (df 2e6)
    (3.0e6, 2.8, 1.96),     # main tail, α = 0.05 two-sided, power ≈ 0.8, n ≈ 1.5e6
    (3.0e6, -2.8, 1.96),    # its far tail (≈ 1e-6)
    (9_999.0, 2.8, 1.96),   # just below the switch to the normal limit (df 1e4)
    (10_001.0, -2.8, 1.96),  # just above it, far tail
    (10_001.0, 8.0, 5.5),   # above it, large noncentrality and strict α
    (10_001.0, -8.0, -5.5),
    (100_000.0, 2.8, 1.96),
    (1198.0, -6.53, 5.4),   # df 1198, tiny tail of a strict α
    (30.0, 2.0, 1.7),
    (30.0, 2000.0, 1900.0),  # huge noncentrality: nctdtr is slow or nan from about 1e6
    (3.0, 5000.0, 3000.0),
    (100.0, -1500.0, -1400.0),
    (2.0, 1e8, 1e8),        # nctdtr does not return here
])
def test_nct_tail_matches_high_precision_quadrature(df, nc, t):
    ref = _nct_sf_mpmath(df, nc, t)
    got = float(tdist.nct_sf(df, nc, t))
    assert got == pytest.approx(ref, rel=1e-9, abs=1e-13)


def test_nct_tail_is_finite_everywhere_scipy_is_not():
    rng = np.random.default_rng(20261201)
    df = 10 ** rng.uniform(0.3, 7.0, 20_000)
    nc = rng.uniform(-40.0, 40.0, df.size)
    t = rng.uniform(-10.0, 10.0, df.size)
    for sign in (1.0, -1.0):
        got = tdist.nct_sf(df, sign * nc, t)
        assert np.all(np.isfinite(got))
        assert np.all((got >= 0.0) & (got <= 1.0))


def test_t_quantile_series_matches_stdtrit():
    # Cornish–Fisher (Abramowitz & Stegun 1964, 26.7.5) against scipy 1.17.1 stdtrit.
    from scipy import special

    p = np.geomspace(1e-12, 0.5, 60)
    for df in (1e4, 3e5, 3e6):
        np.testing.assert_allclose(tdist.t_upper_quantile(df, p), -special.stdtrit(df, p),
                                   rtol=1e-13)


def test_nct_tail_is_continuous_across_the_normal_limit():
    df = tdist.NORMAL_LIMIT_DF
    nc = np.linspace(-5.0, 5.0, 41)
    below = tdist.nct_sf(df * (1 - 1e-9), nc, 1.96)
    above = tdist.nct_sf(df * (1 + 1e-9), nc, 1.96)
    np.testing.assert_allclose(below, above, atol=1e-12)


@pytest.mark.parametrize("alternative", ["two-sided", "greater"])
def test_exact_t_at_millions_is_finite_and_close_to_z(alternative):
    # n up to 3e6 per arm.  The t needs a little more than z: about u²/(2(1 + r)) units
    # (Guenther 1981, from memory), which is tiny next to n.
    sd = 14.8
    effect = sd * np.array([0.002, 0.004, 0.01, 0.05])
    ratio = np.array([1.0, 2.0, 1.0, 0.5])
    n_t = engine.sample_size("mean", 2.35, effect, sd=sd, method="t", ratio=ratio,
                             alternative=alternative)
    n_z = engine.sample_size("mean", 2.35, effect, sd=sd, method="z", ratio=ratio,
                             alternative=alternative)
    assert np.all(np.isfinite(n_t))
    assert n_t[0] > 3.0e6
    assert np.all(n_t > n_z)
    u = 1.959964 if alternative == "two-sided" else 1.644854
    np.testing.assert_allclose(n_t - n_z, u * u / (2 * (1 + ratio)), rtol=0.05, atol=0.02)
    back = engine.power("mean", 2.35, effect, n_t, sd=sd, method="t", ratio=ratio,
                        alternative=alternative)
    np.testing.assert_allclose(back, 0.8, atol=1e-9)


def test_exact_t_power_where_statsmodels_returns_nan():
    # statsmodels 0.15 TTestIndPower.power gives nan here (n = 400 and 800, α = 1.85e-7):
    # the far tail hits the nctdtr nan.  The engine's value agrees with the mpmath tails.
    n, ratio, d, alpha = 400.0, 2.0, 0.4, 1.8544e-7
    df = n * (1 + ratio) - 2
    nc = d * np.sqrt(n * ratio / (1 + ratio))
    from scipy import special

    u = -special.stdtrit(df, alpha / 2)
    ref = _nct_sf_mpmath(df, nc, u) + _nct_sf_mpmath(df, -nc, u)
    got = engine.power("mean", 0.0, d, n, sd=1.0, alpha=alpha, ratio=ratio, method="t")
    assert got == pytest.approx(ref, rel=1e-9)


def test_exact_t_small_samples():
    # Tiny n: df = 2·n − 2 down to 1.  Below df = 1 the t power is not monotone in n
    # (the critical value runs off to infinity), so the engine stops there with a reason.
    d = np.array([2.0, 4.0, 8.0, 100.0])
    n = engine.sample_size("mean", 0.0, d, sd=1.0, method="t")
    assert np.all(np.isfinite(n[:3])) and np.all(n[:3] >= 1.5)
    back = engine.power("mean", 0.0, d[:3], n[:3], sd=1.0, method="t")
    np.testing.assert_allclose(back, 0.8, atol=1e-9)
    assert np.isnan(n[3])
    reasons = engine.problems("sample_size", "mean", 0.0, effect=d, sd=1.0, method="t")
    assert reasons[3] == (
        "the effect is so large that the t method would need fewer than 3 units in all"
    )
    assert list(reasons[:3]) == ["", "", ""]


@pytest.mark.parametrize("df", [50.0, 75.0, 100.0, 180.0, 300.0, 1_000.0, 9_990.0])
def test_quadrature_layer_matches_high_precision_quadrature(df):
    # Layer 3 (Wilson–Hilferty Gauss–Hermite) against mpmath 1.3's 30-digit quadrature:
    # absolute error below 2e-15 over the noncentralities and points of A/B tests.
    for nc in (-2.8, 0.5, 6.0, 12.0):
        for t in (-1.96, 1.96, 8.0):
            ref = _nct_sf_mpmath(df, nc, t)
            assert abs(float(tdist.nct_sf(df, nc, t)) - ref) < 2e-15, (df, nc, t)


def test_both_tails_are_the_sum_of_the_single_tails():
    rng = np.random.default_rng(5)
    df = 10 ** rng.uniform(0.5, 6.5, 3_000)
    nc = rng.uniform(-12.0, 12.0, df.size)
    t = rng.uniform(-3.0, 6.0, df.size)
    np.testing.assert_allclose(tdist.nct_sf_both(df, nc, t),
                               tdist.nct_sf(df, nc, t) + tdist.nct_sf(df, -nc, t),
                               rtol=1e-15, atol=1e-16)


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_exact_t_sample_size_agrees_with_the_former_solver(alternative, monkeypatch):
    # The former solver (nctdtr for every tail, each row searched from the normal limit) is
    # the reference: the solver now evaluates the tails by quadrature and starts a family of
    # rows (same α, power, ratio) from a few of them solved exactly. Units agree to 1e-9
    # (both stop within 1e-10 of the power), whole units are the same, and the power at the
    # units found is the target.
    rng = np.random.default_rng(20261204)
    size = 3_000
    sign = -1.0 if alternative == "less" else 1.0
    rows = dict(baseline=np.zeros(size), sd=np.ones(size),
                effect=sign * 10 ** rng.uniform(np.log10(0.02), np.log10(1.5), size),
                alpha=rng.choice([0.01, 0.05], size), power=rng.choice([0.8, 0.9], size),
                ratio=rng.choice([1.0, 2.0], size))
    now = engine.sample_size("mean", method="t", alternative=alternative, **rows)
    with monkeypatch.context() as patched:
        patched.setattr(tdist, "QUADRATURE_DF", np.inf)
        patched.setattr(_t_family, "FAMILY_ROWS", size + 1)
        before = engine.sample_size("mean", method="t", alternative=alternative, **rows)
    finite = np.isfinite(before)
    assert np.array_equal(finite, np.isfinite(now))
    np.testing.assert_allclose(now[finite], before[finite], rtol=1e-9)
    assert np.mean(np.ceil(now[finite]) == np.ceil(before[finite])) > 0.999
    back = engine.power("mean", 0.0, rows["effect"][finite], now[finite], sd=1.0,
                        alpha=rows["alpha"][finite], ratio=rows["ratio"][finite],
                        alternative=alternative, method="t")
    np.testing.assert_allclose(back, rows["power"][finite], atol=1e-9)


def test_a_family_of_rows_starts_at_its_root(monkeypatch):
    # 10,000 rows of one family: a few are solved first, and every other row is found at
    # its first evaluation: one screened evaluation over the whole family, and the exact
    # power only for the rows the screen does not reach (ν < 50 or ν ≥ 10⁴).
    from fourfold.engine import _power

    exact, screened = [], []
    real, real_screen = tdist.nct_sf_both, tdist.screen_sf
    monkeypatch.setattr(tdist, "nct_sf_both", lambda df, *rest: exact.append(np.asarray(df))
                        or real(df, *rest))
    monkeypatch.setattr(tdist, "screen_sf", lambda df, *rest: screened.append(np.size(df))
                        or real_screen(df, *rest))
    effect = np.random.default_rng(8).uniform(0.05, 0.8, 10_000)
    engine.sample_size("mean", 0.0, effect, sd=1.0, method="t")
    assert _power.tdist is tdist
    inside = [size for size in screened if size > _t_family.NODES]
    outside = [df for df in exact if df.size > _t_family.NODES]
    assert len(inside) == 1 and len(outside) <= 1
    assert inside[0] + sum(df.size for df in outside) == 10_000
    assert all(np.all((df < tdist.QUADRATURE_DF) | (df >= tdist.NORMAL_LIMIT_DF))
               for df in outside)
