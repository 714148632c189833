"""Rates: Poisson counts per unit, normal approximation (Wald test).

Each unit contributes a count with mean λ; an arm mean has variance λ/n (Poisson) or,
when ``sd`` is given, an over-dispersed variance: sd² in control and sd²·λ_t/λ_c in
treatment (the variance-to-mean ratio sd²/λ_c is kept in both arms).  The same variance is
used under H0 and H1: var(d̂) = (v_c + v_t/r)/n_c.

References
----------
Kohavi, R., Tang, D. & Xu, Y. (2020) *Trustworthy Online Controlled Experiments*,
Cambridge UP, ch. 17 (variance of count metrics).

Examples
--------
>>> d, s0, s1, c = moments("z", 0.02, 0.002, 0.0, None, 1.0)
>>> round(float(s1), 6)
0.204939
"""

import numpy as np


def _variances(baseline, treatment, sd):
    if sd is None:
        return baseline, treatment
    v_c = sd * sd
    return v_c + 0.0 * baseline, v_c * treatment / baseline


def moments(method, baseline, effect, margin, sd, ratio):
    """Distance from H0 and per-unit sds of the estimate under H0 and H1 (equal here).

    The fourth item, the continuity correction, is the float 0.0.
    """
    v_c, v_t = _variances(baseline, baseline + effect, sd)
    s = np.sqrt(v_c + v_t / ratio)
    return effect - margin, s, s, 0.0


def domain(baseline, effect, margin, sd):
    """Per-element conditions that make the input impossible, with the message for each."""
    checks = [(~(baseline > 0), "baseline must be greater than 0 for a rate")]
    if sd is not None:
        checks.append((~(sd > 0), "sd must be greater than 0"))
    if effect is not None:
        message = "baseline + effect (the treatment rate) must be greater than 0"
        checks.append((~(baseline + effect > 0), message))
    checks.append((~(baseline + margin > 0), "baseline + margin must be greater than 0"))
    return checks


def effect_bounds(baseline, margin, sign):
    """Open interval of possible effects on the side ``sign`` (+1 above, −1 below) of margin."""
    if sign > 0:
        return margin, margin + np.full(np.shape(baseline), np.inf)
    return -baseline + 0.0 * margin, margin
