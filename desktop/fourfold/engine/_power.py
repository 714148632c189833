"""Power of the test from the standardised moments of the estimate (all kinds).

With the distance D from H0, per-unit sds s₀ (H0) and s₁ (H1), continuity term c and
x = √n_c, one tail of a z-type test has power Φ((D·x − c/x − u·s₀)/s₁) where u is the
critical value.  The exact t (means) has tail P(T_ν,δ > u) with δ = D·x/s₀ and
ν = n_c(1 + r) − 2.  A two-sided test adds the tails for +D and −D (the "far" tail is kept,
as statsmodels does); "greater" uses +D, "less" −D.

References
----------
Fleiss, J. L., Levin, B. & Paik, M. C. (2003) *Statistical Methods for Rates and
Proportions*, 3rd ed., ch. 4.
Cohen, J. (1988) *Statistical Power Analysis for the Behavioral Sciences*, 2nd ed., ch. 2.

Examples
--------
>>> import numpy as np
>>> u = critical(np.array(0.05), "two-sided", False, None)
>>> p = power_of(np.array(0.5), np.array(2**0.5), np.array(2**0.5), np.array(0.0),
...              np.array(64.0), u, "two-sided", False, None)
>>> round(float(p), 4)
0.8074
"""

import numpy as np

from . import _normal, tdist

_SIGNS = {"greater": (1.0,), "less": (-1.0,), "two-sided": (1.0, -1.0)}


def degrees_of_freedom(n, ratio):
    """ν = n_c + n_t − 2 of the pooled two-sample t."""
    return n * (1.0 + ratio) - 2.0


def tail_probability(alpha, alternative):
    """Rejection probability per tail under H0: α/2 for two-sided, α otherwise."""
    return alpha / 2.0 if alternative == "two-sided" else alpha


def critical(alpha, alternative, exact_t, df):
    """Critical value u of the test statistic (upper tail)."""
    p = tail_probability(alpha, alternative)
    if exact_t:
        return tdist.t_upper_quantile(df, p)
    return _normal.upper_quantile(p)


def distance_search(room, s0, s1, alpha, power, n, alternative):
    """Where a root search for a distance from H0 starts, on the log scale of the distance.

    The normal approximation's distance (u·s₀ + z_power·s₁)/√n, kept within half the ``room``
    there is (the distance to the edge of the possible values; inf when unbounded). Returns the
    z critical value ``u`` and the start, lower and upper limit of the log distance.
    """
    u = critical(alpha, alternative, False, None)
    guess = (u * s0 + _normal.quantile(power) * s1) / np.sqrt(n)
    bounded = np.isfinite(room)
    guess = np.where(bounded, np.minimum(guess, 0.5 * room), guess)
    y0 = np.log(np.maximum(guess, 1e-300))
    y_max = np.where(bounded, np.log(room) + np.log1p(-1e-12), y0 + 60.0)
    return u, y0, np.minimum(y0, y_max) - 60.0, y_max


def _no_correction(cc):
    """True when the continuity term is the plain number 0 (its terms then drop out exactly)."""
    return isinstance(cc, float) and cc == 0.0


def power_of(distance, s0, s1, cc, n, u, alternative, exact_t, ratio):
    """Power at control-arm size ``n`` for critical value ``u``; see the module docstring."""
    x = np.sqrt(n)
    dx = distance * x
    total = None
    if exact_t:
        df = degrees_of_freedom(n, ratio)
        if alternative == "two-sided":  # both tails in one call
            total = tdist.nct_sf_both(df, dx / s0, u)
        else:
            total = tdist.nct_sf(df, (dx if alternative == "greater" else -dx) / s0, u)
    else:
        plain = _no_correction(cc)
        cx, us = (None if plain else cc / x), u * s0
        for sign in _SIGNS[alternative]:
            signed = dx if sign > 0 else -dx
            term = _normal.cdf(((signed if plain else signed - cx) - us) / s1)
            total = term if total is None else total + term
    return np.minimum(total, 1.0)


def screen_power(distance, s0, n, alpha, alternative, ratio):
    """The exact t's power within :data:`~fourfold.engine.tdist.SCREEN_ERROR` at about half
    the cost of :func:`power_of`, nan where the screen does not reach (see
    :func:`fourfold.engine.tdist.screen_sf`): for a solver's first look at its starts."""
    df = degrees_of_freedom(n, ratio)
    out = np.full(df.shape, np.nan)
    near = np.flatnonzero((df >= tdist.QUADRATURE_DF) & (df < tdist.NORMAL_LIMIT_DF))
    if near.size:
        df = df[near]
        u = tdist.screen_quantile(df, tail_probability(alpha[near], alternative))
        nc = distance[near] * np.sqrt(n[near]) / s0[near]
        if alternative == "less":
            nc = -nc
        out[near] = np.minimum(tdist.screen_sf(df, nc, u, alternative == "two-sided"), 1.0)
    return out


def limit_power_and_slope(distance, s0, s1, cc, n, u, alternative, exact_t, ratio):
    """Power and its derivative with respect to log n, in closed form.

    Exact for the z-type tests; for the exact t it is the normal limit of the noncentral t
    (see :mod:`fourfold.engine.tdist`), used for starting points and Newton slopes only.
    """
    x = np.sqrt(n)
    dx = distance * x
    total = slope = None
    if exact_t:
        df = degrees_of_freedom(n, ratio)
        scale = np.sqrt(1.0 + u * u / (2.0 * df))
        shift = u * (1.0 - 0.25 / df)
        for sign in _SIGNS[alternative]:
            nc = (dx if sign > 0 else -dx) / s0
            a = (nc - shift) / scale
            level, rise = _normal.cdf(a), _normal.pdf(a) * 0.5 * nc / scale
            total, slope = (level, rise) if total is None else (total + level, slope + rise)
    else:
        plain = _no_correction(cc)
        cx, us = (None if plain else cc / x), u * s0
        for sign in _SIGNS[alternative]:
            signed = dx if sign > 0 else -dx
            a = ((signed if plain else signed - cx) - us) / s1
            lever = signed if plain else signed + cx
            level, rise = _normal.cdf(a), _normal.pdf(a) * lever / (2.0 * s1)
            total, slope = (level, rise) if total is None else (total + level, slope + rise)
    return total, slope
