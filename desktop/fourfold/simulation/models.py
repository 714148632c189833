"""Parametric arms: sufficient statistics of simulated units, drawn without a loop per unit.

Every arm draws, for ``r`` replicates and the cumulative sizes ``n_1 < n_2 < ... < n_K`` of
the looks, the statistics the final test needs at each look: the sample mean, and for
continuous values the sum of squared deviations ``m2``. Segments between two looks are
drawn independently and combined exactly (Chan, Golub & LeVeque 1983), so a look sees the
same units as the looks before it plus new ones.

- normal values: the segment mean is ``N(mu, sd^2/m)`` and ``m2 = sd^2 chi^2_{m-1}``
  (independent; Student 1908, Fisher 1925);
- 0/1 values: the segment count is ``Binomial(m, p)``;
- counts: the segment total is ``Poisson(m lam)``; with a dispersion ``phi = var/mean`` above 1,
  a negative binomial with the same mean and variance (the sum of ``m`` such units is again
  negative binomial); below 1 (under-dispersed), the normal approximation of the total.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def segment_sizes(sizes):
    """Units added at each look from the cumulative sizes.

    Examples
    --------
    >>> segment_sizes(np.array([10, 25, 40])).tolist()
    [10, 15, 15]
    """
    sizes = np.asarray(sizes, dtype=np.int64)
    return np.diff(sizes, prepend=0)


def accumulate(counts, means, m2s):
    """Cumulative mean and ``m2`` over segments, combined pairwise.

    Parameters
    ----------
    counts : ndarray, shape (K,)
        Units per segment.
    means, m2s : ndarray, shape (r, K)
        Per-segment mean and sum of squared deviations (``m2s`` may be None).

    Returns
    -------
    mean, m2 : ndarray, shape (r, K)
        Statistics of all units up to each look (``m2`` None when ``m2s`` is None).

    References
    ----------
    Chan, T. F., Golub, G. H. & LeVeque, R. J. (1983) "Algorithms for computing the sample
    variance: analysis and recommendations", *The American Statistician* 37:242-247.

    Examples
    --------
    >>> mean, m2 = accumulate(np.array([2, 2]), np.array([[1.0, 3.0]]), np.array([[2.0, 2.0]]))
    >>> mean.tolist(), m2.tolist()
    ([[1.0, 2.0]], [[2.0, 8.0]])
    """
    mean = np.empty_like(means)
    m2 = None if m2s is None else np.empty_like(m2s)
    n_run = 0
    for k, m in enumerate(counts):
        if k == 0:
            mean[:, 0] = means[:, 0]
            if m2 is not None:
                m2[:, 0] = m2s[:, 0]
        else:
            total = n_run + m
            delta = means[:, k] - mean[:, k - 1]
            mean[:, k] = mean[:, k - 1] + delta * (m / total)
            if m2 is not None:
                m2[:, k] = m2[:, k - 1] + m2s[:, k] + delta * delta * (n_run * m / total)
        n_run += m
    return mean, m2


@dataclass(frozen=True)
class NormalArm:
    """Units with normal values of mean ``mu`` and standard deviation ``sd``."""

    mu: float
    sd: float

    def draw(self, rng, reps, sizes):
        """Cumulative ``(mean, m2)`` at each look, shape ``(reps, K)``."""
        counts = segment_sizes(sizes)
        z = rng.standard_normal((reps, counts.size))
        means = self.mu + self.sd * z / np.sqrt(counts)
        m2s = np.zeros((reps, counts.size))
        for k, m in enumerate(counts):
            if m > 1:
                m2s[:, k] = self.sd * self.sd * rng.chisquare(m - 1, reps)
        return accumulate(counts, means, m2s)


@dataclass(frozen=True)
class BinomialArm:
    """Units with 0/1 values, 1 with probability ``p``."""

    p: float

    def draw(self, rng, reps, sizes):
        """Cumulative ``(mean, None)`` at each look, shape ``(reps, K)``."""
        counts = segment_sizes(sizes)
        hits = rng.binomial(counts, self.p, size=(reps, counts.size))
        return np.cumsum(hits, axis=1) / np.asarray(sizes, dtype=float), None


@dataclass(frozen=True)
class CountArm:
    """Units with counts of mean ``lam`` and variance ``phi * lam``."""

    lam: float
    phi: float = 1.0

    def draw(self, rng, reps, sizes):
        """Cumulative ``(mean, None)`` at each look, shape ``(reps, K)``."""
        counts = segment_sizes(sizes).astype(float)
        shape = (reps, counts.size)
        expected = counts * self.lam
        if self.lam == 0.0:
            totals = np.zeros(shape)
        elif self.phi == 1.0:
            totals = rng.poisson(expected, size=shape).astype(float)
        elif self.phi > 1.0:
            totals = rng.negative_binomial(expected / (self.phi - 1.0), 1.0 / self.phi, size=shape)
            totals = totals.astype(float)
        else:
            spread = np.sqrt(expected * self.phi)
            totals = np.maximum(rng.normal(expected, spread, size=shape), 0.0)
        return np.cumsum(totals, axis=1) / np.asarray(sizes, dtype=float), None
