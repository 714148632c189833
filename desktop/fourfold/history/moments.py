"""Numerically stable, mergeable moments of one column and co-moments of two.

Each chunk of a file is summarised by a two-pass computation on the chunk (its mean first, then
the sum of squared deviations from that mean), and chunk summaries are combined with the
pairwise update of Chan, Golub & LeVeque. Merging one value at a time is Welford's update. The
naive ``Σx² − (Σx)²/n`` is never used: it cancels catastrophically when the mean is large
compared with the spread.

References
----------
Welford, B. P. (1962). Note on a method for calculating corrected sums of squares and
products. *Technometrics* 4(3):419–420.

Chan, T. F., Golub, G. H. & LeVeque, R. J. (1983). Algorithms for computing the sample
variance: analysis and recommendations. *The American Statistician* 37(3):242–247.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Moments:
    """Count, mean and sum of squared deviations (``m2``) of a set of values.

    Examples
    --------
    >>> left = Moments.of([1.0, 2.0, 3.0])
    >>> right = Moments.of([4.0, 5.0])
    >>> both = left.merge(right)
    >>> both.n, both.mean, both.variance
    (5, 3.0, 2.5)
    """

    n: int = 0
    mean: float = 0.0
    m2: float = 0.0

    @classmethod
    def of(cls, values) -> Moments:
        """Moments of an array of finite values (two passes over the array)."""
        x = np.asarray(values, dtype=np.float64)
        n = int(x.size)
        if n == 0:
            return cls()
        mean = float(x.mean())
        dev = x - mean
        return cls(n, mean, float(np.sum(dev * dev)))

    @classmethod
    def from_summary(cls, n: int, mean: float, variance: float) -> Moments:
        """Moments from a count, a mean and a sample variance (as a database reports them)."""
        n = int(n)
        if n <= 0:
            return cls()
        return cls(n, float(mean), float(variance) * (n - 1) if n > 1 else 0.0)

    def merge(self, other: Moments) -> Moments:
        """Moments of the union of the two sets of values (Chan, Golub & LeVeque 1983)."""
        if other.n == 0:
            return self
        if self.n == 0:
            return other
        n = self.n + other.n
        delta = other.mean - self.mean
        mean = self.mean + delta * (other.n / n)
        m2 = self.m2 + other.m2 + delta * delta * (self.n * other.n / n)
        return Moments(n, mean, m2)

    @property
    def variance(self) -> float:
        """Sample variance (divisor n − 1); nan for fewer than two values."""
        return self.m2 / (self.n - 1) if self.n > 1 else math.nan

    @property
    def sd(self) -> float:
        """Sample standard deviation; nan for fewer than two values."""
        return math.sqrt(self.variance) if self.n > 1 else math.nan


@dataclass(frozen=True)
class CoMoments:
    """Joint moments of paired values (x, y): both marginals and the co-moment ``cxy``.

    ``cxy`` is the sum of the products of the deviations from the two means; the sample
    covariance is ``cxy / (n − 1)``.

    Examples
    --------
    >>> both = CoMoments.of([1.0, 2.0, 3.0], [2.0, 4.0, 7.0])
    >>> round(both.covariance, 6), round(both.correlation, 6)
    (2.5, 0.993399)
    >>> both == CoMoments.of([1.0], [2.0]).merge(CoMoments.of([2.0, 3.0], [4.0, 7.0]))
    True
    """

    x: Moments = Moments()
    y: Moments = Moments()
    cxy: float = 0.0

    @property
    def n(self) -> int:
        """Number of pairs."""
        return self.x.n

    @classmethod
    def of(cls, x_values, y_values) -> CoMoments:
        """Joint moments of two equally long arrays of finite values."""
        x = np.asarray(x_values, dtype=np.float64)
        y = np.asarray(y_values, dtype=np.float64)
        if x.shape != y.shape:
            raise ValueError(f"x and y must have the same length, not {x.size} and {y.size}")
        if x.size == 0:
            return cls()
        mx, my = float(x.mean()), float(y.mean())
        dx, dy = x - mx, y - my
        return cls(
            Moments(int(x.size), mx, float(np.sum(dx * dx))),
            Moments(int(y.size), my, float(np.sum(dy * dy))),
            float(np.sum(dx * dy)),
        )

    @classmethod
    def from_summary(
        cls, n: int, mean_x: float, mean_y: float, var_x: float, var_y: float, cov: float
    ) -> CoMoments:
        """Joint moments from a count, two means, two sample variances and a covariance."""
        n = int(n)
        if n <= 0:
            return cls()
        scale = n - 1 if n > 1 else 0.0
        return cls(
            Moments.from_summary(n, mean_x, var_x),
            Moments.from_summary(n, mean_y, var_y),
            float(cov) * scale,
        )

    def merge(self, other: CoMoments) -> CoMoments:
        """Joint moments of the union of the two sets of pairs (Chan, Golub & LeVeque 1983)."""
        if other.n == 0:
            return self
        if self.n == 0:
            return other
        n = self.n + other.n
        dx = other.x.mean - self.x.mean
        dy = other.y.mean - self.y.mean
        cxy = self.cxy + other.cxy + dx * dy * (self.n * other.n / n)
        return CoMoments(self.x.merge(other.x), self.y.merge(other.y), cxy)

    @property
    def covariance(self) -> float:
        """Sample covariance (divisor n − 1); nan for fewer than two pairs."""
        return self.cxy / (self.n - 1) if self.n > 1 else math.nan

    @property
    def correlation(self) -> float:
        """Pearson correlation; nan when either side has no spread."""
        denominator = math.sqrt(self.x.m2 * self.y.m2)
        return self.cxy / denominator if denominator > 0 else math.nan

    def ratio(self) -> float:
        """Ratio of sums Σy / Σx (= mean y / mean x); nan when Σx is zero."""
        return self.y.mean / self.x.mean if self.x.mean != 0 else math.nan

    def ratio_sd(self) -> float:
        """Per-unit standard deviation of the ratio of sums Σy / Σx by the delta method.

        With R = ȳ / x̄, Var(R̂) ≈ (s_y² − 2R s_xy + R² s_x²) / (n x̄²); the value returned is
        the square root of ``n · Var(R̂)``, so that ``sd² / n`` is the variance of the ratio
        estimate, as a mean row with that sd expects (Deng, Knoblich & Lu 2018, eq. for the
        ratio of two means; Kohavi, Tang & Xu 2020, ch. 18).

        Examples
        --------
        >>> pairs = CoMoments.of([1.0, 2.0, 1.0, 2.0], [1.0, 5.0, 2.0, 4.0])
        >>> round(pairs.ratio(), 6), round(pairs.ratio_sd(), 6)
        (2.0, 0.544331)
        """
        if self.x.mean == 0 or self.n < 2:
            return math.nan
        r = self.ratio()
        var = self.y.variance - 2.0 * r * self.covariance + r * r * self.x.variance
        return math.sqrt(max(var, 0.0)) / abs(self.x.mean)
