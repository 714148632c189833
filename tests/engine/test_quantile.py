"""The quantile kind: the sample quantile's variance against simulation, the densities.

Outside sources: the asymptotic variance p(1 − p)/(n·f(q_p)²) of a sample quantile (Serfling
1980, §2.3.3) is checked against the spread of sample quantiles over simulated samples
(numpy 2.x generators, numpy's default "linear" quantile) for normal, log-normal and
exponential data at p = 0.5, 0.95 and 0.99, with the true densities and quantiles from
scipy.stats (scipy 1.17). The kernel estimate (Silverman 1986, eq. 3.31, from memory:
h = 0.9·min(s, IQR/1.34)·n^(−1/5)) and the log-normal fit are checked against scipy.stats too.
"""

import numpy as np
import pytest
from scipy import stats

from fourfold import engine
from fourfold.engine import quantile

DISTRIBUTIONS = {
    "normal": stats.norm(loc=1.84, scale=0.61),
    "log-normal": stats.lognorm(s=0.6, scale=1.5),
    "exponential": stats.expon(scale=2.0),
}
LEVELS = (0.5, 0.95, 0.99)


def _closed_form_sd(dist, p):
    return float(quantile.unit_sd(p, dist.pdf(dist.ppf(p))))


@pytest.mark.parametrize("name", DISTRIBUTIONS)
def test_variance_of_sample_quantiles_in_plain_samples(name):
    # 1,500 samples of 8,000 values each (80 values beyond the p99): n·var(q̂_p) estimates
    # the closed form with a standard error of √(2/1500) = 3.7 %, plus the O(1/n) bias of
    # the asymptotic result, largest at the p99 of the skewed distributions.
    dist = DISTRIBUTIONS[name]
    rng = np.random.default_rng(1980)
    n, reps = 8_000, 1_500
    samples = dist.rvs(size=(reps, n), random_state=rng)
    estimates = np.quantile(samples, LEVELS, axis=1)
    for p, q_hat in zip(LEVELS, estimates, strict=True):
        simulated = np.sqrt(n) * q_hat.std(ddof=1)
        assert simulated == pytest.approx(_closed_form_sd(dist, p), rel=0.08), (name, p)


@pytest.mark.parametrize("name", DISTRIBUTIONS)
@pytest.mark.parametrize("p", LEVELS)
def test_variance_of_sample_quantiles_at_a_large_n(name, p):
    # The k-th of n ordered values is F⁻¹ of the k-th of n ordered uniforms, which is
    # Beta(k, n + 1 − k) (Serfling 1980, §2.3): exact draws of sample quantiles of a million
    # values. 40,000 of them pin the sd to 0.5 %.
    dist = DISTRIBUTIONS[name]
    n, reps = 1_000_000, 40_000
    k = int(np.ceil(n * p))
    u = stats.beta(k, n + 1 - k).rvs(size=reps, random_state=np.random.default_rng(5))
    simulated = np.sqrt(n) * dist.ppf(u).std(ddof=1)
    assert simulated == pytest.approx(_closed_form_sd(dist, p), rel=0.02)


@pytest.mark.parametrize("name", DISTRIBUTIONS)
@pytest.mark.parametrize("p", LEVELS)
def test_kernel_density_at_the_quantile(name, p):
    dist = DISTRIBUTIONS[name]
    n = 2_000_000
    x = dist.rvs(size=n, random_state=np.random.default_rng(31))
    at = np.quantile(x, p)
    estimate = float(quantile.kernel_density(x, at))
    # A kernel estimate's relative sd is √(R(K)/(n·h·f)) with R(K) = 1/(2√π) for the Gaussian
    # kernel (Silverman 1986, §3.3): about 2 % at these p99s, where few values fall within a
    # bandwidth. Allowed: 4 sds plus 1 % for the smoothing bias.
    low, high = np.percentile(x, [25, 75])
    h = float(quantile.silverman_bandwidth(n, x.std(ddof=1), high - low))
    relative_sd = np.sqrt(1 / (2 * np.sqrt(np.pi)) / (n * h * dist.pdf(at)))
    assert estimate == pytest.approx(dist.pdf(at), rel=4 * relative_sd + 0.01), (name, p)


def test_silverman_bandwidth_on_a_standard_normal_sample():
    # For normal data the rule gives about 0.9·n^(−1/5) (sd = 1, IQR/1.34 ≈ 1.007).
    x = np.random.default_rng(3).standard_normal(100_000)
    low, high = np.percentile(x, [25, 75])
    h = float(quantile.silverman_bandwidth(x.size, x.std(ddof=1), high - low))
    assert h == pytest.approx(0.9 * 100_000 ** -0.2, rel=0.02)
    assert float(quantile.silverman_bandwidth(50, 2.0, 0.0)) == pytest.approx(
        0.9 * 2.0 * 50 ** -0.2)


@pytest.mark.parametrize("p,second", [(0.95, 0.5), (0.99, 0.5), (0.5, 0.95), (0.9, 0.99)])
def test_lognormal_density_against_scipy(p, second):
    dist = stats.lognorm(s=0.45, scale=1.2)
    got = float(quantile.lognormal_density(p, dist.ppf(p), second, dist.ppf(second)))
    assert got == pytest.approx(dist.pdf(dist.ppf(p)), rel=1e-9)
    mu, sigma = quantile.lognormal_through_density(p, dist.ppf(p), got)
    assert (float(mu), float(sigma)) == pytest.approx((np.log(1.2), 0.45), rel=1e-9)


def test_lognormal_fit_reasons():
    density, reasons = quantile.lognormal_density_and_reasons(
        [0.95, 0.95, 0.95, 0.95, 1.2], [3.0, 3.0, -1.0, 3.0, 3.0], [0.5, 0.95, 0.5, 0.5, 0.5],
        [1.7, 1.7, 1.7, 4.0, 1.7])
    assert np.isfinite(density[0]) and np.isnan(density[1:]).all()
    assert reasons.tolist() == [
        "", "second level must differ from the quantile's level",
        "the quantile must be greater than 0 for a log-normal",
        "the higher level must have the higher value (the two percentiles do not fit a "
        "log-normal)",
        "level must be between 0 and 1 (exclusive), e.g. 0.95 for the p95"]
    with pytest.raises(ValueError, match="density at the quantile must be greater than 0"):
        quantile.unit_sd(0.95, 0.0)
    with pytest.raises(ValueError, match="at least 2 finite numbers"):
        quantile.kernel_density([1.0, 1.0, 1.0], 1.0)


def test_the_quantile_kind_is_a_z_test_with_the_quantiles_sd():
    # A shift of the distribution keeps f at the shifted quantile: both arms have the same
    # variance, so the kind solves like a mean's z test with sd √(p(1 − p))/f.
    sd = float(quantile.unit_sd(0.95, 0.09))
    kw = dict(sd=sd, alternative="less", margin=0.05)
    assert engine.detectable_effect("quantile", 3.1, 40_000.0, **kw) == pytest.approx(
        engine.detectable_effect("mean", 3.1, 40_000.0, **kw), rel=1e-12)
    with pytest.raises(ValueError, match="sd is required for a quantile"):
        engine.power("quantile", 3.1, 0.1, 1000.0)
