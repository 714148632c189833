"""Numerically stable, mergeable moments of one column and co-moments of two.

Each chunk of a file is summarised by a two-pass computation on the chunk (its mean first, then
the sum of squared deviations from that mean), and chunk summaries are combined with the
pairwise update of Chan, Golub & LeVeque. Merging one value at a time is Welford's update. The
naive ``Σx² − (Σx)²/n`` is never used: it cancels catastrophically when the mean is large
compared with the spread.

Values far from 1 (beyond 2^±400, e.g. near 1e308 or 1e-300) are summed in a power-of-two
scale kept beside the moments (``exponent``), so that squares neither overflow nor underflow
and the sd is finite wherever the true one is: the sd of ``[1e308, -1e308]`` is 1.41e308.
Scaling by a power of two is exact; ordinary values (the scale 2⁰) give the same bits as an
unscaled computation.

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

SAFE_EXPONENT = 400
"""Values whose largest magnitude lies within 2^±SAFE_EXPONENT are summed unscaled."""


_NO_SIZE = -1100
"""The size of a set of zeros (below any double's power of two)."""


def _scale_of(power: int) -> int:
    """The power-of-two scale for values of size 2^power (0: none needed)."""
    return power if SAFE_EXPONENT < abs(power) and power > _NO_SIZE else 0


def _mean(x: np.ndarray, constant: bool) -> float:
    """The mean of a chunk; a chunk of one value repeated has that value (numpy's sum of n
    copies divided by n may miss it by an ulp, which would give it a spread)."""
    return float(x[0]) if constant else float(x.mean())


def _exponent(top: float) -> int:
    """The power-of-two scale for values whose largest magnitude is ``top`` (0: none)."""
    if top == 0 or not math.isfinite(top):
        return 0
    return _scale_of(math.frexp(top)[1])


def _rescale(value: float, exponent: int, target: int) -> float:
    """A value in units of 2^exponent, in units of 2^target."""
    return value if exponent == target else math.ldexp(value, exponent - target)


@dataclass(frozen=True)
class Moments:
    """Count, mean and sum of squared deviations (``m2``) of a set of values.

    ``m2`` is in units of ``4**exponent`` (``exponent`` is 0 unless the values are far from 1,
    see the module docstring); ``mean`` is always the plain mean.

    Examples
    --------
    >>> left = Moments.of([1.0, 2.0, 3.0])
    >>> right = Moments.of([4.0, 5.0])
    >>> both = left.merge(right)
    >>> both.n, both.mean, both.variance
    (5, 3.0, 2.5)
    >>> f"{Moments.of([1e308, -1e308]).sd:.6g}"  # √2 · 1e308
    '1.41421e+308'
    """

    n: int = 0
    mean: float = 0.0
    m2: float = 0.0
    exponent: int = 0

    @classmethod
    def of(cls, values) -> Moments:
        """Moments of an array of finite values (two passes over the array)."""
        x = np.asarray(values, dtype=np.float64)
        n = int(x.size)
        if n == 0:
            return cls()
        high, low = float(x.max()), float(x.min())
        exponent = _exponent(max(high, -low))
        if exponent:
            x = np.ldexp(x, -exponent)
        mean = _mean(x, high == low)
        dev = x - mean
        return cls(n, math.ldexp(mean, exponent), float(np.sum(dev * dev)), exponent)

    @classmethod
    def from_summary(cls, n: int, mean: float, variance: float) -> Moments:
        """Moments from a count, a mean and a sample variance (as a database reports them)."""
        n = int(n)
        if n <= 0:
            return cls()
        if n == 1:
            return cls(n, float(mean), 0.0)
        variance = float(variance)
        m2 = variance * (n - 1)
        if math.isfinite(m2) or not math.isfinite(variance):
            return cls(n, float(mean), m2)
        exponent = math.frexp(math.sqrt(variance))[1]
        return cls(n, float(mean), math.ldexp(variance, -2 * exponent) * (n - 1), exponent)

    def _size(self) -> int:
        """The power of two of the values' size: of the larger of |mean| and the rms
        deviation (:data:`_NO_SIZE` when every value is 0)."""
        sizes = [math.frexp(self.mean)[1]] if self.mean else []
        if self.m2 > 0:
            sizes.append(self.exponent + math.frexp(math.sqrt(self.m2 / self.n))[1])
        return max(sizes, default=_NO_SIZE)

    def scaled_mean(self, exponent: int) -> float:
        """The mean in units of 2^exponent."""
        return math.ldexp(self.mean, -exponent) if exponent else self.mean

    def scaled_m2(self, exponent: int) -> float:
        """``m2`` in units of 4^exponent."""
        return _rescale(self.m2, 2 * self.exponent, 2 * exponent)

    def merge(self, other: Moments) -> Moments:
        """Moments of the union of the two sets of values (Chan, Golub & LeVeque 1983)."""
        if other.n == 0:
            return self
        if self.n == 0:
            return other
        n = self.n + other.n
        e = _scale_of(max(self._size(), other._size()))
        if e == 0 and self.exponent == other.exponent:
            delta = other.mean - self.mean
            mean = self.mean + delta * (other.n / n)
            m2 = self.m2 + other.m2 + delta * delta * (self.n * other.n / n)
            return Moments(n, mean, m2)
        left, right = self.scaled_mean(e), other.scaled_mean(e)
        delta = right - left
        mean = math.ldexp(left + delta * (other.n / n), e)
        m2 = (self.scaled_m2(e) + other.scaled_m2(e) + delta * delta * (self.n * other.n / n))
        return Moments(n, mean, m2, e)

    @property
    def variance(self) -> float:
        """Sample variance (divisor n − 1); nan for fewer than two values (inf beyond the
        largest double even where the sd is finite)."""
        if self.n < 2:
            return math.nan
        scaled = self.m2 / (self.n - 1)
        return _ldexp(scaled, 2 * self.exponent)

    @property
    def sd(self) -> float:
        """Sample standard deviation; nan for fewer than two values."""
        if self.n < 2:
            return math.nan
        return _ldexp(math.sqrt(self.m2 / (self.n - 1)), self.exponent)

    @property
    def scaled_variance(self) -> float:
        """The sample variance in units of 4^exponent (nan for fewer than two values)."""
        return self.m2 / (self.n - 1) if self.n > 1 else math.nan


def _ldexp(value: float, exponent: int) -> float:
    """``value · 2^exponent``, inf instead of an OverflowError."""
    if not exponent:
        return value
    try:
        return math.ldexp(value, exponent)
    except OverflowError:
        return math.copysign(math.inf, value)


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
        x_high, x_low, y_high, y_low = (float(v) for v in (x.max(), x.min(), y.max(), y.min()))
        ex = _exponent(max(x_high, -x_low))
        ey = _exponent(max(y_high, -y_low))
        if ex:
            x = np.ldexp(x, -ex)
        if ey:
            y = np.ldexp(y, -ey)
        mx, my = _mean(x, x_high == x_low), _mean(y, y_high == y_low)
        dx, dy = x - mx, y - my
        return cls(
            Moments(int(x.size), math.ldexp(mx, ex), float(np.sum(dx * dx)), ex),
            Moments(int(y.size), math.ldexp(my, ey), float(np.sum(dy * dy)), ey),
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
        x = Moments.from_summary(n, mean_x, var_x)
        y = Moments.from_summary(n, mean_y, var_y)
        scale = n - 1 if n > 1 else 0.0
        cxy = _rescale(float(cov), 0, x.exponent + y.exponent) * scale
        return cls(x, y, cxy)

    def merge(self, other: CoMoments) -> CoMoments:
        """Joint moments of the union of the two sets of pairs (Chan, Golub & LeVeque 1983)."""
        if other.n == 0:
            return self
        if self.n == 0:
            return other
        n = self.n + other.n
        x, y = self.x.merge(other.x), self.y.merge(other.y)
        ex, ey = x.exponent, y.exponent
        dx = other.x.scaled_mean(ex) - self.x.scaled_mean(ex)
        dy = other.y.scaled_mean(ey) - self.y.scaled_mean(ey)
        cxy = (self._scaled_cxy(ex + ey) + other._scaled_cxy(ex + ey)
               + dx * dy * (self.n * other.n / n))
        return CoMoments(x, y, cxy)

    def _scaled_cxy(self, exponent: int) -> float:
        return _rescale(self.cxy, self.x.exponent + self.y.exponent, exponent)

    @property
    def covariance(self) -> float:
        """Sample covariance (divisor n − 1); nan for fewer than two pairs."""
        if self.n < 2:
            return math.nan
        return _ldexp(self.cxy / (self.n - 1), self.x.exponent + self.y.exponent)

    @property
    def correlation(self) -> float:
        """Pearson correlation; nan when either side has no spread."""
        denominator = math.sqrt(self.x.m2 * self.y.m2)
        return self.cxy / denominator if denominator > 0 else math.nan

    def ratio(self) -> float:
        """Ratio of sums Σy / Σx (= mean y / mean x); nan when Σx is zero."""
        if self.x.mean == 0:
            return math.nan
        try:
            return self.y.mean / self.x.mean
        except OverflowError:
            return math.copysign(math.inf, self.y.mean) * math.copysign(1.0, self.x.mean)

    def ratio_sd(self) -> float:
        """Per-unit standard deviation of the ratio of sums Σy / Σx by the delta method.

        With R = ȳ / x̄, Var(R̂) ≈ (s_y² − 2R s_xy + R² s_x²) / (n x̄²); the value returned is
        the square root of ``n · Var(R̂)``, so that ``sd² / n`` is the variance of the ratio
        estimate, as a mean row with that sd expects (Deng, Knoblich & Lu 2018, eq. for the
        ratio of two means; Kohavi, Tang & Xu 2020, ch. 18). Computed in the scales of x and y,
        so it is finite wherever the true value is.

        Examples
        --------
        >>> pairs = CoMoments.of([1.0, 2.0, 1.0, 2.0], [1.0, 5.0, 2.0, 4.0])
        >>> round(pairs.ratio(), 6), round(pairs.ratio_sd(), 6)
        (2.0, 0.544331)
        """
        if self.x.mean == 0 or self.n < 2:
            return math.nan
        ex, ey = self.x.exponent, self.y.exponent
        mean_x = self.x.scaled_mean(ex)
        r = self.y.scaled_mean(ey) / mean_x
        var = (self.y.scaled_variance - 2.0 * r * (self.cxy / (self.n - 1))
               + r * r * self.x.scaled_variance)
        return _ldexp(math.sqrt(max(var, 0.0)) / abs(mean_x), ey - ex)
