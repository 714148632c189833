"""Recursive numerical integration over the sequential z statistics of a group sequential test.

The statistics Z_1, …, Z_K observed at information fractions t_1 < … < t_K = 1 are those of a
Brownian motion with drift: the score S_k = Z_k √t_k has independent normal increments with mean
``drift · (t_k − t_{k−1})`` and variance ``t_k − t_{k−1}``, so that Z_K ~ N(drift, 1) at the end.
The sub-density of Z_k over paths that have not stopped before look k is carried on a grid with
Simpson's rule weights and propagated by a matrix-vector product with the normal transition
kernel (Armitage, McPherson & Rowe 1969; Jennison & Turnbull 2000, ch. 19). The probability of
crossing a boundary at look k is integrated directly from the previous look's sub-density with
the normal distribution function, which needs no grid of its own.

A :class:`Look` computes each node's mean and the increment's sd once for every level asked
about at that look, and builds the transition kernel in place, in two arrays of grid × grid
that each thread keeps for all its kernels (fresh pages cost more than the arithmetic). The
arithmetic is that of the formulas, operation for operation and in the same order, so that the
results do not depend on how they are computed: keep it so (a rewrite for speed is checked bit
for bit, ``np.array_equal`` on saved designs).

Nothing here checks arguments; :mod:`fourfold.engine.sequential` does.

References
----------
Armitage, P., McPherson, C. K. & Rowe, B. C. (1969). Repeated significance tests on
accumulating data. *Journal of the Royal Statistical Society A* 132:235–244.

Jennison, C. & Turnbull, B. W. (2000). *Group Sequential Methods with Applications to Clinical
Trials*. Chapman & Hall/CRC, section 19.2 (the grid and Simpson's rule weights).
"""

from __future__ import annotations

import functools
import math
import threading
from typing import NamedTuple

import numpy as np
from scipy.special import ndtr

_INV_SQRT_2PI = 1.0 / np.sqrt(2.0 * np.pi)

GRID_SIZE = 24
"""Grid points per unit of the paper's ``r``; the grid has about 12·r points per look."""


class Density(NamedTuple):
    """Sub-density of Z_k over the paths still running after look k, on a Simpson grid.

    ``score`` is each node's score S = Z·√t and ``mass`` its grid weight × density, so
    ``mass.sum()`` is the probability of continuing.
    """

    score: np.ndarray
    mass: np.ndarray
    t: float


@functools.lru_cache(maxsize=8)
def _offsets(r: int) -> tuple[np.ndarray, int]:
    """The grid of :func:`_points` around 0 as offsets from ``mean ∓ 3`` (read-only), and how
    many of them are taken from ``mean − 3``."""
    i = np.arange(1, 6 * r, dtype=float)
    head, middle, tail = i[i < r], i[(i >= r) & (i <= 5 * r)], i[i > 5 * r]
    offsets = np.concatenate([
        -(4.0 * np.log(r / head)), 3.0 * (middle - r) / (2.0 * r), 4.0 * np.log(r / (6 * r - tail)),
    ])
    offsets.setflags(write=False)
    return offsets, head.size + middle.size


def _points(mean: float, lo: float, hi: float, r: int) -> np.ndarray:
    """Jennison & Turnbull's (2000, §19.2.1) grid around ``mean``, cut to ``(lo, hi)``.

    The grid is ``mean − 3 − 4 ln(r/i)`` for i < r, ``mean − 3 + 3(i − r)/(2r)`` up to 5r and
    ``mean + 3 + 4 ln(r/(6r − i))`` above, for i = 1 … 6r − 1: an increasing sequence.
    """
    offsets, split = _offsets(r)
    x = offsets.copy()
    x[:split] += mean - 3.0
    x[split:] += mean + 3.0
    inner = x[np.searchsorted(x, lo, "right"):np.searchsorted(x, hi, "left")]
    head = [lo] if lo > x[0] else []
    tail = [hi] if hi < x[-1] else []
    return np.concatenate([head, inner, tail])


def _simpson(points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Insert midpoints and return (nodes, Simpson's rule weights) over ``points``."""
    nodes = np.empty(2 * points.size - 1)
    nodes[0::2] = points
    nodes[1::2] = 0.5 * (points[:-1] + points[1:])
    widths = points[1:] - points[:-1]
    sixth = widths / 6.0
    weights = np.empty_like(nodes)
    weights[0:-1:2] = sixth
    weights[-1] = 0.0
    weights[2::2] += sixth
    weights[1::2] = 4.0 * widths / 6.0
    return nodes, weights


_SCRATCH = threading.local()


def _scratch(rows: int, columns: int) -> tuple[np.ndarray, np.ndarray]:
    """Two arrays of ``rows`` × ``columns`` for a transition kernel, from space this thread
    keeps (grown when too small): a kernel is built, used and dropped within one
    :meth:`Look.advance`, and fresh pages for each cost more than the arithmetic."""
    size = rows * columns
    space = getattr(_SCRATCH, "space", None)
    if space is None or space.shape[1] < size:
        space = _SCRATCH.space = np.empty((2, size))
    return space[0, :size].reshape(rows, columns), space[1, :size].reshape(rows, columns)


class Look:
    """One look at fraction ``t`` after the paths of ``before`` (``None``: the first look):
    the probabilities of crossing a level there and the density of the paths that continue.

    The mean of each node's score at ``t`` and the increment's sd are computed once, for
    every level asked about.
    """

    __slots__ = ("before", "t", "drift", "root", "mean", "sd")

    def __init__(self, before: Density | None, t: float, drift: float) -> None:
        self.before, self.t, self.drift = before, t, drift
        self.root = math.sqrt(t)
        if before is not None:
            step = t - before.t
            self.mean = before.score + drift * step
            self.sd = math.sqrt(step)

    def exceed(self, c: float) -> float:
        """P(no stop before this look, Z ≥ c)."""
        if self.before is None:
            return float(ndtr(self.drift * self.root - c))
        a = self.mean - c * self.root
        a /= self.sd
        return float(self.before.mass @ ndtr(a, out=a))

    def exceed_and_slope(self, c: float) -> tuple[float, float]:
        """:meth:`exceed` and its d/d(drift) with the boundaries held fixed.

        The derivative of a path's likelihood in the drift is its score S − drift·t, so the
        slope is E[(S_k − drift·t_k) 1{still running, Z_k ≥ c}], split into the part carried by
        the previous look's score and the part of the last increment (σ φ(a) for a normal
        increment).
        """
        before, drift = self.before, self.drift
        if before is None:
            a = drift * self.root - c
            return float(ndtr(a)), float(self.root * np.exp(-0.5 * a * a) * _INV_SQRT_2PI)
        a = self.mean - c * self.root
        a /= self.sd
        up = ndtr(a)
        mass = before.mass
        score = before.score - drift * before.t
        score *= up
        a *= -0.5 * a
        return float(mass @ up), float(mass @ (score + self.sd * np.exp(a) * _INV_SQRT_2PI))

    def below(self, c: float) -> float:
        """P(no stop before this look, Z < c)."""
        if self.before is None:
            return float(ndtr(c - self.drift * self.root))
        a = c * self.root - self.mean
        a /= self.sd
        return float(self.before.mass @ ndtr(a, out=a))

    def advance(self, lo: float, hi: float, r: int = GRID_SIZE) -> Density:
        """Sub-density at this look of the paths that continue, Z in ``(lo, hi)``.

        ``lo``/``hi`` may be infinite; the grid then ends where the normal tails are negligible
        (about 3 + 4·ln r standard deviations from the mean).
        """
        root = self.root
        centre = self.drift * root
        if not lo < hi:
            return Density(np.zeros(1), np.zeros(1), self.t)
        nodes, weights = _simpson(_points(centre, lo, hi, r))
        score = nodes * root
        if self.before is None:
            density = np.exp(-0.5 * (nodes - centre) ** 2) * _INV_SQRT_2PI
        else:
            sd = self.sd
            u, kernel = _scratch(score.size, self.mean.size)
            np.subtract.outer(score, self.mean, out=u)
            u /= sd
            np.multiply(u, -0.5, out=kernel)
            kernel *= u
            np.exp(kernel, out=kernel)
            kernel *= _INV_SQRT_2PI * root / sd
            density = kernel @ self.before.mass
        density *= weights
        return Density(score, density, self.t)


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
    last = fractions.size - 1
    for k, t in enumerate(fractions.tolist()):
        look = Look(state, t, drift)
        up[k], rise = look.exceed_and_slope(upper[k])
        slope += rise
        down[k] = look.below(lower[k])
        if k < last:
            state = look.advance(lower[k], upper[k], r)
    return up, down, slope
