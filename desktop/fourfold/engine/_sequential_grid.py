"""Recursive numerical integration over the sequential z statistics of a group sequential test.

The statistics Z_1, …, Z_K observed at information fractions t_1 < … < t_K = 1 are those of a
Brownian motion with drift: the score S_k = Z_k √t_k has independent normal increments with mean
``drift · (t_k − t_{k−1})`` and variance ``t_k − t_{k−1}``, so that Z_K ~ N(drift, 1) at the end.
The sub-density of Z_k over paths that have not stopped before look k is carried on a grid with
Simpson's rule weights and propagated by a matrix-vector product with the normal transition
kernel (Armitage, McPherson & Rowe 1969; Jennison & Turnbull 2000, ch. 19). The probability of
crossing a boundary at look k is integrated directly from the previous look's sub-density with
the normal distribution function, which needs no grid of its own.

Nothing here checks arguments; :mod:`fourfold.engine.sequential` does.

References
----------
Armitage, P., McPherson, C. K. & Rowe, B. C. (1969). Repeated significance tests on
accumulating data. *Journal of the Royal Statistical Society A* 132:235–244.

Jennison, C. & Turnbull, B. W. (2000). *Group Sequential Methods with Applications to Clinical
Trials*. Chapman & Hall/CRC, section 19.2 (the grid and Simpson's rule weights).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from scipy.special import ndtr

_INV_SQRT_2PI = 1.0 / np.sqrt(2.0 * np.pi)

GRID_SIZE = 24
"""Grid points per unit of the paper's ``r``; the grid has about 12·r points per look."""


class Density(NamedTuple):
    """Sub-density of Z_k over the paths still running after look k, on a Simpson grid.

    ``mass`` is grid weight × density, so ``mass.sum()`` is the probability of continuing.
    """

    z: np.ndarray
    mass: np.ndarray
    t: float


def _points(mean: float, lo: float, hi: float, r: int) -> np.ndarray:
    """Jennison & Turnbull's (2000, §19.2.1) grid around ``mean``, cut to ``(lo, hi)``."""
    i = np.arange(1, 6 * r, dtype=float)
    x = np.where(
        i < r,
        mean - 3.0 - 4.0 * np.log(r / i),
        np.where(
            i <= 5 * r,
            mean - 3.0 + 3.0 * (i - r) / (2.0 * r),
            mean + 3.0 + 4.0 * np.log(r / (6 * r - i)),
        ),
    )
    inner = x[(x > lo) & (x < hi)]
    head = [lo] if lo > x[0] else []
    tail = [hi] if hi < x[-1] else []
    return np.concatenate([head, inner, tail])


def _simpson(points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Insert midpoints and return (nodes, Simpson's rule weights) over ``points``."""
    n = points.size
    nodes = np.empty(2 * n - 1)
    nodes[0::2] = points
    nodes[1::2] = 0.5 * (points[:-1] + points[1:])
    widths = np.diff(points)
    weights = np.zeros_like(nodes)
    weights[0:-1:2] += widths / 6.0
    weights[2::2] += widths / 6.0
    weights[1::2] = 4.0 * widths / 6.0
    return nodes, weights


def _shift(before: Density, t: float, drift: float) -> tuple[np.ndarray, float]:
    """Mean of the score at fraction ``t`` given each node, and the increment's sd."""
    step = t - before.t
    return before.z * np.sqrt(before.t) + drift * step, np.sqrt(step)


def exceed(before: Density | None, t: float, drift: float, c: float) -> float:
    """P(no stop before this look, Z ≥ c at fraction ``t``)."""
    if before is None:
        return float(ndtr(drift * np.sqrt(t) - c))
    mean, sd = _shift(before, t, drift)
    return float(before.mass @ ndtr((mean - c * np.sqrt(t)) / sd))


def exceed_slope(before: Density | None, t: float, drift: float, c: float) -> float:
    """d/d(drift) of :func:`exceed` with the boundaries held fixed.

    The derivative of a path's likelihood in the drift is its score S − drift·t, so the slope
    is E[(S_k − drift·t_k) 1{still running, Z_k ≥ c}], split into the part carried by the
    previous look's score and the part of the last increment (σ φ(a) for a normal increment).
    """
    if before is None:
        a = drift * np.sqrt(t) - c
        return float(np.sqrt(t) * np.exp(-0.5 * a * a) * _INV_SQRT_2PI)
    mean, sd = _shift(before, t, drift)
    a = (mean - c * np.sqrt(t)) / sd
    score = before.z * np.sqrt(before.t) - drift * before.t
    return float(before.mass @ (score * ndtr(a) + sd * np.exp(-0.5 * a * a) * _INV_SQRT_2PI))


def below(before: Density | None, t: float, drift: float, c: float) -> float:
    """P(no stop before this look, Z < c at fraction ``t``)."""
    if before is None:
        return float(ndtr(c - drift * np.sqrt(t)))
    mean, sd = _shift(before, t, drift)
    return float(before.mass @ ndtr((c * np.sqrt(t) - mean) / sd))


def advance(
    before: Density | None, t: float, drift: float, lo: float, hi: float, r: int = GRID_SIZE
) -> Density:
    """Sub-density at fraction ``t`` of the paths that continue, Z in ``(lo, hi)``.

    ``lo``/``hi`` may be infinite; the grid then ends where the normal tails are negligible
    (about 3 + 4·ln r standard deviations from the mean).
    """
    centre = drift * np.sqrt(t)
    if not lo < hi:
        return Density(np.zeros(1), np.zeros(1), t)
    nodes, weights = _simpson(_points(centre, lo, hi, r))
    if before is None:
        density = np.exp(-0.5 * (nodes - centre) ** 2) * _INV_SQRT_2PI
    else:
        mean, sd = _shift(before, t, drift)
        u = (nodes[:, None] * np.sqrt(t) - mean[None, :]) / sd
        kernel = np.exp(-0.5 * u * u) * (_INV_SQRT_2PI * np.sqrt(t) / sd)
        density = kernel @ before.mass
    return Density(nodes, weights * density, t)


def crossings(
    fractions: np.ndarray, upper: np.ndarray, lower: np.ndarray, drift: float, r: int = GRID_SIZE
) -> tuple[np.ndarray, np.ndarray, float]:
    """Per-look probabilities of a first crossing above ``upper`` and below ``lower``.

    A path stops at the first look where Z ≥ upper or Z < lower (either may be ±inf). The third
    result is the slope of the total upper-crossing probability in the drift (boundaries fixed).
    """
    up = np.zeros(fractions.size)
    down = np.zeros(fractions.size)
    slope = 0.0
    state: Density | None = None
    for k, t in enumerate(fractions):
        up[k] = exceed(state, t, drift, upper[k])
        down[k] = below(state, t, drift, lower[k])
        slope += exceed_slope(state, t, drift, upper[k])
        if k + 1 < fractions.size:
            state = advance(state, t, drift, lower[k], upper[k], r)
    return up, down, slope
