"""Design helpers: multiple-comparison α, variance factors, units and days.

References
----------
Dunnett, C. W. (1955) A multiple comparison procedure for comparing several treatments with a
control. *JASA* 50:1096–1121 (see :mod:`fourfold.engine.dunnett`; the √k allocation).
Šidák, Z. (1967) Rectangular confidence regions for the means of multivariate normal
distributions. *JASA* 62:626–633.
Deng, A., Xu, Y., Kohavi, R. & Walker, T. (2013) Improving the sensitivity of online
controlled experiments by utilizing pre-experiment data. *WSDM* (CUPED).
Kish, L. (1965) *Survey Sampling*, Wiley (design effect 1 + (m − 1)·ICC).
Eldridge, S. M., Ashby, D. & Kerry, S. (2006) Sample size for cluster randomized trials:
effect of coefficient of variation of cluster size and analysis method. *Int. J. Epidemiol.*
35:1292–1300.

Examples
--------
>>> round(float(adjusted_alpha(0.05, 2, "sidak")), 6)
0.025321
>>> float(duration_days(total_units(1000.0, 1.0, 2), 420.0, whole_weeks=True))
14.0
"""

import numpy as np

from . import dunnett

CORRECTIONS = ("none", "bonferroni", "sidak", "dunnett")
ALLOCATIONS = ("fixed", "sqrt-k")


def _scalar_or_array(values, *inputs):
    return values.reshape(()) if all(np.ndim(a) == 0 for a in inputs) else values


def _check(name, ok, message, scalar):
    if scalar and not bool(np.all(ok)):
        raise ValueError(f"{name} {message}")


def adjusted_alpha(alpha, comparisons, method, *, ratio=1.0, alternative="two-sided"):
    """Per-comparison α that keeps the family-wise error at ``alpha``.

    Parameters
    ----------
    alpha : array_like
        Family-wise α in (0, 1).
    comparisons : array_like
        Number of comparisons (≥ 1); for ``dunnett`` the treatment arms compared with one
        control (a whole number).
    method : {"none", "bonferroni", "sidak", "dunnett"}
        ``bonferroni``: α/k; ``sidak``: 1 − (1 − α)^(1/k); ``dunnett``: the level of one
        comparison at Dunnett's critical value for k arms against a shared control
        (:func:`fourfold.engine.dunnett.per_comparison_alpha`, normal statistics); ``none``: α.
    ratio : array_like
        ``dunnett`` only: units of each treatment arm per control unit.
    alternative : str or array_like of str
        ``dunnett`` only: one-sided and two-sided tests have different critical values.

    Returns
    -------
    numpy.ndarray
        The adjusted α; nan where an array element is out of range.

    Examples
    --------
    >>> adjusted_alpha([0.05, 0.1], 2, "bonferroni").tolist()
    [0.025, 0.05]
    >>> round(float(adjusted_alpha(0.05, 2, "dunnett")), 5)
    0.02696
    """
    if method not in CORRECTIONS:
        choices = ", ".join(f"'{c}'" for c in CORRECTIONS)
        raise ValueError(f"method must be one of {choices}, not {method!r}")
    a = np.asarray(alpha, dtype=float)
    k = np.asarray(comparisons, dtype=float)
    scalar = a.ndim == 0 and k.ndim == 0
    _check("alpha", (a > 0) & (a < 1), "must be between 0 and 1 (exclusive)", scalar)
    _check("comparisons", k >= 1, "must be at least 1", scalar)
    with np.errstate(invalid="ignore"):
        if method == "bonferroni":
            out = a / k
        elif method == "sidak":
            out = -np.expm1(np.log1p(-a) / k)
        elif method == "dunnett":
            whole = (k >= 1) & (k == np.floor(k))
            _check("comparisons", whole, "must be a whole number of arms for Dunnett", scalar)
            out = dunnett.per_comparison_alpha(np.where((a > 0) & (a < 1), a, 0.5),
                                               np.where(whole, k, 1.0), ratio, alternative)
        else:
            out = a + 0.0 * k
        out = np.where((a > 0) & (a < 1) & (k >= 1), out, np.nan)
    return _scalar_or_array(np.asarray(out, dtype=float), a, k)


def allocation_ratio(arms, allocation="fixed", ratio=1.0):
    """Units of each treatment arm per control unit under an allocation rule.

    Parameters
    ----------
    arms : array_like
        k, the number of treatment arms (≥ 1).
    allocation : {"fixed", "sqrt-k"}
        ``fixed``: ``ratio`` as given; ``sqrt-k``: the control gets √k times the units of each
        arm, ratio 1/√k. It minimises the total n_c + k·n_t at a fixed variance of each
        comparison, σ²(1/n_c + 1/n_t) (a Lagrange multiplier gives n_c/n_t = √k; Dunnett
        1955 recommends it for his procedure).
    ratio : array_like
        The ratio used by ``fixed``.

    Examples
    --------
    >>> allocation_ratio([1, 2, 4], "sqrt-k").tolist()
    [1.0, 0.7071067811865475, 0.5]
    """
    if allocation not in ALLOCATIONS:
        choices = ", ".join(f"'{c}'" for c in ALLOCATIONS)
        raise ValueError(f"allocation must be one of {choices}, not {allocation!r}")
    k, r = np.asarray(arms, dtype=float), np.asarray(ratio, dtype=float)
    _check("arms", k >= 1, "must be at least 1", k.ndim == 0 and r.ndim == 0)
    with np.errstate(invalid="ignore"):
        out = np.where(k >= 1, 1.0 / np.sqrt(k), np.nan) if allocation == "sqrt-k" else r + 0 * k
    return _scalar_or_array(np.asarray(out, dtype=float), k, r)


def variance_factor(rho=0.0, cluster_size=1.0, icc=0.0, cluster_cv=0.0):
    """Multiplier of the per-unit variance: (1 − ρ²)·(1 + ((cv² + 1)·m − 1)·ICC).

    Parameters
    ----------
    rho : array_like
        Correlation of the metric with its pre-period covariate (CUPED), in (−1, 1).
    cluster_size : array_like
        Mean number of units per randomised cluster m (≥ 1).
    icc : array_like
        Intra-cluster correlation in [0, 1].
    cluster_cv : array_like
        Coefficient of variation of cluster sizes (≥ 0).

    Returns
    -------
    numpy.ndarray
        The factor; nan where an array element is out of range.

    Examples
    --------
    >>> round(float(variance_factor(rho=0.5)), 4)
    0.75
    >>> round(float(variance_factor(cluster_size=11.0, icc=0.05)), 4)
    1.5
    """
    r, m, icc_, cv = (np.asarray(v, dtype=float) for v in (rho, cluster_size, icc, cluster_cv))
    scalar = all(v.ndim == 0 for v in (r, m, icc_, cv))
    checks = [
        ("rho", (r > -1) & (r < 1), "must be between -1 and 1 (exclusive)"),
        ("cluster_size", m >= 1, "must be at least 1"),
        ("icc", (icc_ >= 0) & (icc_ <= 1), "must be between 0 and 1"),
        ("cluster_cv", cv >= 0, "must be at least 0"),
    ]
    ok = np.ones(np.broadcast_shapes(r.shape, m.shape, icc_.shape, cv.shape), dtype=bool)
    for name, good, message in checks:
        _check(name, good, message, scalar)
        ok = ok & good
    with np.errstate(invalid="ignore", over="ignore"):  # inf for factors beyond a double
        out = (1.0 - r * r) * (1.0 + ((cv * cv + 1.0) * m - 1.0) * icc_)
    return _scalar_or_array(np.where(ok, out, np.nan), r, m, icc_, cv)


def total_units(n_control, ratio, arms):
    """All units of the test: n_c + arms·ratio·n_c (``arms`` = treatment arms).

    Examples
    --------
    >>> float(total_units(1000.0, 0.5, 2))
    2000.0
    """
    n, r, k = (np.asarray(v, dtype=float) for v in (n_control, ratio, arms))
    scalar = n.ndim == 0 and r.ndim == 0 and k.ndim == 0
    _check("n_control", n >= 0, "must be at least 0", scalar)
    _check("ratio", r > 0, "must be greater than 0", scalar)
    _check("arms", k >= 1, "must be at least 1", scalar)
    with np.errstate(invalid="ignore", over="ignore"):
        out = np.where((n >= 0) & (r > 0) & (k >= 1), n + k * r * n, np.nan)
    return _scalar_or_array(out, n, r, k)


def duration_days(total_units, daily_units, share=1.0, whole_weeks=False):
    """Days of traffic: ceil(total / (daily·share)), rounded up to whole weeks if asked.

    A quotient within 10⁻¹² (relative) above a whole number counts as that number, so
    floating-point dust never adds a day.

    Parameters
    ----------
    total_units : array_like
        Units the test needs (≥ 0).
    daily_units : array_like
        Eligible units per day (> 0).
    share : array_like
        Share of the eligible traffic in the test, in (0, 1].
    whole_weeks : bool
        Round the days up to a multiple of 7.

    Returns
    -------
    numpy.ndarray
        Days; nan where an array element is out of range or the days are beyond a double
        (e.g. a daily traffic of 1e-320 units).

    Examples
    --------
    >>> duration_days([100.0, 1000.0], 42.0, share=0.5).tolist()
    [5.0, 48.0]
    >>> duration_days([1000.0], 1e-320).tolist()
    [nan]
    """
    t, d, s = (np.asarray(v, dtype=float) for v in (total_units, daily_units, share))
    scalar = t.ndim == 0 and d.ndim == 0 and s.ndim == 0
    _check("total_units", t >= 0, "must be at least 0", scalar)
    _check("daily_units", d > 0, "must be greater than 0", scalar)
    _check("share", (s > 0) & (s <= 1), "must be greater than 0 and at most 1", scalar)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore", under="ignore"):
        raw = t / (d * s)
        days = np.ceil(raw * (1.0 - 1e-12))
        if whole_weeks:
            days = 7.0 * np.ceil(days / 7.0)
        ok = (t >= 0) & (d > 0) & (s > 0) & (s <= 1) & np.isfinite(raw)
    return _scalar_or_array(np.where(ok, days, np.nan), t, d, s)
