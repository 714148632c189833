"""Proportions: the difference p_t − p_c of two binomial proportions.

Methods (allocation ratio r = n_t/n_c, variances per control unit, so var(d̂) = s²/n_c):

``pooled``
    H0 variance from the proportions restricted to H0 — the pooled p̄ = (p_c + r·p_t)/(1 + r)
    when the margin is 0 (Fleiss, Levin & Paik 2003, ch. 4), the Farrington–Manning
    restricted estimates otherwise; H1 variance p_c(1 − p_c) + p_t(1 − p_t)/r.
``unpooled``
    The H1 variance under H0 as well (Wald test).
``arcsine``
    Cohen's h = 2·asin√p_t − 2·asin√p_c, variance (1 + 1/r) (Cohen 1988, ch. 6). With a
    margin m the control term is 2·asin√(p_c + m), whose variance by the delta method is
    p_c(1 − p_c) / (q(1 − q)) per control unit with q = p_c + m (1 when m = 0).
``pooled-cc``
    ``pooled`` with the continuity correction ½(1/n_c + 1/n_t); solved for n it gives the
    formula of Fleiss, Tytun & Ury (1980).

References
----------
Fleiss, J. L., Levin, B. & Paik, M. C. (2003) *Statistical Methods for Rates and
Proportions*, 3rd ed., Wiley, ch. 4.
Fleiss, J. L., Tytun, A. & Ury, H. K. (1980) A simple approximation for calculating sample
sizes for comparing independent proportions. *Biometrics* 36:343–346.
Farrington, C. P. & Manning, G. (1990) Test statistics and sample size formulae for
comparative binomial trials with null hypothesis of non-zero risk difference or non-unity
relative risk. *Statistics in Medicine* 9:1447–1454.
Cohen, J. (1988) *Statistical Power Analysis for the Behavioral Sciences*, 2nd ed., ch. 6.

Examples
--------
>>> d, s0, s1, c = moments("pooled", 0.10, 0.05, 0.0, None, 1.0)
>>> round(float(s0), 6), round(float(s1), 6)
(0.467707, 0.466369)
"""

import numpy as np


def restricted(p_c, p_t, margin, ratio):
    """Maximum-likelihood proportions (control, treatment) under H0: p_t − p_c = margin.

    The closed form of Farrington & Manning (1990), evaluated at the expected proportions;
    with margin 0 it is the pooled proportion in both arms (the cubic is then solved only for
    the elements whose margin is not 0).

    Examples
    --------
    >>> [round(float(p), 4) for p in restricted(0.1, 0.2, 0.0, 1.0)]
    [0.15, 0.15]
    """
    pooled = np.asarray((p_c + ratio * p_t) / (1.0 + ratio))
    zero = np.equal(margin, 0)
    if zero.all():
        return pooled, pooled
    p_c, p_t, margin, ratio, pooled, zero = np.broadcast_arrays(p_c, p_t, margin, ratio,
                                                                pooled, zero)
    other = ~zero
    p_c0, p_t0 = pooled.copy(), pooled.copy()
    t_fm = _farrington_manning(p_c[other], p_t[other], margin[other], ratio[other])
    p_t0[other] = t_fm
    p_c0[other] = t_fm - margin[other]
    return p_c0, p_t0


def _farrington_manning(p_c, p_t, margin, ratio):
    """The restricted treatment proportion: the root of the likelihood's cubic in [0, 1]."""
    p1, p2, delta = p_t, p_c, margin
    theta = 1.0 / ratio
    a = 1.0 + theta
    b = -(1.0 + theta + p1 + theta * p2 + delta * (theta + 2.0))
    c = delta * delta + delta * (2.0 * p1 + theta + 1.0) + p1 + theta * p2
    d = -p1 * delta * (1.0 + delta)
    v = b**3 / (3.0 * a) ** 3 - b * c / (6.0 * a * a) + d / (2.0 * a)
    radius = np.sqrt(np.maximum(b * b / (3.0 * a) ** 2 - c / (3.0 * a), 0.0))
    u = np.where(v < 0, -1.0, 1.0) * radius
    with np.errstate(divide="ignore", invalid="ignore"):
        w = (np.pi + np.arccos(np.clip(v / u**3, -1.0, 1.0))) / 3.0
    return 2.0 * u * np.cos(w) - b / (3.0 * a)


def moments(method, baseline, effect, margin, sd, ratio):
    """Distance from H0, per-unit sds of the estimate under H0 and H1, continuity term.

    Returns
    -------
    tuple
        ``(distance, sd_h0, sd_h1, correction)``; the correction c enters the statistic as
        c/n_c: an array c = (1 + 1/r)/2 for ``pooled-cc``, else the float 0.0.
    """
    p_c = baseline
    p_t = baseline + effect
    if method == "arcsine":
        shifted = p_c + margin
        distance = 2.0 * (np.arcsin(np.sqrt(p_t)) - np.arcsin(np.sqrt(shifted)))
        control = p_c * (1.0 - p_c) / (shifted * (1.0 - shifted))
        s = np.sqrt(control + 1.0 / ratio) + 0.0 * distance
        return distance, s, s, 0.0
    s1 = np.sqrt(p_c * (1.0 - p_c) + p_t * (1.0 - p_t) / ratio)
    if method == "unpooled":
        s0 = s1
    else:
        c0, t0 = restricted(p_c, p_t, margin, ratio)
        s0 = np.sqrt(c0 * (1.0 - c0) + t0 * (1.0 - t0) / ratio)
    if method != "pooled-cc":
        return effect - margin, s0, s1, 0.0
    return effect - margin, s0, s1, 0.5 * (1.0 + 1.0 / ratio) + np.zeros_like(s1)


def domain(baseline, effect, margin, sd):
    """Per-element conditions that make the input impossible, with the message for each."""
    checks = [
        (
            ~((baseline > 0) & (baseline < 1)),
            "baseline must be between 0 and 1 (exclusive) for a proportion",
        )
    ]
    if effect is not None:
        p_t = baseline + effect
        checks.append(
            (
                ~((p_t > 0) & (p_t < 1)),
                "baseline + effect (the treatment proportion) must be between 0 and 1 (exclusive)",
            )
        )
    p_m = baseline + margin
    checks.append(
        (~((p_m > 0) & (p_m < 1)), "baseline + margin must be between 0 and 1 (exclusive)")
    )
    return checks


def effect_bounds(baseline, margin, sign):
    """Open interval of possible effects on the side ``sign`` (+1 above, −1 below) of margin."""
    if sign > 0:
        return margin, 1.0 - baseline
    return -baseline, margin
