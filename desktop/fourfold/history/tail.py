"""Upper percentiles of a column read in chunks, in fixed memory.

Capping (winsorising) a heavy-tailed metric at, say, its 99.9th percentile needs that
percentile before the moments pass. :class:`TailSketch` keeps two bounded summaries while the
chunks stream past:

* the ``capacity`` largest values seen so far, exactly. The p-th percentile of n values only
  depends on the top ``(1 − p/100)·n + 2`` of them, so while that many fit, the percentile is
  exact — on small files and for the usual 99th–99.99th percentiles of large ones;
* a uniform reservoir sample of ``reservoir`` values (Vitter's algorithm R, vectorised per
  chunk, seeded). When the tail is too long for the exact part, the percentile is estimated
  from the reservoir and :attr:`TailEstimate.exact` is False.

Memory is ``8·(capacity + reservoir)`` bytes per capped column whatever the file's length.
Percentiles use linear interpolation between order statistics (numpy's default "linear").

References
----------
Vitter, J. S. (1985). Random sampling with a reservoir. *ACM Transactions on Mathematical
Software* 11(1):37–57.

Hyndman, R. J. & Fan, Y. (1996). Sample quantiles in statistical packages. *The American
Statistician* 50(4):361–365 (definition 7, numpy's default).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class TailEstimate:
    """A percentile of the values a sketch has seen, and whether it is exact."""

    percentile: float
    value: float
    exact: bool


class TailSketch:
    """Accumulates the largest values and a reservoir sample of one column.

    An accumulator, filled chunk by chunk with :meth:`add` and read once with
    :meth:`estimate`.

    Examples
    --------
    >>> sketch = TailSketch(capacity=4, reservoir=8)
    >>> sketch.add(np.arange(1.0, 11.0))
    >>> sketch.estimate(90.0)
    TailEstimate(percentile=90.0, value=9.1, exact=True)
    """

    def __init__(self, capacity: int = 1 << 20, reservoir: int = 1 << 16, seed: int = 20261201):
        if capacity < 2:
            raise ValueError(f"capacity must be at least 2, not {capacity}")
        if reservoir < 1:
            raise ValueError(f"reservoir must be at least 1, not {reservoir}")
        self._capacity = int(capacity)
        self._reservoir_size = int(reservoir)
        self._top = np.empty(0)
        self._floor = -math.inf
        self._sample = np.empty(0)
        self._seen = 0
        self._rng = np.random.default_rng(seed)

    @property
    def seen(self) -> int:
        """How many values have been added."""
        return self._seen

    @property
    def sample(self) -> np.ndarray:
        """A copy of the reservoir: every value seen while they fit, a uniform sample after."""
        return self._sample.copy()

    def add(self, values) -> None:
        """Add a chunk of finite values."""
        x = np.asarray(values, dtype=np.float64).ravel()
        if x.size == 0:
            return
        self._add_top(x)
        self._add_sample(x)
        self._seen += int(x.size)

    def _add_top(self, x: np.ndarray) -> None:
        if self._top.size >= self._capacity:
            x = x[x > self._floor]
            if x.size == 0:
                return
        merged = np.concatenate((self._top, x))
        if merged.size > self._capacity:
            merged = np.partition(merged, merged.size - self._capacity)[-self._capacity:]
            self._floor = float(merged[0])
        self._top = merged

    def _add_sample(self, x: np.ndarray) -> None:
        k = self._reservoir_size
        room = k - self._sample.size
        if room > 0:
            self._sample = np.concatenate((self._sample, x[:room]))
            x = x[room:]
            start = self._seen + room
        else:
            start = self._seen
        if x.size == 0:
            return
        # Algorithm R: the value with 0-based index i replaces slot j ~ U{0..i} when j < k.
        index = np.arange(start, start + x.size, dtype=np.float64)
        slot = np.floor(self._rng.random(x.size) * (index + 1.0)).astype(np.int64)
        keep = slot < k
        slot, chosen = slot[keep], x[keep]
        if slot.size:
            # Later values win a slot drawn twice, as in the sequential algorithm.
            last, first_from_end = np.unique(slot[::-1], return_index=True)
            self._sample[last] = chosen[::-1][first_from_end]

    def estimate(self, percentile: float) -> TailEstimate:
        """The ``percentile``-th percentile (0 < percentile < 100) of the values seen."""
        if not 0.0 < percentile < 100.0:
            raise ValueError(f"percentile must be between 0 and 100, not {percentile}")
        n = self._seen
        if n == 0:
            return TailEstimate(percentile, math.nan, True)
        h = (n - 1) * percentile / 100.0
        low = math.floor(h)
        value = self.between(low, min(low + 1, n - 1), h - low)
        if value is None:
            return TailEstimate(percentile, float(np.percentile(self._sample, percentile)),
                                False)
        return TailEstimate(percentile, value, True)

    @property
    def first_kept(self) -> int:
        """The lowest rank (0-based from the bottom) of the values kept exactly."""
        return self._seen - self._top.size

    def between(self, a: int, b: int, fraction: float) -> float | None:
        """x₍a₎ + fraction·(x₍b₎ − x₍a₎) for ranks a, b (0-based from the bottom), or None
        when either is below the values kept exactly."""
        offset = self.first_kept
        if min(a, b) < offset:
            return None
        top = np.sort(self._top)
        x_a, x_b = float(top[a - offset]), float(top[b - offset])
        return _between(x_a, x_b, fraction)


def _between(a: float, b: float, t: float) -> float:
    """a + t·(b − a) as numpy's linear method writes it (from b when t ≥ 1/2, so that a
    weight within an ulp of 1 gives b's neighbourhood), and without overflow when b − a is
    beyond a double."""
    diff = b - a
    if not math.isfinite(diff):
        return a * (1.0 - t) + b * t
    return a + t * diff if t < 0.5 else b - (1.0 - t) * diff
