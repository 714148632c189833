"""Inflation factors of group sequential designs at many pairs of α and power, for curves.

A trade-off curve with interim looks needs the inflation (maximum ÷ fixed units) of the
design at a few α or power values along it. :func:`inflations` gives them without building a
whole :class:`~fourfold.engine.sequential.SequentialDesign` per pair: each α's efficacy
boundaries are made once (and shared with the designs of :func:`~fourfold.engine.sequential.
design` at that α, which remembers them), the drift of each pair is searched from the last
pair's ratio of drifts instead of from the fixed design's, and the recursion runs on a coarser
grid (:data:`GRID_SIZE` points per unit instead of 24). The factors agree with the designs' to
about 10⁻⁴, within 5·10⁻⁴ up to 20 looks (``tests/engine/test_inflation.py``), far within
what a curve's pixel shows; a design's own point on a curve is its design's exact factor.

References
----------
Jennison, C. & Turnbull, B. W. (2000). *Group Sequential Methods with Applications to Clinical
Trials*. Chapman & Hall/CRC, ch. 19 (the grid and its accuracy in the number of points).

Examples
--------
>>> import numpy as np
>>> from fourfold.engine.sequential import design
>>> found = inflations(4, [0.05, 0.05], [0.8, 0.9])
>>> bool(abs(found[0] / design(4).inflation - 1) < 1e-4)
True
"""

from __future__ import annotations

import numpy as np
from scipy.special import ndtri

from fourfold.engine import _sequential_args as args
from fourfold.engine import sequential
from fourfold.engine._sequential_spending import spent

GRID_SIZE = 12
"""Grid points per unit of the recursion (the designs use 24)."""


def inflations(looks: int, alphas, powers, *, alternative: str = "two-sided",
               spending: str = "ld-obrien-fleming", timing=None, gamma: float | None = None,
               futility: str | None = None) -> np.ndarray:
    """The inflation factor of the design at each pair ``(alphas[k], powers[k])``.

    The other arguments are those of :func:`fourfold.engine.sequential.design` (checked as
    it checks them); a pair whose power does not exceed its one-sided α, or whose α or power
    is not in (0, 1), gives nan.

    Returns
    -------
    numpy.ndarray
        One factor per pair.

    Raises
    ------
    ValueError
        For an argument other than α and power outside its range, naming the argument.
    """
    alphas = np.atleast_1d(np.asarray(alphas, dtype=float))
    powers = np.atleast_1d(np.asarray(powers, dtype=float))
    if alternative not in sequential.ALTERNATIVES:
        raise ValueError(f"alternative must be one of {sequential.ALTERNATIVES}, got "
                         f"{alternative!r}")
    if spending not in sequential.SPENDING:
        raise ValueError(f"spending must be one of {sequential.SPENDING}, got {spending!r}")
    if futility is not None and futility not in sequential.FUTILITY:
        raise ValueError(f"futility must be None or one of {sequential.FUTILITY}, got "
                         f"{futility!r}")
    t = args.fractions(timing, args.count("looks", looks, args.MAX_LOOKS))
    gamma = args.gamma_of(gamma, (spending, futility))
    fractions = tuple(float(x) for x in t)
    two_sided = alternative == "two-sided"
    found = np.full(alphas.shape, np.nan)
    ratio = None  # the last pair's drift ÷ fixed drift: the next search starts there
    for k, (alpha, power) in enumerate(zip(alphas.tolist(), powers.tolist(), strict=True)):
        side = alpha / 2.0 if two_sided else alpha
        if not (0.0 < alpha < 1.0 and side < power < 1.0):
            continue
        upper, _ = sequential._boundaries(fractions, side, two_sided, spending, gamma,
                                          GRID_SIZE)
        floor = -upper if two_sided else np.full(t.size, -np.inf)
        fixed = float(ndtri(1.0 - side) + ndtri(power))
        steps = (None if futility is None
                 else np.diff(spent(futility, t, 1.0 - power, gamma), prepend=0.0))
        drift, _ = sequential.solve_drift(t, upper, floor, power, steps,
                                          fixed if ratio is None else fixed * ratio, GRID_SIZE)
        ratio = drift / fixed
        found[k] = ratio * ratio
    return found
