"""The delta-method variance of a ratio of sums.

Source of the formula: Deng, Knoblich & Lu (2018), "Applying the delta method in metric
analytics", KDD, section 2 (Var(Ȳ/X̄) ≈ (σ_y² − 2Rσ_xy + R²σ_x²) / (n μ_x²)); also Kohavi,
Tang & Xu (2020), *Trustworthy Online Controlled Experiments*, ch. 18. Checked here against a
worked example done by hand and against the spread of the ratio over many simulated samples
(numpy 2.4 random generator, seeded).
"""

import numpy as np
import pytest

from fourfold.history.moments import CoMoments


def test_worked_example_by_hand():
    # Four units, x = orders (denominator), y = items (numerator):
    #   x = 1, 2, 1, 2   x̄ = 1.5;   y = 1, 5, 2, 4   ȳ = 3;   R = ȳ / x̄ = 2.
    #   deviations dx = -.5, .5, -.5, .5;  dy = -2, 2, -1, 1
    #   s_x² = (4 · 0.25) / 3 = 1/3;  s_y² = (4 + 4 + 1 + 1) / 3 = 10/3
    #   s_xy = (1 + 1 + 0.5 + 0.5) / 3 = 1
    #   per-unit variance = s_y² − 2R s_xy + R² s_x² = 10/3 − 4 + 4/3 = 2/3
    #   sd = sqrt(2/3) / x̄ = 0.8164966 / 1.5 = 0.5443311
    pairs = CoMoments.of([1.0, 2.0, 1.0, 2.0], [1.0, 5.0, 2.0, 4.0])
    assert pairs.ratio() == 2.0
    assert pairs.ratio_sd() == pytest.approx(0.5443311, abs=1e-7)


def test_matches_the_spread_of_the_ratio_over_simulated_samples():
    rng = np.random.default_rng(20261201)
    replicates, units = 2000, 1500
    # Visitors with a skewed number of sessions and clicks correlated with sessions.
    sessions = 1 + rng.poisson(rng.gamma(1.5, 2.0, (replicates, units)))
    clicks = rng.binomial(sessions, rng.beta(2.0, 8.0, (replicates, units)))
    ratios = clicks.sum(axis=1) / sessions.sum(axis=1)
    observed_var = ratios.var(ddof=1)  # relative standard error about 3 % (2000 replicates)

    one_sample = CoMoments.of(sessions[0].astype(float), clicks[0].astype(float))
    predicted_var = one_sample.ratio_sd() ** 2 / units
    assert predicted_var == pytest.approx(observed_var, rel=0.12)

    # Treating each unit's own ratio as the observation (ignoring the weighting by sessions
    # and the covariance) gives a different answer: the check above can fail.
    naive = (clicks[0] / sessions[0]).var(ddof=1) / units
    assert abs(naive / observed_var - 1.0) > 0.2


def test_zero_denominator_gives_nan():
    pairs = CoMoments.of([0.0, 0.0, 0.0], [1.0, 2.0, 3.0])
    assert np.isnan(pairs.ratio())
    assert np.isnan(pairs.ratio_sd())
