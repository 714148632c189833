"""A quantile of a column and the density there, from a file read in chunks.

The import of a quantile metric reads the column twice:

1. a :class:`QuantileSketch` keeps the column's moments and a bounded summary of its tail on
   the quantile's side (:class:`~fourfold.history.tail.TailSketch`: exact while the values
   beyond the quantile fit, estimated from a reservoir sample otherwise); it gives the
   quantile q_p and Silverman's rule-of-thumb bandwidth h = 0.9·min(s, IQR/1.34)·n^(−1/5)
   (the IQR from the reservoir, exact for files up to its size);
2. every chunk adds Σ φ((q_p − x)/h) to the tally (:func:`kernel_sum`), so the Gaussian kernel
   estimate of the density at q_p, f̂ = Σ φ/(n·h), is exact over the whole file.

The metric row gets the quantile as its baseline, its level and the density; the per-unit sd
the engine uses is √(p(1 − p))/f̂ (:func:`fourfold.engine.quantile.unit_sd`).

References
----------
Silverman, B. W. (1986) *Density Estimation for Statistics and Data Analysis*, Chapman & Hall,
§3.4.2 (eq. 3.31). Serfling, R. J. (1980) *Approximation Theorems of Mathematical Statistics*,
§2.3.

Examples
--------
>>> import numpy as np
>>> x = np.random.default_rng(0).normal(size=50_000)
>>> sketch = QuantileSketch(0.5)
>>> sketch.add(x)
>>> estimate = sketch.estimate()
>>> round(kernel_sum(x, estimate) / (x.size * estimate.bandwidth), 2)  # φ(0) = 0.399
0.39
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fourfold.history.errors import HistoryError
from fourfold.history.moments import Moments
from fourfold.history.tail import TailSketch

_CHUNK = 1 << 16


@dataclass(frozen=True)
class QuantileEstimate:
    """The quantile at ``level`` of a column, whether it is exact, and the bandwidth there."""

    level: float
    value: float
    exact: bool
    bandwidth: float
    n: int


class QuantileSketch:
    """First pass over a quantile column: moments and a tail summary on the quantile's side.

    Levels below one half keep the lowest values (the tail of −x).
    """

    def __init__(self, level: float, capacity: int = 1 << 20) -> None:
        self.level = float(level)
        self.sign = 1.0 if self.level >= 0.5 else -1.0
        self.tail = TailSketch(capacity=capacity)
        self.moments = Moments()

    def add(self, values) -> None:
        """Add a chunk of finite values."""
        x = np.asarray(values, dtype=float)
        self.tail.add(self.sign * x)
        self.moments = self.moments.merge(Moments.of(x))

    def estimate(self) -> QuantileEstimate:
        """The quantile and Silverman's bandwidth (nan for fewer than 2 values)."""
        n = self.moments.n
        if n < 2 or not self.moments.m2 > 0:  # one value, or one value repeated
            return QuantileEstimate(self.level, math.nan, True, math.nan, n)
        from fourfold.engine import quantile  # scipy.special: off the command line's start-up

        value, exact = self._quantile(n)
        iqr = _quartile_gap(self.sign * self.tail.sample)
        h = float(quantile.silverman_bandwidth(n, self.moments.sd, iqr))
        return QuantileEstimate(self.level, value, exact, h, n)

    def _quantile(self, n: int) -> tuple[float, bool]:
        """numpy's linear quantile at the level, and whether it is exact.

        Below one half the tail holds −x, the values' ranks counted from the top: the ranks
        and weight are those of x, so a level within 2⁻⁵³ of 0 (whose 1 − p rounds to 1)
        still gives x₍₀₎ + p·(n − 1)·(x₍₁₎ − x₍₀₎).
        """
        h = (n - 1) * self.level
        low = math.floor(h)
        high = min(low + 1, n - 1)
        if self.sign > 0:
            value = self.tail.between(low, high, h - low)
        else:
            value = self.tail.between(n - 1 - low, n - 1 - high, h - low)
        if value is not None:
            return self.sign * value, True
        share = self.level if self.sign > 0 else 1.0 - self.level
        share = min(100.0 * share, math.nextafter(100.0, 0.0))
        return self.sign * float(np.percentile(self.tail.sample, share)), False


def _quartile_gap(sample: np.ndarray) -> float:
    """The interquartile range of ``sample`` (numpy's linear percentiles), inf where it is
    beyond a double: quartiles whose difference overflows are taken of the halved values
    (exact for any value the halving keeps normal), whose range does fit, and doubled.

    Examples
    --------
    >>> _quartile_gap(np.array([1.0, 2.0, 3.0, 4.0, 5.0]))
    2.0
    >>> _quartile_gap(np.array([-1.7e308, 1.7e308]))  # numpy's interpolation overflows here
    1.7e+308
    >>> _quartile_gap(np.array([-1.7e308, -1.7e308, 1.7e308, 1.7e308]))
    inf
    """
    with np.errstate(over="ignore", invalid="ignore"):
        low, high = np.percentile(sample, [25.0, 75.0])
        gap = abs(float(high) - float(low))
    if math.isfinite(gap):
        return gap
    low, high = np.percentile(0.5 * sample, [25.0, 75.0])
    return 2.0 * abs(float(high) - float(low))


def kernel_sum(values, estimate: QuantileEstimate) -> float:
    """Σ φ((q_p − x)/h) over a chunk of finite values (the second pass)."""
    x = np.asarray(values, dtype=float)
    total = 0.0
    for start in range(0, x.size, _CHUNK):
        with np.errstate(over="ignore"):  # a value too far for a double adds φ(∞) = 0
            u = (estimate.value - x[start:start + _CHUNK]) / estimate.bandwidth
            total += float(np.exp(-0.5 * u * u).sum())
    return total / math.sqrt(2.0 * math.pi)


def _spread(estimate: QuantileEstimate) -> str:
    return "narrowly" if estimate.bandwidth < 1.0 else "widely"


def finish_quantile(spec, tally, estimate: QuantileEstimate | None):
    """The summary of a quantile metric; HistoryError when its numbers cannot be used."""
    from fourfold.engine import quantile
    from fourfold.history.summary import MetricSummary

    values = tally.values
    if values.n == 0 or estimate is None:
        raise HistoryError(f"column {spec.column!r} has no values (every cell is empty)")
    if values.n < 2 or not values.m2 > 0 or not estimate.bandwidth > 0:
        raise HistoryError(
            f"column {spec.column!r} has the same value ({values.mean:g}) on almost every row: "
            "its density at the quantile cannot be estimated"
        )
    density = tally.kernel / values.n / estimate.bandwidth  # n·h alone may overflow
    sd = math.sqrt(spec.level * (1.0 - spec.level)) / density if density > 0 else math.inf
    if not (math.isfinite(density) and 0 < sd < math.inf):
        raise HistoryError(
            f"column {spec.column!r}: its values are spread so {_spread(estimate)} (kernel "
            f"bandwidth {estimate.bandwidth:.3g}) that the density at the quantile is beyond "
            "what a double holds; rescale the column (e.g. to other units)"
        )
    sd = float(quantile.unit_sd(spec.level, density))
    parts = {"quantile_level": float(spec.level), "density": density, "exact": estimate.exact}
    return MetricSummary(spec.name, spec.kind, values.n, tally.rows - values.n, estimate.value,
                         sd, parts=parts)
