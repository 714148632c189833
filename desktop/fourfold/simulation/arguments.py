"""Checks of the simulation's arguments: numbers, whole numbers, units per arm and per look.

Each raises ValueError naming the argument and its allowed range.
"""

from __future__ import annotations

import math
import operator

import numpy as np


def finite(name, value):
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(number):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    return number


def whole(name, value, low, high):
    try:
        number = operator.index(value)
    except TypeError:
        number = None
    if isinstance(value, bool) or number is None or number < low or (
            high is not None and number > high):
        span = f"from {low:,} to {high:,}" if high is not None else f"of at least {low:,}"
        raise ValueError(f"{name} must be a whole number {span}, got {value!r}")
    return number


def units(n, ratio, kind):
    n = finite("n", n)
    if n <= 0:
        raise ValueError(f"n must be positive (control-arm units), got {n!r}")
    n_c = math.ceil(n - 1e-9)
    n_t = math.ceil(n * ratio - 1e-9)
    least = 2 if kind in ("mean", "ratio", "quantile") else 1
    if min(n_c, n_t) < least:
        raise ValueError(
            f"n and ratio give {n_c} control and {n_t} treatment units; "
            f"each arm needs at least {least}"
        )
    return n_c, n_t


def look_sizes(n_units, fractions):
    sizes = np.maximum(np.round(np.asarray(fractions, dtype=float) * n_units), 1).astype(np.int64)
    sizes[-1] = n_units
    sizes = np.maximum.accumulate(sizes)
    keep = np.concatenate([np.diff(sizes) > 0, [True]])
    if not np.all(keep):
        raise ValueError(
            f"looks: {n_units} units are too few for {len(sizes)} looks at distinct sizes"
        )
    return sizes


def looks_design(looks):
    if looks is None:
        return None
    try:
        fractions = np.asarray(looks.fractions, dtype=float)
        upper = np.asarray(looks.upper, dtype=float)
    except AttributeError:
        raise ValueError(
            "looks must be a design from fourfold.engine.sequential.design (with fractions "
            "and upper boundaries)"
        ) from None
    lower = getattr(looks, "lower", None)
    lower = None if lower is None else np.asarray(lower, dtype=float)
    if fractions.ndim != 1 or fractions.size < 1 or upper.shape != fractions.shape:
        raise ValueError("looks: fractions and upper boundaries must be 1-D arrays of one size")
    if not (np.all(np.diff(fractions) > 0) and fractions[0] > 0 and abs(fractions[-1] - 1) < 1e-9):
        raise ValueError("looks: information fractions must increase to 1")
    return fractions, upper, lower
