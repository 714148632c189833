"""The arguments of a group sequential design, checked: the choices and ranges of
:func:`fourfold.engine.sequential.design` and the checks that give each bad argument's
message, shared by the design, its boundaries alone (:func:`~fourfold.engine.sequential.
boundaries`) and the inflation factors of curves (:mod:`fourfold.engine.inflation`).
"""

from __future__ import annotations

import operator
from collections.abc import Sequence
from typing import NamedTuple

import numpy as np

from fourfold.engine._sequential_spending import SPENDING_FUNCTIONS

SPENDING = ("ld-obrien-fleming", "ld-pocock", "hsd", "obrien-fleming", "pocock")
"""Boundary families: Lan–DeMets spending functions, Hwang–Shih–DeCani, classic shapes."""

FUTILITY = SPENDING_FUNCTIONS
"""Families a futility (β-spending) boundary may use."""

ALTERNATIVES = ("two-sided", "greater", "less")
MAX_LOOKS = 20
MAX_PEEKS = 100
GAMMA_RANGE = (-40.0, 40.0)
MIN_GAP = 0.01
"""Smallest step between information fractions: closer looks are beyond the grid's accuracy."""
DEFAULT_GAMMA = -4.0
"""γ of the Hwang–Shih–DeCani family when none is given (an O'Brien–Fleming-like shape)."""


class Checked(NamedTuple):
    """A design's arguments as checked: ``t`` the information fractions (the last exactly 1),
    ``side_alpha`` the α each boundary spends (half of a two-sided α)."""

    looks: int
    alpha: float
    power: float
    gamma: float | None
    t: np.ndarray
    two_sided: bool
    side_alpha: float


def checked(looks: int, alpha: float, power: float, alternative: str, spending: str,
            timing: Sequence[float] | None, gamma: float | None,
            futility: str | None) -> Checked:
    """The arguments of :func:`fourfold.engine.sequential.design`, checked in its order.

    Raises
    ------
    ValueError
        An argument outside its range, naming the argument.
    """
    looks = count("looks", looks, MAX_LOOKS)
    alpha = probability("alpha", alpha)
    power = probability("power", power)
    if alternative not in ALTERNATIVES:
        raise ValueError(f"alternative must be one of {ALTERNATIVES}, got {alternative!r}")
    if spending not in SPENDING:
        raise ValueError(f"spending must be one of {SPENDING}, got {spending!r}")
    if futility is not None and futility not in FUTILITY:
        raise ValueError(f"futility must be None or one of {FUTILITY}, got {futility!r}")
    gamma = gamma_of(gamma, (spending, futility))
    t = fractions(timing, looks)
    two_sided = alternative == "two-sided"
    side_alpha = alpha / 2.0 if two_sided else alpha
    if power <= side_alpha:
        raise ValueError(f"power must exceed the one-sided α ({side_alpha:g}), got {power!r}")
    return Checked(looks, alpha, power, gamma, t, two_sided, side_alpha)


def probability(name: str, value: float) -> float:
    """``value`` as a float in (0, 1)."""
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number between 0 and 1, got {value!r}") from None
    if not 0.0 < value < 1.0:
        raise ValueError(f"{name} must be between 0 and 1 (exclusive), got {value!r}")
    return value


def count(name: str, value: int, top: int) -> int:
    """``value`` as a whole number from 1 to ``top``."""
    try:
        number = operator.index(value)
    except TypeError:
        raise ValueError(f"{name} must be a whole number from 1 to {top}, got {value!r}") from None
    if isinstance(value, bool) or not 1 <= number <= top:
        raise ValueError(f"{name} must be a whole number from 1 to {top}, got {value!r}")
    return number


def fractions(timing: Sequence[float] | None, looks: int) -> np.ndarray:
    """The information fractions of the looks: ``timing`` checked, or equally spaced."""
    if timing is None:
        return np.arange(1, looks + 1) / looks
    try:
        t = np.array(timing, dtype=float).reshape(-1)
    except (TypeError, ValueError):
        raise ValueError(f"timing must be a list of {looks} fractions, got {timing!r}") from None
    if t.size != looks:
        raise ValueError(f"timing must have one fraction per look ({looks}), got {t.size}")
    if not np.all(np.isfinite(t)) or t[0] <= 0.0 or np.any(np.diff(t) <= 0.0):
        raise ValueError("timing must increase strictly, with every fraction in (0, 1]")
    if np.any(np.diff(t) < MIN_GAP - 1e-12):
        raise ValueError(f"timing: successive looks must be at least {MIN_GAP:g} apart "
                         "(a share of the maximum size)")
    if abs(t[-1] - 1.0) > 1e-9:
        raise ValueError(f"timing must end at 1 (the maximum size), got {t[-1]!r}")
    t[-1] = 1.0
    return t


def gamma_of(gamma: float | None, families: tuple[str | None, ...]) -> float | None:
    """γ of the Hwang–Shih–DeCani family when one of ``families`` is it, else None."""
    if "hsd" not in families:
        if gamma is not None:
            raise ValueError("gamma applies only to the 'hsd' spending family")
        return None
    if gamma is None:
        return DEFAULT_GAMMA
    low, high = GAMMA_RANGE
    try:
        gamma = float(gamma)
    except (TypeError, ValueError):
        raise ValueError(f"gamma must be a number from {low:g} to {high:g}") from None
    if not low <= gamma <= high:
        raise ValueError(f"gamma must be from {low:g} to {high:g}, got {gamma!r}")
    return gamma
