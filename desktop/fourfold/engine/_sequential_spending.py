"""Error-spending functions: how much of a one-sided error probability is used by fraction t.

Each function returns the cumulative probability spent at information fractions ``t`` for a
total ``level`` (one boundary's α, or β for a futility boundary); all reach ``level`` at t = 1.

References
----------
Lan, K. K. G. & DeMets, D. L. (1983). Discrete sequential boundaries for clinical trials.
*Biometrika* 70:659–663 (the O'Brien–Fleming-type and Pocock-type functions).

Hwang, I. K., Shih, W. J. & DeCani, J. S. (1990). Group sequential designs using a family of
type I error probability spending functions. *Statistics in Medicine* 9:1439–1445.
"""

from __future__ import annotations

import numpy as np
from scipy.special import ndtr, ndtri

SPENDING_FUNCTIONS = ("ld-obrien-fleming", "ld-pocock", "hsd")
CLASSIC = ("obrien-fleming", "pocock")


def spent(family: str, t: np.ndarray, level: float, gamma: float) -> np.ndarray:
    """Cumulative error spent by fractions ``t`` under ``family`` for a total of ``level``.

    ``ld-obrien-fleming``: 2 − 2Φ(z₁₋ₗ/₂ / √t); ``ld-pocock``: level · ln(1 + (e − 1)t);
    ``hsd``: level · (1 − e^(−γt)) / (1 − e^(−γ)), and level · t at γ = 0.
    """
    t = np.asarray(t, dtype=float)
    if family == "ld-obrien-fleming":
        out = 2.0 * ndtr(-ndtri(1.0 - level / 2.0) / np.sqrt(t))
    elif family == "ld-pocock":
        out = level * np.log1p((np.e - 1.0) * t)
    elif gamma == 0.0:
        out = level * t
    else:
        out = level * np.expm1(-gamma * t) / np.expm1(-gamma)
    return np.where(t >= 1.0, level, np.minimum(out, level))


def boundary_shape(family: str, t: np.ndarray) -> np.ndarray:
    """Shape g_k of a classic boundary C·g_k: 1 (Pocock 1977) or 1/√t_k (O'Brien & Fleming 1979)."""
    t = np.asarray(t, dtype=float)
    return np.ones_like(t) if family == "pocock" else 1.0 / np.sqrt(t)
