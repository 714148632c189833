"""Central and noncentral t tails that stay finite and exact at A/B-test scale.

``scipy.special.nctdtr`` silently returns nan for some large-df, large-noncentrality
inputs (for instance df ≈ 2·10⁶, noncentrality 6.4, t = −2.9, the far tail of a two-sided
test), loses digits at large df, and costs a few microseconds a value.  The tail here is
computed in five layers:

1. df ≥ ``NORMAL_LIMIT_DF`` (10⁴) and |t| ≤ 0.1·√df: the normal limit of T = (Z + δ)/S,
   S = √(χ²_ν/ν), with the exact mean and variance of S and the Edgeworth term for its
   skewness:
   P(T > t) = Φ(−w) + γ/6·(w² − 1)·φ(w), w = (t·E[S] − δ)/√(1 + t²·Var S),
   γ = −t³κ₃(S)/(1 + t²·Var S)^{3/2}.  Its error falls as 1/ν³: below 10⁻¹³ at ν = 10⁴
   for |t| ≤ 5.5, |δ| ≤ 8 (checked against 30-digit quadrature in the tests);
2. |δ| > ``LARGE_NONCENTRALITY`` (10³), where ``nctdtr`` turns slow, returns nan or never
   returns (δ ≈ 10⁸): 64-point Gauss–Hermite over Z of the χ² tail,
   P(T > t) = E_Z[P(t·S < Z + δ)], smooth in Z there;
3. ``QUADRATURE_DF`` (50) ≤ df < 10⁴, |δ| ≤ 40, |t| ≤ 10 (every A/B test's critical value):
   P(T > t) = E[Φ(δ − t·S)] by Gauss–Hermite quadrature (24 points below ν = 100, 16 below
   300, 12 above) in the Wilson–Hilferty
   variable z of the χ²: V/ν = (1 − 2/(9ν) + z·√(2/(9ν)))³ is nearly normal in z, so the
   integrand is the smooth Φ(δ − t·S) times the ratio of V's density to φ(z), and the
   weights are normalised to sum to one (which cancels the constant of the density). Its
   absolute error is below 10⁻¹⁵ there (checked against 30-digit quadrature in the tests),
   a tail below that is not relatively precise; five times faster than ``nctdtr``, and the
   two tails of a two-sided test share the weights (:func:`nct_sf_both`);
4. otherwise ``nctdtr`` on the side that keeps small tails precise, then its complement;
5. where both are non-finite, Gauss–Legendre quadrature of E[Φ(δ − t·S)] over the
   quantiles of χ²_ν (absolute error below 10⁻⁴, only reached at tiny ν and far tails).

Central t quantiles use the Cornish–Fisher expansion (Abramowitz & Stegun 26.7.5, four
terms) for ν ≥ 10⁴ and |z| ≤ 7, where it agrees with ``stdtrit`` to 3·10⁻¹⁵, and
``stdtrit`` elsewhere.

A screen for a solver's first look (:func:`screen_sf`, :func:`screen_quantile`) costs about
half as much: layer 3 with about half its nodes and the t quantile interpolated in 1/ν. Its
power is within :data:`SCREEN_ERROR` of the exact one where it has a value; a solver accepts a
root on it only where that bound still keeps the exact power within its tolerance.

References
----------
Johnson, N. L., Kotz, S. & Balakrishnan, N. (1995) *Continuous Univariate Distributions*,
vol. 2, 2nd ed., ch. 31 (noncentral t and its normal approximation).
Abramowitz, M. & Stegun, I. A. (1964) *Handbook of Mathematical Functions*, 26.7.5.
Wilson, E. B. & Hilferty, M. M. (1931) The distribution of chi-square. *PNAS* 17:684–688.

Examples
--------
>>> round(float(nct_sf(2.0e6, 6.4, -2.86)), 12)
1.0
>>> round(float(nct_sf(30.0, 0.0, 2.0)), 6) == round(float(t_sf(30.0, 2.0)), 6)
True
"""

import functools

import numpy as np
from scipy import special

NORMAL_LIMIT_DF = 1.0e4
_CORNISH_FISHER_Z = 7.0
_INV_SQRT_2PI = 1.0 / np.sqrt(2.0 * np.pi)

LARGE_NONCENTRALITY = 1.0e3
QUADRATURE_DF = 50.0
_QUADRATURE_NC = 40.0
_QUADRATURE_T = 10.0
_BLOCK = 1024

_SCREEN_P = 1.0e-4
_SCREEN_T = 4.0
_SCREEN_ROWS = 64
_SCREEN_NODES = 10
SCREEN_ERROR = 1.0e-11
"""Bound on the error of a power from :func:`screen_quantile` and :func:`screen_sf` against
the exact one where both are finite: about ten times the largest error on the checks' grid."""


@functools.cache
def _hermite() -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Hermite nodes and weights (summing to 1) of the large-noncentrality layer (made on
    first use: they are not needed to start the program)."""
    nodes, weights = np.polynomial.hermite_e.hermegauss(64)
    return nodes, weights / weights.sum()


@functools.cache
def _wh_bands() -> tuple[tuple[float, np.ndarray, np.ndarray], ...]:
    """(lowest ν, nodes, weights) of the quadrature's bands: fewer nodes where ν is larger and
    the integrand smoother (each band's error is below 10⁻¹⁵ on the checks' grid)."""
    return tuple((low, *np.polynomial.hermite_e.hermegauss(points))
                 for low, points in ((QUADRATURE_DF, 24), (100.0, 16), (300.0, 12)))


@functools.cache
def _screen_bands() -> tuple[tuple[float, np.ndarray, np.ndarray], ...]:
    """The bands of :func:`screen_sf`: about half the nodes of :func:`_wh_bands` (each band's
    error is below 6·10⁻¹³ on the checks' grid, |t| ≤ 4)."""
    return tuple((low, *np.polynomial.hermite_e.hermegauss(points))
                 for low, points in ((QUADRATURE_DF, 12), (100.0, 10), (150.0, 8), (800.0, 6)))


@functools.cache
def _legendre() -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Legendre nodes and weights on (0, 1) of the chi quantile quadrature."""
    nodes, weights = np.polynomial.legendre.leggauss(96)
    return 0.5 * (nodes + 1.0), 0.5 * weights


def _limit_sf(df, nc, t):
    inv = 1.0 / df
    gap = inv * (0.25 - inv * (1.0 / 32.0 + inv * (5.0 / 128.0 - inv * 21.0 / 2048.0)))
    mean = 1.0 - gap
    var = gap * (2.0 - gap)
    kappa3 = mean * inv * inv * (0.25 + 0.125 * inv)
    var_y = 1.0 + t * t * var
    w = (t * mean - nc) / np.sqrt(var_y)
    skew = -(t**3) * kappa3 / var_y**1.5
    tail = special.ndtr(-w) + skew / 6.0 * (w * w - 1.0) * _INV_SQRT_2PI * np.exp(-0.5 * w * w)
    return tail


def _quadrature_sf(df, nc, t):
    nodes, weights = _legendre()
    v = special.chdtri(df[:, None], nodes[None, :])
    s = np.sqrt(v / df[:, None])
    return (special.ndtr(nc[:, None] - t[:, None] * s) * weights).sum(axis=1)


def _chi_weights(df, nodes, weights):
    """S = √(V/ν) at the Wilson–Hilferty ``nodes`` of each ν, the nodes' weights and each
    row's sum of them: E[g(S)] ≈ Σ weights · g(S) / sum; see the module notes (layer 3).

    The log of the density ratio is the z²/2 of φ less the same square from V's density, so
    its terms of order ν z² and ν z³ cancel and it stays within a few units of 0 (no
    overflow guard is needed)."""
    third = 2.0 / (9.0 * df)[:, None]
    log_w = np.sqrt(third) * nodes
    log_w -= third
    np.log1p(log_w, out=log_w)  # w = 1 − 2/(9ν) + z·√(2/(9ν)), V/ν = w³
    half = 0.5 * df[:, None]
    found = np.expm1(3.0 * log_w)  # w³ − 1
    found *= -half
    found += (3.0 * half - 1.0) * log_w
    found += 0.5 * nodes * nodes
    np.exp(found, out=found)
    found *= weights
    log_w *= 1.5
    return np.exp(log_w, out=log_w), found, found.sum(axis=1)


def _quadrature_tails(df, nc, t, both: bool, bands=None):
    """Layer 3 of the module notes for every element: P(T_{ν,δ} > t), plus P(T_{ν,−δ} > t)
    when ``both`` (each tail clipped to [0, 1]); a few thousand rows at a time, so that the
    arrays of nodes stay in the processor's cache. ``bands`` replaces :func:`_wh_bands`."""
    out = np.empty(df.shape)
    upper = np.inf
    for low, nodes, weights in reversed(bands or _wh_bands()):
        band = np.flatnonzero((df >= low) & (df < upper))
        upper = low
        for start in range(0, band.size, _BLOCK):
            rows = band[start:start + _BLOCK]
            s, found, total = _chi_weights(df[rows], nodes, weights)
            ts, c = t[rows, None] * s, nc[rows, None]
            tail = np.clip(np.einsum("ij,ij->i", found, special.ndtr(c - ts)) / total, 0.0, 1.0)
            if both:
                tail += np.clip(np.einsum("ij,ij->i", found, special.ndtr(-c - ts)) / total,
                                0.0, 1.0)
            out[rows] = tail
    return out


def _in_quadrature(df, nc, t):
    return ((df >= QUADRATURE_DF) & (df < NORMAL_LIMIT_DF) & (np.abs(nc) <= _QUADRATURE_NC)
            & (np.abs(t) <= _QUADRATURE_T))


def _large_nc_sf(df, nc, t):
    nodes, weights = _hermite()
    m = nc[:, None] + nodes[None, :]
    ratio = m / np.where(t == 0, 1.0, t)[:, None]
    q = df[:, None] * ratio * ratio
    above = np.where(m > 0, special.chdtr(df[:, None], q), 0.0)
    below = np.where(m >= 0, 1.0, special.chdtrc(df[:, None], q))
    value = np.where(t[:, None] > 0, above, np.where(t[:, None] < 0, below, 1.0 * (m > 0)))
    return (value * weights).sum(axis=1)


def nct_sf(df, nc, t):
    """Upper tail P(T > t) of the noncentral t with ``df`` degrees of freedom.

    Parameters
    ----------
    df : array_like
        Degrees of freedom, > 0.
    nc : array_like
        Noncentrality δ.
    t : array_like
        Point at which the tail is taken.

    Returns
    -------
    numpy.ndarray
        Probabilities in [0, 1]; nan only where an input is nan.

    References
    ----------
    Johnson, Kotz & Balakrishnan (1995), ch. 31.

    Examples
    --------
    >>> round(float(nct_sf(10.0, 2.0, 1.812461)), 4)
    0.5861
    """
    df, nc, t = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (df, nc, t)))
    shape = df.shape
    df, nc, t = df.ravel(), nc.ravel(), t.ravel()
    limit = (df >= NORMAL_LIMIT_DF) & (np.abs(t) <= 0.1 * np.sqrt(df))
    if limit.all():
        return np.clip(_limit_sf(df, nc, t), 0.0, 1.0).reshape(shape)
    out = np.empty(df.shape)
    out[limit] = _limit_sf(df[limit], nc[limit], t[limit])
    quadrature = _in_quadrature(df, nc, t)
    if quadrature.any():
        out[quadrature] = _quadrature_tails(df[quadrature], nc[quadrature], t[quadrature],
                                            False)
    huge = ~limit & ~quadrature & (np.abs(nc) > LARGE_NONCENTRALITY)
    if huge.any():
        out[huge] = _large_nc_sf(df[huge], nc[huge], t[huge])
    rest = ~limit & ~quadrature & ~huge
    if rest.any():
        d, c, x = df[rest], nc[rest], t[rest]
        r = special.nctdtr(d, -c, -x)
        bad = ~np.isfinite(r)
        if bad.any():
            r[bad] = 1.0 - special.nctdtr(d[bad], c[bad], x[bad])
            bad = ~np.isfinite(r)
            usable = bad & np.isfinite(d) & np.isfinite(c) & np.isfinite(x) & (d > 0)
            if usable.any():
                r[usable] = _quadrature_sf(d[usable], c[usable], x[usable])
        out[rest] = r
    return np.clip(out, 0.0, 1.0).reshape(shape)


def nct_sf_both(df, nc, t):
    """P(T_{ν,δ} > t) + P(T_{ν,−δ} > t): the two tails of a two-sided test's power.

    Each tail is :func:`nct_sf`'s; where both fall in its quadrature layer they share the
    weights of ν (half the work).

    Examples
    --------
    >>> both = float(nct_sf_both(200.0, 2.8, 1.97))
    >>> both == float(nct_sf(200.0, 2.8, 1.97) + nct_sf(200.0, -2.8, 1.97))
    True
    """
    df, nc, t = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (df, nc, t)))
    shape = df.shape
    df, nc, t = df.ravel(), nc.ravel(), t.ravel()
    shared = _in_quadrature(df, nc, t) & ~((df >= NORMAL_LIMIT_DF)
                                           & (np.abs(t) <= 0.1 * np.sqrt(df)))
    out = np.empty(df.shape)
    if shared.any():
        out[shared] = _quadrature_tails(df[shared], nc[shared], t[shared], True)
    rest = ~shared
    if rest.any():
        d, c, x = df[rest], nc[rest], t[rest]
        tails = nct_sf(np.concatenate((d, d)), np.concatenate((c, -c)), np.concatenate((x, x)))
        out[rest] = tails[:d.size] + tails[d.size:]
    return out.reshape(shape)


def t_sf(df, t):
    """Upper tail P(T > t) of the central t (``scipy.special.stdtr``)."""
    return special.stdtr(df, np.negative(t))


def cornish_fisher(df, z):
    """Upper t quantile from the normal one, z, by the Cornish–Fisher series.

    Abramowitz & Stegun (1964) 26.7.5, four terms: accurate to 3·10⁻¹⁵ for ν ≥ 10⁴ and
    |z| ≤ 7; a smooth approximation elsewhere.

    Examples
    --------
    >>> round(float(cornish_fisher(1.0e5, 1.959964)), 6)
    1.959988
    """
    return cornish_fisher_sum(df, cornish_fisher_terms(z))


def cornish_fisher_terms(z):
    """The terms of :func:`cornish_fisher` that depend on z only: ``(z, g1, g2, g3, g4)``.

    For a solve that takes the quantile of one z at many ν (see :func:`cornish_fisher_sum`).
    """
    x = np.asarray(z, dtype=float)
    x2 = x * x
    g1 = x * (x2 + 1.0) / 4.0
    g2 = x * (3.0 + x2 * (16.0 + 5.0 * x2)) / 96.0
    g3 = x * (-15.0 + x2 * (17.0 + x2 * (19.0 + 3.0 * x2))) / 384.0
    g4 = x * (-945.0 + x2 * (-1920.0 + x2 * (1482.0 + x2 * (776.0 + 79.0 * x2)))) / 92160.0
    return x, g1, g2, g3, g4


def cornish_fisher_sum(df, terms):
    """The Cornish–Fisher quantile at ``df`` from :func:`cornish_fisher_terms`."""
    x, g1, g2, g3, g4 = terms
    inv = 1.0 / np.asarray(df, dtype=float)
    return x + inv * (g1 + inv * (g2 + inv * (g3 + inv * g4)))


def t_upper_quantile(df, p):
    """t with P(T > t) = p for the central t; precise for small p.

    Examples
    --------
    >>> round(float(t_upper_quantile(10.0, 0.025)), 6)
    2.228139
    """
    df, p = np.broadcast_arrays(np.asarray(df, dtype=float), np.asarray(p, dtype=float))
    large = df >= NORMAL_LIMIT_DF
    if not large.any():
        return -special.stdtrit(df, p)
    z = -special.ndtri(p)
    series = cornish_fisher(df, z)
    use = large & (np.abs(z) <= _CORNISH_FISHER_Z)
    if use.all():
        return series
    out = np.where(use, series, 0.0)
    rest = ~use
    out[rest] = -special.stdtrit(df[rest], p[rest])
    return out


def screen_sf(df, nc, t, both: bool):
    """:func:`nct_sf` (``both``: :func:`nct_sf_both`) within 6·10⁻¹³ where |t| ≤ 4 in the
    quadrature layer (3 of the module notes), for a cheap first look; nan elsewhere.

    The quadrature of layer 3 with about half its nodes (12, 10, 8 and 6 from ν = 50, 100,
    150 and 800): about half the cost. A solver may accept a root on this value when it is
    within its tolerance by more than :data:`SCREEN_ERROR`, since the exact value then is too.

    Examples
    --------
    >>> exact = float(nct_sf_both(60.0, 2.8, 2.0))
    >>> abs(float(screen_sf(np.array([60.0]), np.array([2.8]), np.array([2.0]), True)[0])
    ...     - exact) < SCREEN_ERROR
    True
    """
    out = np.full(df.shape, np.nan)
    inside = _in_quadrature(df, nc, t) & (np.abs(t) <= _SCREEN_T)
    if inside.any():
        out[inside] = _quadrature_tails(df[inside], nc[inside], t[inside], both,
                                        _screen_bands())
    return out


def screen_quantile(df, p):
    """:func:`t_upper_quantile` within 10⁻¹⁴ for 50 ≤ ν < 10⁴ (the quadrature layer, where
    :func:`screen_sf` has values) and 10⁻⁴ ≤ p ≤ ½ (nan elsewhere), at a fraction of the
    cost of ``stdtrit`` for many ν of one p.

    The quantile is smooth in 1/ν: for each p of at least :data:`_SCREEN_ROWS` elements it is
    the Chebyshev interpolant in 1/ν through ``stdtrit`` at :data:`_SCREEN_NODES` points of the
    elements' range (its error is below 10⁻¹⁴ on the checks' grid); ``stdtrit`` itself for the
    others.

    Examples
    --------
    >>> round(float(screen_quantile(np.array([60.0]), np.array([0.025]))[0]), 6)
    2.000298
    """
    out = np.full(df.shape, np.nan)
    usable = (df >= QUADRATURE_DF) & (df < NORMAL_LIMIT_DF) & (p >= _SCREEN_P) & (p <= 0.5)
    if not usable.any():
        return out
    kept = np.flatnonzero(usable)
    levels, level = np.unique(p[kept], return_inverse=True)
    for k, value in enumerate(levels):
        rows = kept[level == k] if levels.size > 1 else kept
        x = 1.0 / df[rows]
        low, high = float(x.min()), float(x.max())
        if rows.size < _SCREEN_ROWS or high <= low:
            out[rows] = -special.stdtrit(df[rows], value)
            continue
        centre, half = 0.5 * (low + high), 0.5 * (high - low)
        points = np.cos(np.pi * (np.arange(_SCREEN_NODES) + 0.5) / _SCREEN_NODES)
        quantiles = -special.stdtrit(1.0 / (centre + half * points), value)
        coefficients = np.polynomial.chebyshev.chebfit(points, quantiles, _SCREEN_NODES - 1)
        out[rows] = np.polynomial.chebyshev.chebval((x - centre) / half, coefficients)
    return out
