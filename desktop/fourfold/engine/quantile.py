"""Quantiles (p50, p95, p99 of a latency): the asymptotic variance of a sample quantile.

For n units with a continuous distribution F of density f, the sample p-quantile q̂_p is
asymptotically normal with mean q_p and variance p(1 − p)/(n·f(q_p)²) (Serfling 1980,
§2.3.3). :func:`unit_sd` gives √(p(1 − p))/f(q_p), the per-unit sd the solvers take for
``kind="quantile"``; the test is then a z test of q̂_p,t − q̂_p,c. The treatment is taken to
shift the distribution by the effect (every unit δ slower), which keeps f at the shifted
quantile and so the variance: the same in both arms under H0 and H1.

The density at the quantile comes from one of:

* history — a Gaussian kernel estimate at q_p (:func:`kernel_density`) with Silverman's
  rule-of-thumb bandwidth h = 0.9·min(s, IQR/1.34)·n^(−1/5) (Silverman 1986, eq. 3.31);
* an assumed log-normal through two percentiles of the metric, e.g. the median and the p95
  (:func:`lognormal_density`); a density given alone also fixes the log-normal through q_p
  with that density at it (:func:`lognormal_through_density`), which the simulation check
  draws from.

The normal approximation needs units beyond the quantile: with fewer than
:data:`MIN_TAIL_UNITS` expected per arm beyond q_p (``n·min(p, 1 − p)``) the closed form is
not to be trusted; check such a row by simulation.

References
----------
Serfling, R. J. (1980) *Approximation Theorems of Mathematical Statistics*, Wiley, §2.3.
Silverman, B. W. (1986) *Density Estimation for Statistics and Data Analysis*, Chapman &
Hall, §3.4.2 (the rule of thumb, eq. 3.31).

Examples
--------
The p95 of a load time whose density there is 0.25 per second:

>>> round(float(unit_sd(0.95, 0.25)), 4)
0.8718
>>> round(float(lognormal_density(0.95, 3.1, 0.5, 1.7)), 4)
0.0911
"""

import numpy as np

from . import _inputs, _normal, mean

METHOD = "asymptotic"

MIN_TAIL_UNITS = 100
"""Units per arm expected beyond the quantile below which the closed form gets a caution (a
rule of thumb, no source: the simulation check tells for a given row)."""

_LEVEL = "must be between 0 and 1 (exclusive), e.g. 0.95 for the p95"


def _level_checks(a, *names):
    return [(~((a[name] > 0) & (a[name] < 1)), f"{name.replace('_', ' ')} {_LEVEL}")
            for name in names]


def unit_sd_and_reasons(level, density):
    """√(p(1 − p))/f per unit and the reason per element where there is none.

    Parameters
    ----------
    level : array_like
        p, the quantile's level in (0, 1) (0.95 for the p95).
    density : array_like
        f(q_p), the density at the quantile (> 0), per unit of the metric.

    Returns
    -------
    sd, reasons : numpy.ndarray
        The per-unit sd (nan where a reason is given) and the reasons (``""`` elsewhere).
    """
    a, reasons = _inputs.checked(dict(level=level, density=density), lambda a: [
        *_level_checks(a, "level"),
        (~(a["density"] > 0), "density at the quantile must be greater than 0"),
    ])
    with np.errstate(all="ignore"):
        p = a["level"]
        sd = np.sqrt(p * (1.0 - p)) / a["density"]
    return np.where(reasons == "", sd, np.nan), reasons


def unit_sd(level, density):
    """√(p(1 − p))/f(q_p): the per-unit sd of a sample p-quantile (Serfling 1980, §2.3).

    Returns
    -------
    numpy.ndarray
        The sd (``var(q̂_p) = sd²/n``); nan where impossible (array calls).

    Raises
    ------
    ValueError
        A scalar call with impossible input.

    Examples
    --------
    >>> round(float(unit_sd(0.5, 1 / (2 * 3.141592653589793) ** 0.5)), 6)  # normal median
    1.253314
    """
    return _inputs.finish(*unit_sd_and_reasons(level, density), _inputs.is_scalar(level, density))


def lognormal_fit_and_reasons(level, value, second_level, second_value):
    """μ and σ of the log-normal through two percentiles, and the reasons where none.

    The log-normal with P(X ≤ value) = level and P(X ≤ second_value) = second_level has
    σ = (ln second_value − ln value)/(z₂ − z₁) and μ = ln value − σ·z₁ with z = Φ⁻¹(level).

    Returns
    -------
    mu, sigma, reasons : numpy.ndarray
    """
    inputs = dict(level=level, value=value, second_level=second_level,
                  second_value=second_value)

    def checks(a):
        return [
            *_level_checks(a, "level", "second_level"),
            (a["level"] == a["second_level"],
             "second level must differ from the quantile's level"),
            (~(a["value"] > 0), "the quantile must be greater than 0 for a log-normal"),
            (~(a["second_value"] > 0), "second value must be greater than 0 for a log-normal"),
        ]

    a, reasons = _inputs.checked(inputs, checks)
    with np.errstate(all="ignore"):
        z1, z2 = _normal.quantile(a["level"]), _normal.quantile(a["second_level"])
        sigma = (np.log(a["second_value"]) - np.log(a["value"])) / (z2 - z1)
        mu = np.log(a["value"]) - sigma * z1
    order = (reasons == "") & ~(sigma > 0)
    reasons[order] = ("the higher level must have the higher value (the two percentiles do not "
                      "fit a log-normal)")
    ok = reasons == ""
    return np.where(ok, mu, np.nan), np.where(ok, sigma, np.nan), reasons


def lognormal_density_and_reasons(level, value, second_level, second_value):
    """The log-normal's density at ``value`` (see :func:`lognormal_density`) and reasons."""
    mu, sigma, reasons = lognormal_fit_and_reasons(level, value, second_level, second_value)
    with np.errstate(all="ignore"):
        z = _normal.quantile(np.broadcast_to(np.asarray(level, dtype=float), sigma.shape))
        density = _normal.pdf(z) / (np.asarray(value, dtype=float) * sigma)
    return np.where(reasons == "", density, np.nan), reasons


def lognormal_density(level, value, second_level, second_value):
    """Density at the quantile of the log-normal through two of the metric's percentiles.

    Parameters
    ----------
    level, value : array_like
        The quantile: its level p in (0, 1) and its value q_p (> 0).
    second_level, second_value : array_like
        A second percentile of the same metric, e.g. 0.5 and the median.

    Returns
    -------
    numpy.ndarray
        f(q_p) = φ(Φ⁻¹(p))/(q_p·σ); nan where impossible (array calls).

    Raises
    ------
    ValueError
        A scalar call with impossible input.

    Examples
    --------
    A log-normal with median e⁰ = 1 and σ = 1 has its p95 at e^1.6449 = 5.1803:

    >>> round(float(lognormal_density(0.95, 5.180252, 0.5, 1.0)), 6)
    0.019909
    """
    scalar = _inputs.is_scalar(level, value, second_level, second_value)
    return _inputs.finish(*lognormal_density_and_reasons(level, value, second_level,
                                                         second_value), scalar)


def lognormal_through_density(level, value, density):
    """μ and σ of the log-normal with quantile ``value`` at ``level`` and ``density`` there.

    σ = φ(Φ⁻¹(p))/(q_p·f) and μ = ln q_p − σ·Φ⁻¹(p); nan where ``value`` or ``density`` is not
    positive or ``level`` is outside (0, 1).

    Examples
    --------
    >>> mu, sigma = lognormal_through_density(0.5, 1.0, 0.398942)
    >>> round(float(mu), 6), round(float(sigma), 4)
    (0.0, 1.0)
    """
    p, q, f = (np.asarray(v, dtype=float) for v in (level, value, density))
    with np.errstate(all="ignore"):
        z = _normal.quantile(p)
        sigma = _normal.pdf(z) / (q * f)
        mu = np.log(q) - sigma * z
        ok = (p > 0) & (p < 1) & (q > 0) & (f > 0)
    return np.where(ok, mu, np.nan), np.where(ok, sigma, np.nan)


def silverman_bandwidth(n, sd, iqr):
    """Silverman's rule of thumb h = 0.9·min(s, IQR/1.34)·n^(−1/5) (eq. 3.31).

    An IQR of 0 (more than half of the values tied) falls back to the sd.

    Examples
    --------
    >>> round(float(silverman_bandwidth(1000, 1.0, 1.349)), 4)
    0.2261
    """
    n, sd, iqr = (np.asarray(v, dtype=float) for v in (n, sd, iqr))
    spread = np.where(iqr > 0, np.minimum(sd, iqr / 1.34), sd)
    return 0.9 * spread * n ** -0.2


def kernel_density(values, at, bandwidth=None):
    """Gaussian kernel density estimate of ``values`` at the points ``at``.

    Parameters
    ----------
    values : array_like
        The sample (finite numbers, at least 2 and not all equal).
    at : array_like
        Where to estimate the density (e.g. the sample's p-quantile).
    bandwidth : float, optional
        h; by default Silverman's rule (:func:`silverman_bandwidth`) with the sample sd
        (divisor n − 1) and the IQR of numpy's default percentiles.

    Returns
    -------
    numpy.ndarray
        f̂(at) = (1/(n·h)) Σ φ((at − x_i)/h), of the shape of ``at``.

    Raises
    ------
    ValueError
        For fewer than 2 values, values that are not finite or all equal.

    References
    ----------
    Silverman (1986), §3.4.2.

    Examples
    --------
    >>> x = np.random.default_rng(1).standard_normal(200_000)
    >>> round(float(kernel_density(x, 0.0)), 2)  # φ(0) = 0.3989
    0.4
    """
    x = np.asarray(values, dtype=float).ravel()
    if x.size < 2 or not np.all(np.isfinite(x)) or np.ptp(x) == 0:
        raise ValueError("values must hold at least 2 finite numbers that are not all equal")
    if bandwidth is None:
        low, high = np.percentile(x, [25.0, 75.0])
        bandwidth = float(silverman_bandwidth(x.size, x.std(ddof=1), high - low))
    points = np.asarray(at, dtype=float)
    flat = points.reshape(-1)
    total = np.zeros(flat.size)
    for start in range(0, x.size, 65_536):  # bounded memory for long samples
        u = (flat[:, None] - x[None, start:start + 65_536]) / bandwidth
        total += _normal.pdf(u).sum(axis=1)
    return (total / (x.size * bandwidth)).reshape(points.shape)


def moments(method, baseline, effect, margin, sd, ratio):
    """Distance from H0 and per-unit sds under H0 and H1: those of a mean's z test."""
    return mean.moments(method, baseline, effect, margin, sd, ratio)


def domain(baseline, effect, margin, sd):
    """Per-element conditions that make the input impossible, with the message for each."""
    return [(~(sd > 0), "sd (the quantile's per-unit sd) must be greater than 0")]


effect_bounds = mean.effect_bounds
