"""Means: the difference of two arm means, known (z) or estimated (t) common sd.

The estimate d̂ = x̄_t − x̄_c has variance σ²(1/n_c + 1/n_t) = σ²(1 + 1/r)/n_c with
allocation ratio r = n_t/n_c, under H0 and H1 alike.

References
----------
Cohen, J. (1988) *Statistical Power Analysis for the Behavioral Sciences*, 2nd ed., ch. 2.
Lehr, R. (1992) Sixteen s-squared over d-squared. *Statistics in Medicine* 11:1099–1102.

Examples
--------
>>> import numpy as np
>>> d, s0, s1, c = moments("z", 10.0, 1.0, 0.0, 2.0, 1.0)
>>> float(d), round(float(s0), 4), float(c)
(1.0, 2.8284, 0.0)
"""

import numpy as np


def moments(method, baseline, effect, margin, sd, ratio):
    """Distance from H0 and per-unit sds of the estimate under H0 and H1.

    Returns
    -------
    tuple
        ``(distance, sd_h0, sd_h1, correction)``: arrays, the sd of d̂ is ``sd_h*/√n_c``;
        ``correction`` is the float 0.0 (no continuity correction for means).
    """
    s = sd * np.sqrt(1.0 + 1.0 / ratio)
    return effect - margin, s, s, 0.0


def domain(baseline, effect, margin, sd):
    """Per-element conditions that make the input impossible, with the message for each."""
    return [(~(sd > 0), "sd must be greater than 0")]


def effect_bounds(baseline, margin, sign):
    """Open interval of possible effects on the side ``sign`` (+1 above, −1 below) of margin."""
    inf = np.full(np.shape(baseline), np.inf)
    return (margin, margin + inf) if sign > 0 else (margin - inf, margin)
