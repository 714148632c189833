"""Ratios of two per-unit means (items per order, clicks per visit): the delta method.

The unit of randomisation (a visitor) is not the unit of the ratio's denominator (an order).
Each unit i of an arm brings a numerator X_i (items) and a denominator Y_i (orders); the
metric is R = E[X]/E[Y], estimated by the ratio of sums R̂ = X̄/Ȳ. By the delta method
n·var(R̂) → σ_R² = (σ_X² − 2R·ρ·σ_X·σ_Y + R²·σ_Y²)/μ_Y², the variance of the linearised
unit value (X − R·Y)/μ_Y (Deng, Knoblich & Lu 2018). :func:`unit_sd` gives σ_R, the per-unit
sd the solvers take for ``kind="ratio"``; the test is then a z test of R̂_t − R̂_c.

The treatment is taken to add δ per unit of the denominator (X_t = X + δ·Y: each order gets
δ more items), which moves R by δ and leaves the linearised value, so σ_R, unchanged: the
same variance in both arms under H0 and H1, as for a mean.

References
----------
Deng, A., Knoblich, U. & Lu, J. (2018) Applying the delta method in metric analytics: a
practical guide with novel ideas. *KDD 2018*, 233–242.
Kohavi, R., Tang, D. & Xu, Y. (2020) *Trustworthy Online Controlled Experiments*, Cambridge
UP, ch. 18 (ratio metrics and the delta method).

Examples
--------
Items per order 2.6, with 0.034 orders per visitor (sd 0.19), 0.088 items per visitor
(sd 0.61) and a correlation of 0.8 between a visitor's items and orders:

>>> round(float(unit_sd(2.6, 0.034, 0.61, 0.19, 0.8)), 3)
10.766
>>> float(unit_sd(2.6, 0.0, 0.61, 0.19, 0.8))
Traceback (most recent call last):
...
ValueError: denominator (its mean per unit) must be greater than 0
"""

import numpy as np

from . import _inputs, mean

METHOD = "delta"


def _checks(a):
    return [
        (~(a["denominator"] > 0), "denominator (its mean per unit) must be greater than 0"),
        (~(a["numerator_sd"] >= 0), "numerator sd must be at least 0"),
        (~(a["denominator_sd"] >= 0), "denominator sd must be at least 0"),
        (~((a["correlation"] >= -1) & (a["correlation"] <= 1)),
         "correlation must be between -1 and 1"),
    ]


def unit_sd_and_reasons(ratio, denominator, numerator_sd, denominator_sd, correlation):
    """σ_R per unit (see the module text) and the reason per element where there is none.

    Parameters
    ----------
    ratio : array_like
        R = μ_X/μ_Y, the metric's baseline (the control arm's ratio of means).
    denominator : array_like
        μ_Y, the denominator's mean per unit (> 0).
    numerator_sd, denominator_sd : array_like
        σ_X and σ_Y, the per-unit sds of numerator and denominator (≥ 0).
    correlation : array_like
        ρ between a unit's numerator and denominator, in [−1, 1].

    Returns
    -------
    sd : numpy.ndarray
        σ_R, nan where a reason is given.
    reasons : numpy.ndarray
        Object array, ``""`` where ``sd`` is computed.

    Examples
    --------
    >>> sd, why = unit_sd_and_reasons(2.0, [1.0, 1.0], [1.0, 2.0], [0.5, 1.0], [0.0, 1.0])
    >>> sd.round(4).tolist(), why.tolist()
    ([1.4142, nan], ['', 'numerator and denominator move in lockstep: the delta-method \
variance is 0 (check their sds and correlation)'])
    """
    inputs = dict(ratio=ratio, denominator=denominator, numerator_sd=numerator_sd,
                  denominator_sd=denominator_sd, correlation=correlation)
    a, reasons = _inputs.checked(inputs, _checks)
    with np.errstate(all="ignore"):
        r, sx, sy = a["ratio"], a["numerator_sd"], a["denominator_sd"]
        # (σ_X − Rρσ_Y)² + R²σ_Y²(1 − ρ²): the quadratic form, never negative for |ρ| ≤ 1.
        lean = sx - r * a["correlation"] * sy
        var = lean * lean + r * r * sy * sy * (1.0 - a["correlation"] ** 2)
        sd = np.sqrt(var) / a["denominator"]
    flat = (reasons == "") & ~(sd > 0)
    reasons[flat] = ("numerator and denominator move in lockstep: the delta-method variance is "
                     "0 (check their sds and correlation)")
    return np.where(reasons == "", sd, np.nan), reasons


def unit_sd(ratio, denominator, numerator_sd, denominator_sd, correlation):
    """σ_R = √(σ_X² − 2Rρσ_Xσ_Y + R²σ_Y²)/μ_Y, the per-unit sd of a ratio of means.

    Parameters are those of :func:`unit_sd_and_reasons`.

    Returns
    -------
    numpy.ndarray
        σ_R (``var(R̂) = σ_R²/n`` for n units); nan where impossible (array calls).

    Raises
    ------
    ValueError
        A scalar call with impossible input.

    References
    ----------
    Deng, Knoblich & Lu (2018).

    Examples
    --------
    >>> round(float(unit_sd(1.0, 2.0, 1.0, 1.0, 0.0)), 4)
    0.7071
    """
    sd, reasons = unit_sd_and_reasons(ratio, denominator, numerator_sd, denominator_sd,
                                      correlation)
    scalar = _inputs.is_scalar(ratio, denominator, numerator_sd, denominator_sd, correlation)
    return _inputs.finish(sd, reasons, scalar)


def moments(method, baseline, effect, margin, sd, ratio):
    """Distance from H0 and per-unit sds under H0 and H1: those of a mean's z test."""
    return mean.moments(method, baseline, effect, margin, sd, ratio)


def domain(baseline, effect, margin, sd):
    """Per-element conditions that make the input impossible, with the message for each."""
    return [(~(sd > 0), "sd (the ratio's delta-method sd per unit) must be greater than 0")]


effect_bounds = mean.effect_bounds
