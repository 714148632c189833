"""Standard normal distribution on arrays, from ``scipy.special`` (no ``scipy.stats``).

References
----------
Abramowitz, M. & Stegun, I. A. (1964) *Handbook of Mathematical Functions*, §26.2.

Examples
--------
>>> round(float(upper_quantile(0.025)), 6)
1.959964
>>> round(float(cdf(0.0)), 3)
0.5
"""

import numpy as np
from scipy import special

_INV_SQRT_2PI = 1.0 / np.sqrt(2.0 * np.pi)


def cdf(x):
    """Φ(x), the lower-tail probability."""
    return special.ndtr(x)


def sf(x):
    """1 − Φ(x), computed as Φ(−x) so that small upper tails keep their precision."""
    return special.ndtr(np.negative(x))


def pdf(x):
    """φ(x), the density."""
    x = np.asarray(x, dtype=float)
    return _INV_SQRT_2PI * np.exp(-0.5 * x * x)


def quantile(p):
    """Φ⁻¹(p)."""
    return special.ndtri(p)


def upper_quantile(p):
    """z with 1 − Φ(z) = p, i.e. −Φ⁻¹(p); precise for small upper tails p."""
    return -special.ndtri(p)
