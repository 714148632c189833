"""Confidence interval for a simulated rejection rate."""

from __future__ import annotations

import numpy as np
from scipy import special


def wilson_interval(successes, trials, level=0.95):
    """Wilson score interval for a binomial proportion.

    Parameters
    ----------
    successes : int or array_like
        Number of rejections among the replicates, ``0 <= successes <= trials``.
    trials : int or array_like
        Number of replicates, at least 1.
    level : float, optional
        Two-sided coverage in (0, 1); 0.95 by default.

    Returns
    -------
    low, high : float or ndarray
        Lower and upper limits, inside [0, 1].

    Raises
    ------
    ValueError
        If ``trials`` is below 1, ``successes`` is outside [0, trials] or ``level`` is
        outside (0, 1).

    References
    ----------
    Wilson, E. B. (1927) "Probable inference, the law of succession, and statistical
    inference", *Journal of the American Statistical Association* 22:209-212.

    Examples
    --------
    >>> low, high = wilson_interval(80, 100)
    >>> round(float(low), 4), round(float(high), 4)
    (0.7112, 0.8666)
    """
    k = np.asarray(successes, dtype=float)
    n = np.asarray(trials, dtype=float)
    if not 0.0 < level < 1.0:
        raise ValueError(f"level must be between 0 and 1 (exclusive), got {level!r}")
    if np.any(n < 1):
        raise ValueError("trials must be at least 1")
    if np.any((k < 0) | (k > n)):
        raise ValueError("successes must lie between 0 and trials")
    z = special.ndtri(0.5 + level / 2.0)
    p = k / n
    denom = 1.0 + z * z / n
    centre = (p + z * z / (2.0 * n)) / denom
    half = z * np.sqrt(p * (1.0 - p) / n + z * z / (4.0 * n * n)) / denom
    low = np.clip(centre - half, 0.0, 1.0)
    high = np.clip(centre + half, 0.0, 1.0)
    if low.ndim == 0:
        return float(low), float(high)
    return low, high
