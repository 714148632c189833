"""Dunnett's many-to-one comparisons: k treatment arms, each tested against one control.

With n_t = r·n_c units in each treatment arm, the k test statistics share the control arm's
mean and are correlated, corr(Z_i, Z_j) = ρ = r/(1 + r) (½ for equal arms). Dunnett's
critical value c keeps the family-wise error at α: P(max Z_i > c) = α one-sided,
P(max |Z_i| > c) = α two-sided, under H0. With Z_i = √ρ·W + √(1 − ρ)·E_i (W, E_i independent
standard normals) the probability is one integral over W,

    P(max Z_i ≤ c) = E_W[Φ((c − √ρ·W)/√(1 − ρ))^k],

computed here by composite Gauss–Legendre quadrature; for Student statistics with ν degrees
of freedom (Dunnett's tables) c scales by S = √(χ²_ν/ν), a second integral over ln S. Because
ρ > 0, c lies below Šidák's and Bonferroni's critical values, so the test needs fewer units.
The level of each single comparison that c implies, 2·(1 − Φ(c)) two-sided, is what a plan's α
column shows.

References
----------
Dunnett, C. W. (1955) A multiple comparison procedure for comparing several treatments with a
control. *JASA* 50:1096–1121.
Dunnett, C. W. (1964) New tables for multiple comparisons with a control. *Biometrics*
20:482–491.
Hochberg, Y. & Tamhane, A. C. (1987) *Multiple Comparison Procedures*, Wiley, ch. 5 (the
one-factor representation of equicorrelated normals).

Examples
--------
Two arms against one control, equal allocation, two-sided α = 0.05 (Dunnett 1964 tabulates
2.21 for infinite degrees of freedom):

>>> round(float(critical_value(0.05, 2)), 4)
2.2121
>>> round(float(per_comparison_alpha(0.05, 2)), 5)
0.02696
"""

import numpy as np
from scipy import special

from . import _inputs, _normal, catalog, roots, tdist


def _legendre(low, high, panels, points):
    """Composite Gauss–Legendre nodes and weights on [low, high]."""
    x, w = np.polynomial.legendre.leggauss(points)
    edges = np.linspace(low, high, panels + 1)
    half = 0.5 * np.diff(edges)
    mid = 0.5 * (edges[1:] + edges[:-1])
    return (mid[:, None] + half[:, None] * x).ravel(), (half[:, None] * w).ravel()


_W, _W_WEIGHTS = _legendre(-9.0, 9.0, 36, 16)
_W_WEIGHTS = _W_WEIGHTS * _normal.pdf(_W)
_S_PANELS, _S_POINTS = 8, 16
_S_TAIL = 1e-15


def _scale_nodes(df):
    """Nodes and weights (summing to 1) of S = √(χ²_ν/ν), per element of ``df``: (m, q)."""
    t, w = _legendre(0.0, 1.0, _S_PANELS, _S_POINTS)
    low = 0.5 * np.log(special.chdtri(df, 1.0 - _S_TAIL) / df)
    high = 0.5 * np.log(special.chdtri(df, _S_TAIL) / df)
    log_s = low[:, None] + (high - low)[:, None] * t[None, :]
    half = 0.5 * df[:, None]
    log_density = (np.log(2.0) + half * np.log(half) - special.gammaln(half)
                   + df[:, None] * log_s - half * np.exp(2.0 * log_s))
    weights = (high - low)[:, None] * w[None, :] * np.exp(log_density)
    return np.exp(log_s), weights / weights.sum(axis=1, keepdims=True)


def _normal_error(c, k, rho, two):
    """P(some |Z_i| > c) (two-sided) or P(some Z_i > c) under H0; arrays of equal shape."""
    a = np.sqrt(rho)[..., None]
    b = np.sqrt(1.0 - rho)[..., None]
    c = c[..., None]
    tail = _normal.sf((c - a * _W) / b)
    tail = tail + np.where(two[..., None], _normal.cdf((-c - a * _W) / b), 0.0)
    with np.errstate(divide="ignore"):
        miss = -np.expm1(k[..., None] * np.log1p(-np.minimum(tail, 1.0)))
    return miss @ _W_WEIGHTS


def _error(c, k, rho, two, df):
    """Family-wise error at critical value ``c`` (1-d arrays); Student where df is finite."""
    out = np.empty(c.shape)
    normal = ~np.isfinite(df)
    if normal.any():
        out[normal] = _normal_error(c[normal], k[normal], rho[normal], two[normal])
    student = ~normal
    if student.any():
        s, weights = _scale_nodes(df[student])
        grid = c[student, None] * s
        shape = grid.shape
        spread = [np.broadcast_to(v[student, None], shape) for v in (k, rho, two)]
        errors = _normal_error(grid, *spread)
        out[student] = (errors * weights).sum(axis=1)
    return out


def _single(p, df):
    """Upper critical value of one comparison at tail probability ``p``."""
    z = _normal.upper_quantile(p)
    student = np.isfinite(df)
    if student.any():
        z = np.where(student, tdist.t_upper_quantile(np.where(student, df, 1.0), p), z)
    return z


_ALPHA_RULE = (lambda v: (v > 0) & (v < 1), "must be between 0 and 1 (exclusive)")
_C_RULE = (lambda v: v > 0, "must be greater than 0")


def _prepare(alpha_name, alpha, arms, ratio, alternative, df, rule=_ALPHA_RULE):
    alternatives = np.asarray(alternative, dtype=object)
    for name in np.unique(alternatives.astype(str)):
        if name not in catalog.ALTERNATIVES:
            raise ValueError(
                f"alternative must be one of {catalog.quoted(catalog.ALTERNATIVES)}, not {name!r}"
            )

    def checks(a):
        k = a["arms"]
        return [
            (~rule[0](a[alpha_name]), f"{alpha_name} {rule[1]}"),
            (~((k >= 1) & (k == np.floor(k))), "arms must be a whole number of at least 1"),
            (~(a["ratio"] > 0), "ratio must be greater than 0"),
            (~(a["df"] > 0), "df must be greater than 0"),
        ]

    values = dict(arms=arms, ratio=ratio, df=df, sides=np.where(alternatives == "two-sided", 2, 1))
    values[alpha_name] = alpha
    with np.errstate(invalid="ignore"):
        a, reasons = _inputs.checked(values, checks, infinite=("df",))
    shape = reasons.shape
    two = a["sides"].ravel() == 2
    ok = (reasons == "").ravel()
    flat = {name: np.asarray(v, dtype=float).ravel() for name, v in a.items()}
    return flat, two, ok, reasons, shape


def critical_value(alpha, arms, ratio=1.0, alternative="two-sided", df=np.inf):
    """Dunnett's critical value for ``arms`` treatment arms against one control.

    Parameters
    ----------
    alpha : array_like
        Family-wise error rate in (0, 1).
    arms : array_like
        k, the number of treatment arms (whole, ≥ 1); k = 1 is the single comparison.
    ratio : array_like
        Units of each treatment arm per control unit (> 0); the statistics' correlation is
        ratio/(1 + ratio).
    alternative : {"two-sided", "greater", "less"} or array_like of them
        One-sided tests ("greater" and "less" are mirror images) use max Z_i, two-sided tests
        max |Z_i|.
    df : array_like
        Degrees of freedom of the Student statistics; ``inf`` (the default) for z statistics,
        as an A/B test's large samples give.

    Returns
    -------
    numpy.ndarray
        c; nan where impossible (array calls).

    Raises
    ------
    ValueError
        A scalar call with impossible input, or an alternative that is not allowed.

    References
    ----------
    Dunnett (1955), Tables 1a–1b (one-sided); Dunnett (1964), Tables II–III (two-sided).

    Examples
    --------
    >>> critical_value(0.05, [1, 2, 4], alternative="greater").round(3).tolist()
    [1.645, 1.916, 2.16]
    """
    flat, two, ok, reasons, shape = _prepare("alpha", alpha, arms, ratio, alternative, df)
    out = np.full(two.size, np.nan)
    i = np.flatnonzero(ok)
    if i.size:
        a, k, r, nu, t = (flat["alpha"][i], flat["arms"][i], flat["ratio"][i], flat["df"][i],
                          two[i])
        rho = r / (1.0 + r)
        sides = np.where(t, 2.0, 1.0)
        low = _single(a / sides, nu)
        high = _single(a / (sides * k), nu)
        start = _single(-np.expm1(np.log1p(-a) / k) / sides, nu)  # Šidák's
        c = low.copy()
        many = k > 1
        j = np.flatnonzero(many)
        if j.size:
            log_alpha = np.log(a[j])

            def f(y, idx):
                jj = j[idx]
                return log_alpha[idx] - np.log(_error(y, k[jj], rho[jj], t[jj], nu[jj]))

            found, status = roots.find_root(f, start[j], 1e-3, low[j] * (1 - 1e-9),
                                            high[j] * (1 + 1e-9), ftol=1e-12)
            c[j] = found
            failed = status != roots.OK
            if failed.any():
                reasons.ravel()[i[j[failed]]] = "no critical value could be found"
        out[i] = c
    return _inputs.finish(out.reshape(shape), reasons,
                          _inputs.is_scalar(alpha, arms, ratio, alternative, df))


def per_comparison_alpha(alpha, arms, ratio=1.0, alternative="two-sided", df=np.inf):
    """The level of each single comparison that Dunnett's critical value implies.

    ``2·(1 − Φ(c))`` two-sided and ``1 − Φ(c)`` one-sided (the Student tail with finite
    ``df``); parameters as for :func:`critical_value`. It lies above Bonferroni's α/k and
    Šidák's 1 − (1 − α)^(1/k), equal to α for one arm.

    Examples
    --------
    >>> per_comparison_alpha(0.05, 3, alternative=["two-sided", "less"]).round(5).tolist()
    [0.01883, 0.0196]
    """
    c = np.asarray(critical_value(alpha, arms, ratio, alternative, df), dtype=float)
    two = np.broadcast_to(np.asarray(alternative, dtype=object) == "two-sided", c.shape)
    nu = np.broadcast_to(np.asarray(df, dtype=float), c.shape)
    with np.errstate(invalid="ignore"):
        tail = np.where(np.isfinite(nu), tdist.t_sf(np.where(np.isfinite(nu), nu, 1.0), c),
                        _normal.sf(c))
    return np.where(two, 2.0, 1.0) * tail


def family_error(c, arms, ratio=1.0, alternative="two-sided", df=np.inf):
    """The family-wise error of ``arms`` comparisons with one control at critical value c.

    The probability under H0 that at least one statistic passes ``c`` (its absolute value,
    two-sided); parameters as for :func:`critical_value`.

    Examples
    --------
    >>> round(float(family_error(2.2121, 2)), 4)
    0.05
    """
    flat, two, ok, reasons, shape = _prepare("c", c, arms, ratio, alternative, df, _C_RULE)
    out = np.full(two.size, np.nan)
    i = np.flatnonzero(ok)
    if i.size:
        r = flat["ratio"][i]
        out[i] = _error(flat["c"][i], flat["arms"][i], r / (1.0 + r), two[i], flat["df"][i])
    return _inputs.finish(out.reshape(shape), reasons,
                          _inputs.is_scalar(c, arms, ratio, alternative, df))
