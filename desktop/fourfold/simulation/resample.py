"""Bootstrap arms: units resampled from historical per-unit values.

Small arms (at most :data:`DIRECT_MAX` units) resample the history directly. Larger arms
draw, per replicate, multinomial counts over bins of the sorted history instead of ``n``
resamples, so the cost does not grow with ``n``:

- a history with at most :data:`MAX_BINS` distinct values uses one bin per value, which is
  exact (a bootstrap sample is fully described by how often each value occurs);
- otherwise the :data:`TAIL` smallest and the :data:`TAIL` largest values keep a bin of
  their own (the tails drive heavy-tailed metrics), and the sorted values in between are cut
  into equal-count bins. Each bin is described by its mean and its variance; a draw's sum
  is the bins' means weighted by their counts plus the within-bin part, drawn as a normal
  with the within-bin variance, and its sum of squares takes the within-bin part at its
  expectation. The mean and variance of each simulated sample mean are then exactly those of
  the bootstrap; only the shape inside a bin is replaced by a normal, an error that shrinks
  like ``1/n`` and is negligible above :data:`DIRECT_MAX` units.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fourfold.simulation.models import accumulate, segment_sizes

DIRECT_MAX = 5_000
"""Largest arm resampled value by value."""

MAX_BINS = 1_024
"""Most bins over the history."""

TAIL = 128
"""Values at each end of the sorted history that keep a bin of their own."""


@dataclass(frozen=True)
class Bins:
    """Binned history: probability, mean and within-bin variance per bin."""

    prob: np.ndarray
    mean: np.ndarray
    var: np.ndarray


def bin_history(values):
    """Bins of a sorted history as described in the module text.

    Parameters
    ----------
    values : ndarray
        Finite historical values (any order), at least 2.

    Returns
    -------
    Bins

    Examples
    --------
    >>> bins = bin_history(np.array([0.0, 1.0, 1.0, 3.0]))
    >>> bins.prob.tolist(), bins.mean.tolist(), bins.var.tolist()
    ([0.25, 0.5, 0.25], [0.0, 1.0, 3.0], [0.0, 0.0, 0.0])
    """
    x = np.sort(np.asarray(values, dtype=float))
    unique, counts = np.unique(x, return_counts=True)
    if unique.size <= MAX_BINS:
        return Bins(counts / x.size, unique, np.zeros(unique.size))
    middle = x.size - 2 * TAIL
    groups = MAX_BINS - 2 * TAIL
    edges = np.linspace(0, middle, groups + 1).round().astype(np.int64) + TAIL
    starts = np.concatenate([np.arange(TAIL), edges[:-1], np.arange(x.size - TAIL, x.size)])
    sizes = np.diff(np.append(starts, x.size))
    keep = sizes > 0
    starts, sizes = starts[keep], sizes[keep]
    sums = np.add.reduceat(x, starts)
    means = sums / sizes
    deviations = x - np.repeat(means, sizes)
    var = np.add.reduceat(deviations * deviations, starts) / sizes
    return Bins(sizes / x.size, means, var)


@dataclass(frozen=True)
class EmpiricalArm:
    """Units resampled from ``values`` after ``value * scale + shift``."""

    values: np.ndarray
    bins: Bins
    shift: float = 0.0
    scale: float = 1.0

    def draw(self, rng, reps, sizes):
        """Cumulative ``(mean, m2)`` at each look, shape ``(reps, K)``."""
        counts = segment_sizes(sizes)
        if int(np.asarray(sizes)[-1]) <= DIRECT_MAX:
            means, m2s = self._direct(rng, reps, counts)
        else:
            means, m2s = self._binned(rng, reps, counts)
        return accumulate(counts, means * self.scale + self.shift, m2s * self.scale**2)

    def _direct(self, rng, reps, counts):
        means = np.empty((reps, counts.size))
        m2s = np.empty((reps, counts.size))
        for k, m in enumerate(counts):
            sample = self.values[rng.integers(0, self.values.size, size=(reps, int(m)))]
            means[:, k] = sample.mean(axis=1)
            m2s[:, k] = ((sample - means[:, k : k + 1]) ** 2).sum(axis=1)
        return means, m2s

    def _binned(self, rng, reps, counts):
        centre = float(self.bins.mean @ self.bins.prob)
        offset = self.bins.mean - centre
        square = offset * offset + self.bins.var
        means = np.empty((reps, counts.size))
        m2s = np.empty((reps, counts.size))
        for k, m in enumerate(counts):
            hits = rng.multinomial(int(m), self.bins.prob, size=reps).astype(float)
            within = hits @ self.bins.var
            total = hits @ offset + np.sqrt(within) * rng.standard_normal(reps)
            means[:, k] = centre + total / m
            m2s[:, k] = np.maximum(hits @ square - total * total / m, 0.0)
        return means, m2s
