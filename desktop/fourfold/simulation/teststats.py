"""The final tests, run on simulated statistics, as z-equivalent scores.

Each function returns, per replicate and look, the standard normal score with the same
one-sided p-value as the test, so that every test is compared with the same critical values
or group-sequential boundaries. A replicate whose standard error is zero (all values equal)
scores 0 and never rejects.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from fourfold.engine.catalog import METHODS, quoted
from fourfold.engine.proportion import restricted

PROPORTION_METHODS = METHODS["proportion"]


def _score(diff, se):
    with np.errstate(divide="ignore", invalid="ignore"):
        z = diff / se
    return np.where(se > 0, z, 0.0)


def welch_z(n_c, mean_c, m2_c, n_t, mean_t, m2_t, margin=0.0):
    """Welch's unequal-variance t statistic, turned into a normal score.

    ``t = (mean_t - mean_c - margin) / sqrt(s_t^2/n_t + s_c^2/n_c)`` with the
    Welch-Satterthwaite degrees of freedom; the score is ``Phi^-1(F_t(t; df))``.

    References
    ----------
    Welch, B. L. (1947) "The generalization of 'Student's' problem when several different
    population variances are involved", *Biometrika* 34:28-35.

    Examples
    --------
    >>> z = welch_z(10, np.array([0.0]), np.array([9.0]), 10, np.array([1.0]), np.array([9.0]))
    >>> round(float(z[0]), 3)
    2.072
    """
    n_c = np.asarray(n_c, dtype=float)
    n_t = np.asarray(n_t, dtype=float)
    v_c = m2_c / (n_c - 1.0) / n_c
    v_t = m2_t / (n_t - 1.0) / n_t
    se2 = v_c + v_t
    with np.errstate(divide="ignore", invalid="ignore"):
        df = se2 * se2 / (v_c * v_c / (n_c - 1.0) + v_t * v_t / (n_t - 1.0))
    t = _score(mean_t - mean_c - margin, np.sqrt(se2))
    df = np.where(np.isfinite(df) & (df > 0), df, 1.0)
    tail = special.stdtr(df, -np.abs(t))
    return -np.sign(t) * special.ndtri(tail)


def proportion_z(n_c, mean_c, n_t, mean_t, margin=0.0, method="pooled"):
    """The z score of a row's two-proportion test, one ``method`` of the engine's four.

    With d = p̂_t − p̂_c − margin:

    - ``"pooled"``: d over the standard error at the proportions restricted to H0, the pooled
      proportion when ``margin == 0`` (its square is Pearson's chi-squared for the 2x2 table),
      the Farrington–Manning maximum-likelihood estimates at the observed proportions
      otherwise (:func:`fourfold.engine.proportion.restricted`);
    - ``"unpooled"``: d over the Wald standard error from each arm's own proportion;
    - ``"arcsine"``: Cohen's h, 2·asin√p̂_t − 2·asin√(p̂_c + margin), over √(k/n_c + 1/n_t)
      with k = p̂_c(1 − p̂_c)/(q(1 − q)), q = p̂_c + margin (the delta method; k = 1 at margin 0)
      (p̂_c + margin clipped to [0, 1]);
    - ``"pooled-cc"``: ``"pooled"`` with |d| shrunk by the continuity correction
      ½(1/n_c + 1/n_t), never past 0, its sign kept (as the engine's closed-form power puts
      it).

    A replicate whose standard error is 0 (both arms all 0 or all 1) scores 0.

    Parameters
    ----------
    n_c, n_t : array_like
        Units per arm (one per look).
    mean_c, mean_t : ndarray
        Observed proportions per replicate and look.
    margin : float
        Difference under H0.
    method : {"pooled", "unpooled", "arcsine", "pooled-cc"}

    Raises
    ------
    ValueError
        If ``method`` is not one of the four.

    References
    ----------
    Fleiss, J. L., Levin, B. & Paik, M. C. (2003) *Statistical Methods for Rates and
    Proportions*, 3rd ed., Wiley, sections 2.3 and 4.2.
    Fleiss, J. L., Tytun, A. & Ury, H. K. (1980) *Biometrics* 36:343-346.
    Farrington, C. P. & Manning, G. (1990) *Statistics in Medicine* 9:1447-1454.
    Cohen, J. (1988) *Statistical Power Analysis for the Behavioral Sciences*, 2nd ed., ch. 6.

    Examples
    --------
    >>> z = proportion_z(1000, np.array([0.10]), 1000, np.array([0.13]))
    >>> round(float(z[0]), 3)
    2.103
    >>> z = proportion_z(1000, np.array([0.10]), 1000, np.array([0.13]), method="pooled-cc")
    >>> round(float(z[0]), 3)
    2.033
    """
    if method not in PROPORTION_METHODS:
        raise ValueError(
            f"method must be one of {quoted(PROPORTION_METHODS)} for a proportion, "
            f"not {method!r}"
        )
    n_c = np.asarray(n_c, dtype=float)
    n_t = np.asarray(n_t, dtype=float)
    if method == "arcsine":
        shifted = np.clip(mean_c + margin, 0.0, 1.0)
        h = 2.0 * (np.arcsin(np.sqrt(mean_t)) - np.arcsin(np.sqrt(shifted)))
        if margin == 0.0:
            control = 1.0
        else:  # the delta method's variance of 2 asin sqrt(p_c + margin), as in the engine
            with np.errstate(divide="ignore", invalid="ignore"):
                control = mean_c * (1.0 - mean_c) / (shifted * (1.0 - shifted))
            control = np.where(np.isfinite(control), control, np.inf)
        return _score(h, np.sqrt(control / n_c + 1.0 / n_t) + 0.0 * h)
    diff = mean_t - mean_c - margin
    if method == "unpooled":
        var = mean_c * (1.0 - mean_c) / n_c + mean_t * (1.0 - mean_t) / n_t
    else:
        p_c0, p_t0 = restricted(mean_c, mean_t, margin, n_t / n_c)
        var = p_c0 * (1.0 - p_c0) / n_c + p_t0 * (1.0 - p_t0) / n_t
    if method == "pooled-cc":
        shrunk = np.maximum(np.abs(diff) - 0.5 * (1.0 / n_c + 1.0 / n_t), 0.0)
        diff = np.sign(diff) * shrunk
    return _score(diff, np.sqrt(np.maximum(var, 0.0)))


def rate_z(n_c, mean_c, n_t, mean_t, margin=0.0, phi=1.0):
    """z statistic for the difference of two Poisson (or quasi-Poisson) rates.

    The variance of a unit's count is ``phi`` times its mean (``phi = 1``: Poisson; a
    known dispersion otherwise). With ``margin == 0`` the rate pooled over both arms gives
    the standard error (the score test under H0); with a margin, each arm's own rate does.

    References
    ----------
    Gu, K., Ng, H. K. T., Tang, M. L. & Schucany, W. R. (2008) "Testing the ratio of two
    Poisson rates", *Biometrical Journal* 50:283-298 (the pooled and unpooled z-tests).

    Examples
    --------
    >>> z = rate_z(1000, np.array([0.10]), 1000, np.array([0.13]))
    >>> round(float(z[0]), 3)
    1.978
    """
    n_c = np.asarray(n_c, dtype=float)
    n_t = np.asarray(n_t, dtype=float)
    if margin == 0.0:
        pooled = (n_c * mean_c + n_t * mean_t) / (n_c + n_t)
        se = np.sqrt(phi * pooled * (1.0 / n_c + 1.0 / n_t))
    else:
        se = np.sqrt(phi * (mean_c / n_c + mean_t / n_t))
    return _score(mean_t - mean_c - margin, se)
