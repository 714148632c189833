"""Decisions from z scores: a fixed-size test or group-sequential boundaries."""

from __future__ import annotations

import numpy as np
from scipy import special


def directed(z, alternative):
    """Scores oriented so that large values favour the alternative.

    ``"two-sided"`` gives ``|z|``, ``"greater"`` ``z`` and ``"less"`` ``-z``.

    Examples
    --------
    >>> directed(np.array([-2.0, 1.0]), "less").tolist()
    [2.0, -1.0]
    """
    if alternative == "two-sided":
        return np.abs(z)
    if alternative == "less":
        return -z
    return z


def fixed_rejections(z, alpha, alternative):
    """Replicates whose final test rejects H0 at level ``alpha``.

    Parameters
    ----------
    z : ndarray, shape (r, 1)
        Scores at the single (final) look.
    alpha : float
        Significance level in (0, 1).
    alternative : {"two-sided", "greater", "less"}

    Returns
    -------
    rejected : ndarray of bool, shape (r,)
    fraction : ndarray, shape (r,)
        Share of the planned units used: 1 for every replicate.

    Examples
    --------
    >>> fixed_rejections(np.array([[1.9], [2.0]]), 0.05, "two-sided")[0].tolist()
    [False, True]
    """
    tail = alpha / 2.0 if alternative == "two-sided" else alpha
    critical = -special.ndtri(tail)
    score = directed(z[:, -1], alternative)
    return score >= critical, np.ones(z.shape[0])


def sequential_rejections(z, fractions, upper, lower, alternative, direction=1.0):
    """Replicates that cross the efficacy boundary before stopping.

    The boundaries follow :mod:`fourfold.engine.sequential`: at look ``k`` (in order) a
    replicate still running rejects H0 when its directed score (``|z|`` two-sided) reaches
    ``upper[k]``, and stops for futility when its score in the direction of the planned
    effect falls below ``lower[k]`` (``lower`` None or nan: no futility stop). The last look
    ends the test.

    Parameters
    ----------
    z : ndarray, shape (r, K)
        Scores at the ``K`` looks.
    fractions : ndarray, shape (K,)
        Information fraction of each look (the last is 1).
    upper, lower : ndarray, shape (K,)
        Efficacy and futility boundaries.
    alternative : {"two-sided", "greater", "less"}
    direction : float
        Sign of the planned effect, orienting a two-sided futility boundary.

    Returns
    -------
    rejected : ndarray of bool, shape (r,)
    fraction : ndarray, shape (r,)
        Information fraction at which each replicate stopped.

    References
    ----------
    Jennison, C. & Turnbull, B. W. (2000) *Group Sequential Methods with Applications to
    Clinical Trials*, Chapman & Hall/CRC, chapters 2 and 7.

    Examples
    --------
    >>> z = np.array([[3.1, 0.0], [1.0, 2.1], [-1.0, 3.0]])
    >>> r, f = sequential_rejections(z, np.array([0.5, 1.0]), np.array([3.0, 2.0]),
    ...                              np.array([0.0, 2.0]), "greater")
    >>> r.tolist(), f.tolist()
    ([True, True, False], [0.5, 1.0, 0.5])
    """
    score = directed(z, alternative)
    toward = z * direction if alternative == "two-sided" else directed(z, alternative)
    reps, looks = score.shape
    running = np.ones(reps, dtype=bool)
    rejected = np.zeros(reps, dtype=bool)
    fraction = np.ones(reps)
    lower = np.full(looks, np.nan) if lower is None else np.asarray(lower, dtype=float)
    for k in range(looks):
        hit = running & (score[:, k] >= upper[k])
        rejected |= hit
        stop = hit
        if k < looks - 1 and np.isfinite(lower[k]):
            stop = stop | (running & (toward[:, k] < lower[k]))
        fraction[running & stop] = fractions[k]
        running &= ~stop
    return rejected, fraction
