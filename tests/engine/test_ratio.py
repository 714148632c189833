"""The ratio kind: the delta-method variance against simulation and numpy, and its solvers.

Outside sources: the delta method for a ratio of means (Deng, Knoblich & Lu 2018, KDD) is
checked against (a) the exact moments of a model with a closed form, (b) the spread of R̂ over
many simulated experiments (numpy 2.x random generators) and (c) numpy's own sd of the
linearised unit values on generated per-unit data.
"""

import numpy as np
import pytest

from fourfold import engine
from fourfold.engine import ratio

# Sessions per user Y = 1 + Poisson(λ), clicks X | Y ~ Poisson(θ·Y): then R = θ,
# μ_Y = 1 + λ, var Y = λ, var X = θ·μ_Y + θ²·λ, cov(X, Y) = θ·λ and the linearised value
# X − R·Y has variance θ·μ_Y, so σ_R² = θ/μ_Y (laws of total variance and covariance).
THETA, LAM = 0.4, 2.0
MU_Y = 1.0 + LAM
SD_X = np.sqrt(THETA * MU_Y + THETA**2 * LAM)
SD_Y = np.sqrt(LAM)
CORR = THETA * LAM / (SD_X * SD_Y)


def _units(rng, size):
    y = 1.0 + rng.poisson(LAM, size)
    return rng.poisson(THETA * y).astype(float), y


def test_unit_sd_matches_the_closed_form_of_the_model():
    sd = ratio.unit_sd(THETA, MU_Y, SD_X, SD_Y, CORR)
    assert float(sd) == pytest.approx(np.sqrt(THETA / MU_Y), rel=1e-12)


def test_unit_sd_against_the_spread_of_simulated_experiments():
    # 4,000 experiments of 2,000 users: n·var(R̂) estimates σ_R² with a standard error of
    # about √(2/4000) = 2.2 %; the delta method's own error is O(1/n).
    rng = np.random.default_rng(20261214)
    n, reps = 2_000, 4_000
    x, y = _units(rng, (reps, n))
    estimates = x.sum(axis=1) / y.sum(axis=1)
    simulated = n * estimates.var(ddof=1)
    assert simulated == pytest.approx(THETA / MU_Y, rel=0.07)
    assert float(ratio.unit_sd(THETA, MU_Y, SD_X, SD_Y, CORR)) ** 2 == pytest.approx(
        simulated, rel=0.07)


@pytest.mark.parametrize("corr", [-0.6, 0.0, 0.9])
def test_unit_sd_from_numpy_moments_equals_the_sd_of_the_linearised_values(corr):
    # Bivariate normal numerator and denominator (numpy's multivariate_normal); the delta
    # method's sd from the sample's moments equals numpy's sd of (X − R̂·Y)/Ȳ exactly.
    rng = np.random.default_rng(7)
    cov = [[4.0, corr * 2.0 * 0.5], [corr * 2.0 * 0.5, 0.25]]
    x, y = rng.multivariate_normal([6.0, 3.0], cov, size=200_000).T
    r = x.mean() / y.mean()
    linear = (x - r * y) / y.mean()
    sd = ratio.unit_sd(r, y.mean(), x.std(ddof=1), y.std(ddof=1), np.corrcoef(x, y)[0, 1])
    assert float(sd) == pytest.approx(linear.std(ddof=1), rel=1e-9)


def test_unit_sd_reasons_and_arrays():
    sd, reasons = ratio.unit_sd_and_reasons(2.0, [1.0, 0.0, 1.0, 1.0, 1.0],
                                            [1.0, 1.0, -1.0, 1.0, 1.0],
                                            0.5, [0.0, 0.0, 0.0, 1.5, 1.0])
    assert np.isfinite(sd[0]) and np.isnan(sd[1:]).all()
    assert reasons.tolist() == [
        "", "denominator (its mean per unit) must be greater than 0",
        "numerator sd must be at least 0", "correlation must be between -1 and 1",
        "numerator and denominator move in lockstep: the delta-method variance is 0 "
        "(check their sds and correlation)"]
    with pytest.raises(ValueError, match="correlation must be between -1 and 1"):
        ratio.unit_sd(2.0, 1.0, 1.0, 0.5, 2.0)
    with pytest.raises(ValueError, match="numerator_sd must be a finite number"):
        ratio.unit_sd(2.0, 1.0, np.nan, 0.5, 0.0)


def test_the_ratio_kind_is_a_z_test_on_the_linearised_values():
    # The treatment adds δ per unit of the denominator, so both arms keep σ_R: the ratio
    # kind solves exactly like a mean's z test with sd σ_R (common practice, no source).
    sd = float(ratio.unit_sd(2.6, 0.034, 0.61, 0.19, 0.8))
    kw = dict(sd=sd, relative=True, ratio=0.7, alternative="greater", margin=-0.01)
    assert engine.sample_size("ratio", 2.6, 0.03, **kw) == pytest.approx(
        engine.sample_size("mean", 2.6, 0.03, **kw), rel=1e-12)
    with pytest.raises(ValueError, match="sd is required for a ratio"):
        engine.sample_size("ratio", 2.6, 0.03)
    with pytest.raises(ValueError, match="method must be one of 'delta' for a ratio"):
        engine.sample_size("ratio", 2.6, 0.03, sd=1.0, method="t")
    assert engine.problems("power", "ratio", 2.6, effect=0.1, n=100, sd=0.0).tolist() == (
        "sd (the ratio's delta-method sd per unit) must be greater than 0")
