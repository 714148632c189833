"""Starting points for the exact-t sample size of many rows: a few rows solved, the rest fitted.

Rows of one call that share α, power and the allocation ratio (one sidedness per call) are one
family: the exact-t units are a function of the standardised distance alone, and so of the
normal approximation's units n_z (the z test's, far tail included). Their gap n_t − n_z is
close to a constant (about u²/(2(1 + r)), one unit at α = 0.05) and a smooth function of
x = 1/n_z. A family of
at least :data:`FAMILY_ROWS` rows solves :data:`NODES` of its rows exactly, picked near the
Chebyshev points of its range of x, fits a Chebyshev polynomial through their gaps, and starts
every row at n_z plus the fitted gap. The fit is good to about 10⁻¹⁰ of n on A/B-test inputs,
within the solver's tolerance on the power, so that the solver's first evaluation at the start
usually ends its search; a row whose start is not that close is searched as before. The start
never replaces the check: every row's units are those at which the power was found within the
tolerance. That first check may be a screen (:func:`screened`): a power good to a known bound
at half the cost, trusted only where it is inside the tolerance by more than the bound, so
that the exact power is inside too and the row's units are the same bit for bit.

Examples
--------
>>> import numpy as np
>>> groups(np.array([0.05, 0.05]), np.array([0.8, 0.8]), np.array([1.0, 1.0]), minimum=2)
[array([0, 1])]
"""

import numpy as np

from . import tdist

FAMILY_ROWS = 64
"""Rows a family needs before solving some of them first pays."""

NODES = 8
"""Rows of a family solved exactly: the fit's degree is one less."""


def groups(alpha, power, ratio, minimum: int = FAMILY_ROWS) -> list[np.ndarray]:
    """Indices of the rows in each family (same α, power and ratio) of at least ``minimum``."""
    if all(values.size and np.all(values == values[0]) for values in (alpha, power, ratio)):
        return [np.arange(np.size(alpha))] if np.size(alpha) >= minimum else []
    code = np.zeros(np.size(alpha), dtype=np.int64)
    for values in (alpha, power, ratio):  # each value's rank, then the three ranks as one
        distinct, rank = np.unique(values, return_inverse=True)
        code = code * distinct.size + rank.reshape(-1)
    _, family, counts = np.unique(code, return_inverse=True, return_counts=True)
    return [np.flatnonzero(family == found) for found in np.flatnonzero(counts >= minimum)]


def nodes(x: np.ndarray) -> np.ndarray:
    """Positions in ``x`` of the values nearest the Chebyshev points of its range (distinct)."""
    low, high = float(x.min()), float(x.max())
    points = 0.5 * (low + high) + 0.5 * (high - low) * np.cos(
        np.pi * (np.arange(NODES) + 0.5) / NODES)
    order = np.argsort(x)
    nearest = np.clip(np.searchsorted(x[order], points), 0, x.size - 1)
    return np.unique(order[nearest])


def fitted(x: np.ndarray, x_nodes: np.ndarray, gaps: np.ndarray) -> np.ndarray:
    """The gap at ``x`` from the Chebyshev polynomial through ``(x_nodes, gaps)``."""
    low, high = float(x_nodes.min()), float(x_nodes.max())
    if high <= low:
        return np.full(x.shape, float(gaps.mean()))
    centre, half = 0.5 * (low + high), 0.5 * (high - low)
    coefficients = np.polynomial.chebyshev.chebfit((x_nodes - centre) / half, gaps,
                                                   x_nodes.size - 1)
    return np.polynomial.chebyshev.chebval((x - centre) / half, coefficients)


def start(normal: np.ndarray, alpha, power, ratio, solve) -> tuple[np.ndarray, np.ndarray]:
    """Starting units of the rows in families (``normal``: their z test's units), and which
    rows have one.

    ``solve(rows)`` returns the exact units of the rows ``rows`` (nan where it found none).
    Rows left out of every family, and rows whose start comes out not finite and positive,
    keep nan and ``False``.
    """
    found = np.full(normal.size, np.nan)
    for family in groups(alpha, power, ratio):
        x = 1.0 / normal[family]
        usable = np.isfinite(x) & (x > 0)
        members = family[usable]
        if members.size < FAMILY_ROWS:
            continue
        x = x[usable]
        picked = nodes(x)
        exact = solve(members[picked])
        good = np.isfinite(exact)
        if np.count_nonzero(good) < 2:
            continue
        gaps = exact[good] - normal[members[picked][good]]
        guess = normal[members] + fitted(x, x[picked][good], gaps)
        found[members] = np.where(guess > 0, guess, np.nan)
        found[members[picked][good]] = exact[good]
    return found, np.isfinite(found)


def screened(func, screen, rows: np.ndarray, ftol: float):
    """``func(y, j)`` for a root search whose first call, at the starts, uses ``screen(y, j)``
    (within :data:`~fourfold.engine.tdist.SCREEN_ERROR` of ``func``, nan where it has no value)
    for the elements where ``rows`` (a mask over the elements) is true and the screen is within
    ``ftol`` by more than that bound, and ``func`` for the others; every later call is
    ``func``'s.

    The search then accepts the same starts as with ``func`` alone and searches the others
    from ``func``'s values, so that its results are the same bit for bit. Where the screen
    leaves more than three quarters of the elements unsure, the first call is ``func``'s for
    all of them (a subset's copies of every input would cost more than they save).
    """
    first = [True]

    def f(y, j):
        if not first:
            return func(y, j)
        first.clear()
        values = np.full(j.size, np.nan)
        mine = np.flatnonzero(rows[j])
        values[mine] = screen(y[mine], j[mine])
        sure = np.abs(values) <= ftol - tdist.SCREEN_ERROR
        rest = np.flatnonzero(~sure)
        if rest.size > 0.75 * j.size:  # a subset's copies of every input would cost more
            return func(y, j)
        if rest.size:
            values[rest] = func(y[rest], j[rest])
        return values

    return f
