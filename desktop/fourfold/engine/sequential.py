"""Interim looks: group sequential boundaries, their cost in units, and the price of peeking.

A test analysed at K looks (information fractions t_1 < … < t_K = 1 of its maximum size) may
stop early when the z statistic crosses an efficacy boundary. :func:`design` computes the
boundaries, how much larger the maximum size must be than the fixed design for the same power
(``inflation``), and the expected size under H0 and H1. :func:`peeking_alpha` gives the
false-positive rate of a test that is simply checked K times at an unadjusted level.

Conventions
-----------
- Probabilities come from recursive numerical integration over the joint distribution of the
  sequential z statistics (Armitage, McPherson & Rowe 1969; Jennison & Turnbull 2000, ch. 19),
  not from simulation; α and power are accurate to better than 1e-6 (about 1e-8 for up to
  10 looks).
- Boundaries are on the z scale oriented in the direction of the alternative: with
  ``"greater"`` reject when z ≥ upper, with ``"less"`` when z ≤ −upper, and with
  ``"two-sided"`` when |z| ≥ upper. A two-sided α is split evenly over the two symmetric
  boundaries: each spends α/2 with the one-sided spending function.
- Power counts crossings in the direction of the effect only; the fixed design it is compared
  with needs a drift of z₁₋α/₂ + z₁₋β (two-sided) or z₁₋α + z₁₋β (one-sided), so that
  ``inflation`` = (drift of the sequential design / drift of the fixed design)².
- ``futility`` adds a non-binding lower boundary built by β-spending under H1: the efficacy
  boundaries ignore it (α holds whether or not the team stops for futility), while power, the
  stopping probabilities and the expected sizes assume it is obeyed. Its last look meets the
  efficacy boundary.

References
----------
Armitage, P., McPherson, C. K. & Rowe, B. C. (1969). Repeated significance tests on
accumulating data. *Journal of the Royal Statistical Society A* 132:235–244.

Pocock, S. J. (1977). Group sequential methods in the design and analysis of clinical trials.
*Biometrika* 64:191–199.

O'Brien, P. C. & Fleming, T. R. (1979). A multiple testing procedure for clinical trials.
*Biometrics* 35:549–556.

Lan, K. K. G. & DeMets, D. L. (1983). Discrete sequential boundaries for clinical trials.
*Biometrika* 70:659–663.

Hwang, I. K., Shih, W. J. & DeCani, J. S. (1990). Group sequential designs using a family of
type I error probability spending functions. *Statistics in Medicine* 9:1439–1445.

Jennison, C. & Turnbull, B. W. (2000). *Group Sequential Methods with Applications to Clinical
Trials*. Chapman & Hall/CRC, ch. 2, 7 and 19.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr, ndtri

from fourfold.engine import _sequential_grid as grid
from fourfold.engine._sequential_args import (
    ALTERNATIVES,
    DEFAULT_GAMMA,
    FUTILITY,
    GAMMA_RANGE,
    MAX_LOOKS,
    MAX_PEEKS,
    MIN_GAP,
    SPENDING,
    checked,
    count,
    probability,
)
from fourfold.engine._sequential_spending import CLASSIC, boundary_shape, spent

__all__ = ["ALTERNATIVES", "DEFAULT_GAMMA", "FUTILITY", "GAMMA_RANGE", "MAX_LOOKS", "MAX_PEEKS",
           "MIN_GAP", "SPENDING", "Boundaries", "SequentialDesign", "boundaries", "design",
           "peeking_alpha", "power_at", "solve_drift"]

_LOG_FLOOR = 1e-300


@dataclass(frozen=True, eq=False)
class SequentialDesign:
    """A group sequential design; arrays hold one value per look (read-only).

    Attributes
    ----------
    looks, alpha, power, alternative, spending, futility, gamma
        The inputs (``gamma`` is the one used when a family is ``"hsd"``, else None).
    fractions : ndarray
        Information fractions t_k of the maximum size; the last is 1.
    upper : ndarray
        Efficacy z boundary per look, oriented in the direction of the alternative.
    nominal_p : ndarray
        The p-value (two-sided for a two-sided design) below which look k rejects H0.
    lower : ndarray or None
        Futility z boundary per look (stop for futility when z < lower), None without futility.
    alpha_spent : ndarray
        Cumulative type I error spent by each look (ignoring futility); the last equals α.
    stop_h0, stop_h1 : ndarray
        Probability of stopping at each look under H0 and under the planned effect (H1),
        counting every reason to stop; each sums to 1.
    efficacy_h1 : ndarray
        Probability of stopping for efficacy at each look under H1; sums to the power.
    inflation : float
        Maximum size ÷ fixed-design size for the same α and power.
    expected_h0, expected_h1 : float
        Expected size under H0 and H1 as fractions of the fixed-design size.
    drift : float
        E[Z] at the maximum size under H1 (the fixed design's is z₁₋α/₂ + z₁₋β).
    """

    looks: int
    alpha: float
    power: float
    alternative: str
    spending: str
    futility: str | None
    gamma: float | None
    fractions: np.ndarray
    upper: np.ndarray
    nominal_p: np.ndarray
    lower: np.ndarray | None
    alpha_spent: np.ndarray
    stop_h0: np.ndarray
    stop_h1: np.ndarray
    efficacy_h1: np.ndarray
    inflation: float
    expected_h0: float
    expected_h1: float
    drift: float


def _illinois(f: Callable[[float], float], a: float, b: float, fa: float, fb: float) -> float:
    """Root of ``f`` in the bracket [a, b] (fa, fb of opposite signs) by the Illinois method."""
    if fa == 0.0:
        return a
    for _ in range(200):
        if fb == 0.0 or abs(b - a) <= 1e-12 * max(1.0, abs(b)):
            return b
        c = b - fb * (b - a) / (fb - fa)
        fc = f(c)
        if fc * fb < 0.0:
            a, fa = b, fb
        else:
            fa = fa / 2.0
        b, fb = c, fc
    return b


def _drift_root(
    evaluate: Callable[[float], tuple[float, float]], start: float, secant: bool
) -> float:
    """Root of an increasing function given with its slope: safeguarded Newton steps.

    With ``secant`` the slope is only approximate (futility boundaries move with the drift),
    so after the first step the secant through the last two values is used instead. Steps that
    leave the bracket found so far are replaced by bisection; the last point returned has been
    evaluated.
    """
    lo = hi = -1.0
    x = start
    f, slope = evaluate(x)
    previous: tuple[float, float] | None = None
    for _ in range(100):
        if abs(f) < 1e-11:
            return x
        if f < 0.0:
            lo = x
        else:
            hi = x
        if secant and previous is not None and previous[1] != f:
            new = x - f * (x - previous[0]) / (f - previous[1])
        else:
            new = x - f / slope if slope > 0.0 else math.nan
        if lo >= 0.0 and hi >= 0.0:
            if not min(lo, hi) < new < max(lo, hi):
                new = 0.5 * (lo + hi)
        elif not math.isfinite(new) or (f < 0.0) != (new > x):
            new = x * 1.25 if f < 0.0 else x / 1.25
        previous = (x, f)
        done = abs(new - x) <= 1e-12 * x
        x = new
        f, slope = evaluate(x)
        if done:
            return x
    return x


def _log_gap(prob: Callable[[float], float], target: float) -> Callable[[float], float]:
    log_target = math.log(target)
    return lambda x: math.log(max(prob(x), _LOG_FLOOR)) - log_target


def _upper_for(look: grid.Look, target: float) -> float:
    """Boundary c with P(still running, Z ≥ c) = target at the look."""
    if target <= 0.0:
        return math.inf
    gap = _log_gap(look.exceed, target)
    hi = look.drift * look.root - float(ndtri(target))
    g_hi = gap(hi)
    if g_hi == 0.0:
        return hi
    if g_hi > 0.0:
        # The unconditional boundary; earlier looks only remove paths, so this happens when
        # they removed next to nothing and the grid's tail overshoots the exact one slightly.
        step, lo, g_lo = 1e-6, hi, g_hi
        while g_hi > 0.0:
            lo, g_lo = hi, g_hi
            hi += step
            step *= 4.0
            g_hi = gap(hi)
        return _illinois(gap, lo, hi, g_lo, g_hi)
    step, lo = 1.0, hi - 1.0
    g_lo = gap(lo)
    while g_lo < 0.0:
        hi, g_hi = lo, g_lo
        step *= 2.0
        lo = hi - step
        g_lo = gap(lo)
    return _illinois(gap, lo, hi, g_lo, g_hi)


def _lower_for(look: grid.Look, target: float, ceiling: float) -> float:
    """Boundary l ≤ ceiling with P(still running, Z < l) = target at the look, or ``ceiling``
    if short."""
    if target <= 0.0:
        return -math.inf
    prob = look.below
    if prob(ceiling) <= target:
        return ceiling
    gap = _log_gap(prob, target)
    lo = look.drift * look.root + float(ndtri(target))
    g_lo = gap(lo)
    if g_lo >= 0.0:
        return lo
    return _illinois(gap, lo, ceiling, g_lo, gap(ceiling))


def _efficacy(t: np.ndarray, side_alpha: float, two_sided: bool, spending: str, gamma: float,
              r: int = grid.GRID_SIZE):
    """Efficacy boundaries under H0, each side spending ``side_alpha`` in all (``r``: the
    grid's points per unit, :data:`~fourfold.engine._sequential_grid.GRID_SIZE`).

    Returns the boundaries and the probability of a first crossing of the upper one per look.
    """
    if spending in CLASSIC:
        shape = boundary_shape(spending, t)

        def crossed(c: float) -> np.ndarray:
            low = -c * shape if two_sided else np.full(t.size, -np.inf)
            return grid.crossings(t, c * shape, low, 0.0, r)[0]

        def gap(c: float) -> float:
            return math.log(max(crossed(c).sum(), _LOG_FLOOR)) - math.log(side_alpha)

        lo = float(-ndtri(side_alpha))
        hi = float(-ndtri(side_alpha / t.size))
        c = lo if t.size == 1 else _illinois(gap, lo, hi, gap(lo), gap(hi))
        return shape * c, crossed(c)
    increments = np.diff(spent(spending, t, side_alpha, gamma), prepend=0.0)
    upper = np.empty(t.size)
    up = np.empty(t.size)
    state: grid.Density | None = None
    for k, t_k in enumerate(t.tolist()):
        look = grid.Look(state, t_k, 0.0)
        upper[k] = _upper_for(look, increments[k])
        up[k] = look.exceed(upper[k])
        if k + 1 < t.size:
            state = look.advance(-upper[k] if two_sided else -np.inf, upper[k], r)
    return upper, up


@functools.lru_cache(maxsize=64)
def _boundaries(fractions: tuple[float, ...], side_alpha: float, two_sided: bool, spending: str,
                gamma: float | None, r: int = grid.GRID_SIZE) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_efficacy`, remembered (read-only arrays): the boundaries depend on α and the
    looks, not on the power, and are most of a design's cost, so that designs along a power
    curve — or at two powers for one α — compute them once."""
    upper, up = _efficacy(np.array(fractions), side_alpha, two_sided, spending, gamma, r)
    return _frozen(upper), _frozen(up)


def _with_futility(
    t: np.ndarray, upper: np.ndarray, floor: np.ndarray, drift: float, beta_steps: np.ndarray,
    r: int = grid.GRID_SIZE,
):
    """Futility boundaries by β-spending under ``drift``, the crossing probabilities and the
    slope of the power in the drift with these boundaries held fixed."""
    lower = np.empty(t.size)
    up = np.empty(t.size)
    down = np.empty(t.size)
    slope = 0.0
    state: grid.Density | None = None
    for k, t_k in enumerate(t.tolist()):
        look = grid.Look(state, t_k, drift)
        up[k], rise = look.exceed_and_slope(upper[k])
        slope += rise
        if k + 1 < t.size:
            level = _lower_for(look, beta_steps[k], upper[k])
        else:
            level = upper[k]
        lower[k] = max(level, floor[k])
        down[k] = look.below(lower[k])
        if k + 1 < t.size:
            state = look.advance(lower[k], upper[k], r)
    return lower, up, down, slope


def solve_drift(t: np.ndarray, upper: np.ndarray, floor: np.ndarray, power: float,
                beta_steps: np.ndarray | None, start: float, r: int = grid.GRID_SIZE):
    """The drift at which the boundaries reach ``power`` (futility boundaries by
    ``beta_steps`` when given), searched from ``start``, and its pass: the lower boundaries
    and the per-look probabilities of crossing up and down, and the slope."""
    passes: dict[float, tuple[np.ndarray, np.ndarray, np.ndarray, float]] = {}

    def shortfall(drift: float) -> tuple[float, float]:
        if beta_steps is None:
            passes[drift] = (floor, *grid.crossings(t, upper, floor, drift, r))
        else:
            passes[drift] = _with_futility(t, upper, floor, drift, beta_steps, r)
        return float(passes[drift][1].sum()) - power, passes[drift][3]

    drift = _drift_root(shortfall, start, secant=beta_steps is not None)
    return drift, passes[drift]


def _stops(up: np.ndarray, down: np.ndarray) -> np.ndarray:
    stop = up + down
    stop[-1] = max(0.0, 1.0 - stop[:-1].sum())
    return stop


def _frozen(values: np.ndarray) -> np.ndarray:
    values = np.array(values, dtype=float)
    values.setflags(write=False)
    return values


def design(
    looks: int,
    *,
    alpha: float = 0.05,
    power: float = 0.8,
    alternative: str = "two-sided",
    spending: str = "ld-obrien-fleming",
    timing: Sequence[float] | None = None,
    gamma: float | None = None,
    futility: str | None = None,
) -> SequentialDesign:
    """Boundaries, stopping probabilities and size inflation of a group sequential test.

    Parameters
    ----------
    looks : int
        Number of analyses including the final one, 1–20 (1 is the fixed design).
    alpha : float
        Overall type I error, in (0, 1); two-sided designs split it evenly over both sides.
    power : float
        Power at the planned effect, in (0, 1) and above the one-sided α.
    alternative : {"two-sided", "greater", "less"}
        Direction of the test.
    spending : str
        One of :data:`SPENDING`: ``"ld-obrien-fleming"`` and ``"ld-pocock"`` (Lan & DeMets
        1983), ``"hsd"`` (Hwang, Shih & DeCani 1990, with ``gamma``), or the classic constant
        shapes ``"obrien-fleming"`` (C/√t_k) and ``"pocock"`` (C).
    timing : sequence of float, optional
        Information fractions of the looks, strictly increasing in (0, 1], at least
        :data:`MIN_GAP` apart and ending at 1; equally spaced by default.
    gamma : float, optional
        γ of the Hwang–Shih–DeCani family, from −40 to 40 (default −4); only with ``"hsd"``.
    futility : str, optional
        Add a non-binding futility boundary from a β-spending function of :data:`FUTILITY`.

    Returns
    -------
    SequentialDesign

    Raises
    ------
    ValueError
        An argument outside its range, naming the argument.

    References
    ----------
    Jennison, C. & Turnbull, B. W. (2000). *Group Sequential Methods with Applications to
    Clinical Trials*, ch. 2 (classic boundaries, inflation factors), ch. 7 (error spending),
    ch. 19 (numerical computation). Lan & DeMets (1983) *Biometrika* 70:659–663.

    Examples
    --------
    >>> d = design(5, spending="obrien-fleming")
    >>> print(round(float(d.upper[-1]), 3), round(d.inflation, 3))
    2.04 1.028
    >>> d = design(3, futility="ld-obrien-fleming")
    >>> bool(d.expected_h1 < 1.0 < d.inflation)
    True
    """
    looks, alpha, power, gamma, t, two_sided, side_alpha = checked(
        looks, alpha, power, alternative, spending, timing, gamma, futility)
    upper, up_h0 = _boundaries(tuple(float(x) for x in t), side_alpha, two_sided, spending,
                               gamma)
    floor = -upper if two_sided else np.full(looks, -np.inf)
    fixed = float(ndtri(1.0 - side_alpha) + ndtri(power))
    beta_steps = (None if futility is None
                  else np.diff(spent(futility, t, 1.0 - power, gamma), prepend=0.0))
    drift, (lower, eff_h1, down_h1, _) = solve_drift(t, upper, floor, power, beta_steps, fixed)
    stop_h1 = _stops(eff_h1, down_h1)
    if futility is None:
        stop_h0 = _stops(up_h0, up_h0 if two_sided else np.zeros(looks))
    else:
        stop_h0 = _stops(*grid.crossings(t, upper, lower, 0.0)[:2])
    inflation = (drift / fixed) ** 2
    sides = 2.0 if two_sided else 1.0
    return SequentialDesign(
        looks=looks,
        alpha=alpha,
        power=power,
        alternative=alternative,
        spending=spending,
        futility=futility,
        gamma=gamma,
        fractions=_frozen(t),
        upper=_frozen(upper),
        nominal_p=_frozen(sides * ndtr(-upper)),
        lower=None if futility is None else _frozen(lower),
        alpha_spent=_frozen(sides * np.cumsum(up_h0)),
        stop_h0=_frozen(stop_h0),
        stop_h1=_frozen(stop_h1),
        efficacy_h1=_frozen(eff_h1),
        inflation=float(inflation),
        expected_h0=float(inflation * (t @ stop_h0)),
        expected_h1=float(inflation * (t @ stop_h1)),
        drift=float(drift),
    )


@dataclass(frozen=True, eq=False)
class Boundaries:
    """The efficacy boundaries of a design without a futility bound: all that the power of
    its test at some size needs (:func:`power_at`), without the search for the drift that
    gives the design its power and inflation. Attributes as :class:`SequentialDesign`'s."""

    looks: int
    alpha: float
    alternative: str
    fractions: np.ndarray
    upper: np.ndarray
    lower = None
    """No futility boundary."""


def boundaries(
    looks: int,
    *,
    alpha: float = 0.05,
    power: float = 0.8,
    alternative: str = "two-sided",
    spending: str = "ld-obrien-fleming",
    timing: Sequence[float] | None = None,
    gamma: float | None = None,
) -> Boundaries:
    """The efficacy boundaries :func:`design` gives for these arguments without futility.

    The arguments are checked as :func:`design` checks them (``power`` is only checked:
    the boundaries do not depend on it), so that a design that cannot be made has no
    boundaries either.

    Raises
    ------
    ValueError
        An argument outside its range, naming the argument.

    Examples
    --------
    >>> made = design(4, alpha=0.03)
    >>> bare = boundaries(4, alpha=0.03)
    >>> bool((bare.upper == made.upper).all()), power_at(bare, 2.5) == power_at(made, 2.5)
    (True, True)
    """
    looks, alpha, _, gamma, t, two_sided, side_alpha = checked(
        looks, alpha, power, alternative, spending, timing, gamma, None)
    upper, _ = _boundaries(tuple(float(x) for x in t), side_alpha, two_sided, spending, gamma)
    return Boundaries(looks, alpha, alternative, _frozen(t), _frozen(upper))


def peeking_alpha(looks: int, nominal: float = 0.05) -> float:
    """False-positive rate of a test checked ``looks`` times at an unadjusted two-sided level.

    The looks are equally spaced and the test stops at the first look with p < ``nominal``
    (|z| ≥ z₁₋nominal/2); the result is the probability of that under H0.

    Parameters
    ----------
    looks : int
        Number of checks, 1–100.
    nominal : float
        Two-sided significance level used at every check, in (0, 1).

    Returns
    -------
    float

    References
    ----------
    Armitage, P., McPherson, C. K. & Rowe, B. C. (1969). Repeated significance tests on
    accumulating data. *Journal of the Royal Statistical Society A* 132:235–244.

    Examples
    --------
    >>> round(peeking_alpha(1), 4)
    0.05
    >>> print(f"{peeking_alpha(5):.0%}")
    14%
    """
    looks = count("looks", looks, MAX_PEEKS)
    nominal = probability("nominal", nominal)
    t = np.arange(1, looks + 1) / looks
    c = np.full(looks, float(-ndtri(nominal / 2.0)))
    up, down, _ = grid.crossings(t, c, -c, 0.0)
    return float(up.sum() + down.sum())


def power_at(sequential: SequentialDesign | Boundaries, drift: float) -> float:
    """Power of a design's boundaries when E[Z] at the maximum size is ``drift``.

    Counts crossings of the efficacy boundary in the direction of the alternative, with the
    futility boundary (if any) obeyed. ``drift`` is the fixed design's z₁₋α/₂ + z₁₋β at the
    same maximum size, so a row with a given number of units can be converted: fixed-design
    power p at that size means drift = z₁₋α/₂ + Φ⁻¹(p).

    Parameters
    ----------
    sequential : SequentialDesign or Boundaries
        A result of :func:`design` (or of :func:`boundaries`: the same power without
        futility).
    drift : float
        Expected z statistic at the maximum size; 0 is H0.

    Returns
    -------
    float

    References
    ----------
    Jennison, C. & Turnbull, B. W. (2000), ch. 19 (the recursion used for the boundaries).

    Examples
    --------
    >>> d = design(4)
    >>> round(power_at(d, d.drift), 6), round(power_at(d, 0.0), 6)
    (0.8, 0.025)
    """
    try:
        drift = float(drift)
    except (TypeError, ValueError):
        raise ValueError(f"drift must be a finite number, got {drift!r}") from None
    if not math.isfinite(drift):
        raise ValueError(f"drift must be a finite number, got {drift!r}")
    if sequential.lower is not None:
        lower = sequential.lower
    elif sequential.alternative == "two-sided":
        lower = -sequential.upper
    else:
        lower = np.full(sequential.looks, -np.inf)
    up, _, _ = grid.crossings(sequential.fractions, sequential.upper, lower, drift)
    return min(float(up.sum()), 1.0)  # the grid's sum overshoots 1 by ~1e-8 at large drifts
