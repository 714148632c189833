"""Reach curves: the fitted model and its extrapolation within the stated error.

Known curves: the negative binomial reach N·(1 − (1 + d/β)^−k) + c·d of units visiting at
gamma-distributed rates (Ehrenberg 1959, Applied Statistics 8:26–41), the model's own family;
and, from another family, the expected reach of units whose daily visit chance is beta
distributed, N·(1 − B(a, b + d)/B(a, b)) + c·d (a beta-geometric mixture: the chance of no
visit in d days is E[(1 − p)^d] = B(a, b + d)/B(a, b); exact, with scipy.special.betaln,
scipy 1.x). Neither curve is produced by the code under test.
"""

import numpy as np
import pytest
from scipy.special import betaln

from fourfold.engine.reach import MIN_DAYS, can_extrapolate, fit_reach

DAYS = np.arange(1, 29, dtype=float)
LATER = np.arange(29, 57, dtype=float)


def nbd(d, pool=300_000.0, shape=0.6, scale=4.0, inflow=6_000.0):
    return pool * (1.0 - (1.0 + d / scale) ** -shape) + inflow * d


def beta_reach(d, pool=500_000.0, a=0.4, b=4.0, inflow=3_000.0):
    return pool * (1.0 - np.exp(betaln(a, b + d) - betaln(a, b))) + inflow * d


def weekly(curve, days, amplitude=0.12):
    """The curve with new units that follow a weekly cycle (weekends busier)."""
    new = np.diff(curve(days), prepend=0.0) * (1 + amplitude * np.sin(2 * np.pi * days / 7))
    return np.cumsum(new)


@pytest.mark.parametrize("curve", [nbd, beta_reach], ids=["own family", "beta mixture"])
def test_later_days_are_recovered_within_the_stated_error(curve):
    fit = fit_reach(DAYS, curve(DAYS))
    miss = np.abs(fit.extend(LATER) / curve(LATER) - 1.0)
    assert np.all(miss <= fit.error(LATER))
    assert np.all(fit.error(DAYS) == 0.0)  # the curve itself is data


def test_a_weekly_cycle_is_recovered_within_the_stated_error():
    everything = np.arange(1, 57, dtype=float)
    seen = weekly(beta_reach, everything)
    fit = fit_reach(DAYS, seen[:28])
    miss = np.abs(fit.extend(LATER) / seen[28:] - 1.0)
    assert np.all(miss <= fit.error(LATER))
    assert fit.rms > 0 and fit.growth > 0  # the cycle is noise to the model: it widens the error


def test_the_own_family_is_fitted_closely():
    fit = fit_reach(DAYS, nbd(DAYS))
    assert fit.rms < 1e-3
    assert float(np.max(np.abs(fit.extend(LATER) / nbd(LATER) - 1.0))) < 0.01


def test_a_straight_line_continues_as_one():
    # Constant new units, none returning: reach is the daily units times the days.
    fit = fit_reach(DAYS, 1_000.0 * DAYS)
    assert fit.extend(LATER) == pytest.approx(1_000.0 * LATER, rel=1e-9)
    assert fit.pool == pytest.approx(0.0, abs=1e-6) and fit.inflow == pytest.approx(1_000.0)


def test_the_stated_error_grows_with_the_distance():
    fit = fit_reach(DAYS, weekly(nbd, DAYS))
    error = fit.error(LATER)
    assert np.all(np.diff(error) >= 0) and error[-1] > error[0] > 0


def test_sparse_points_are_fitted_too():
    # A typed table of a few days: 1, 3, 5, …, 27 (14 points).
    days = np.arange(1, 29, 2, dtype=float)
    fit = fit_reach(days, beta_reach(days))
    miss = np.abs(fit.extend(LATER) / beta_reach(LATER) - 1.0)
    assert np.all(miss <= fit.error(LATER))


def test_a_short_or_broken_curve_is_not_extrapolated():
    assert can_extrapolate(range(1, MIN_DAYS)) != ""
    with pytest.raises(ValueError, match="needs at least 14"):
        fit_reach(np.arange(1, 8), np.arange(1, 8) * 100.0)
    with pytest.raises(ValueError, match="never fall"):
        fit_reach(DAYS, 1_000.0 * DAYS[::-1])
    with pytest.raises(ValueError, match="increasing"):
        fit_reach(DAYS[::-1], 1_000.0 * DAYS)
    with pytest.raises(ValueError, match="at least 5 points"):
        fit_reach([1.0, 20.0], [5.0, 9.0])
    assert "too few points" in can_extrapolate([1, 2, 3, 20, 25, 28])
