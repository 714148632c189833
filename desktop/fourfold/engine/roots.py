"""Vectorised root search for increasing functions: bracketing, then Illinois steps.

All elements are searched at once (no Python loop per element); each iteration evaluates the
function only on the elements still unsolved.  A bracket is accepted only when both ends are
finite and f changes sign; the answer is the last evaluated point and is accepted only when
|f| there is within ``verify`` — a bracket end is never returned as a root unless it is one.

References
----------
Dowell, M. & Jarratt, P. (1971) A modified regula falsi method for computing the root of an
equation. *BIT* 11:168–174 (the Illinois method).

Examples
--------
>>> import numpy as np
>>> f = lambda y, idx: np.exp(y) - np.array([2.0, 3.0])[idx]
>>> y, status = find_root(f, np.zeros(2), 0.1, np.full(2, -5.0), np.full(2, 5.0))
>>> np.round(np.exp(y), 10).tolist(), status.tolist()
([2.0, 3.0], [0, 0])
"""

import numpy as np

OK = 0
BELOW = 1
ABOVE = 2
FAILED = 3


def _bracket(func, y0, step, y_min, y_max, grow, max_steps):
    idx_all = np.arange(y0.size)
    lo = np.clip(y0 - step, y_min, y_max)
    hi = np.clip(y0 + step, y_min, y_max)
    flo = func(lo, idx_all)
    fhi = func(hi, idx_all)
    width = np.maximum(hi - lo, 1e-300)
    for _ in range(max_steps):
        down = (flo > 0) & (lo > y_min)
        up = (fhi < 0) & (hi < y_max)
        if not (down.any() or up.any()):
            break
        width = np.where(down | up, width * grow, width)
        if down.any():
            i = np.flatnonzero(down)
            hi[i], fhi[i] = lo[i], flo[i]
            lo[i] = np.maximum(lo[i] - width[i], y_min[i])
            flo[i] = func(lo[i], i)
        if up.any():
            i = np.flatnonzero(up)
            lo[i], flo[i] = hi[i], fhi[i]
            hi[i] = np.minimum(hi[i] + width[i], y_max[i])
            fhi[i] = func(hi[i], i)
    return lo, hi, flo, fhi


def find_root(func, y0, step, y_min, y_max, *, grow=4.0, max_steps=60, maxiter=100,
              ftol=1e-13, ytol=1e-14, verify=1e-9):
    """Root of an increasing ``func(y, idx)`` near ``y0`` within ``[y_min, y_max]``.

    Parameters
    ----------
    func : callable
        ``func(y, idx)`` returns f at ``y`` for the elements ``idx`` (integer array).
    y0 : numpy.ndarray
        Starting guesses (1-d).
    step : float or numpy.ndarray
        Half-width of the first bracket around ``y0``; it grows by ``grow`` per step.
    y_min, y_max : numpy.ndarray
        Finite limits of the search.

    Returns
    -------
    y : numpy.ndarray
        The roots, nan where not found.
    status : numpy.ndarray
        ``OK``; ``BELOW`` (f > 0 already at ``y_min``); ``ABOVE`` (f < 0 still at
        ``y_max``); ``FAILED`` (no finite bracket, no convergence, or failed verification).
    """
    y0 = np.asarray(y0, dtype=float)
    step = np.broadcast_to(np.asarray(step, dtype=float), y0.shape).copy()
    y_min = np.broadcast_to(y_min, y0.shape).astype(float)
    y_max = np.broadcast_to(y_max, y0.shape).astype(float)
    status = np.full(y0.size, FAILED)
    y = np.full(y0.size, np.nan)
    start_ok = np.isfinite(y0) & np.isfinite(y_min) & np.isfinite(y_max) & (y_min < y_max)
    y0 = np.where(start_ok, y0, 0.5 * (np.nan_to_num(y_min) + np.nan_to_num(y_max)))
    lo, hi, flo, fhi = _bracket(func, y0, step, y_min, y_max, grow, max_steps)
    finite = start_ok & np.isfinite(flo) & np.isfinite(fhi)
    status[finite & (flo > 0)] = BELOW
    status[finite & (fhi < 0)] = ABOVE
    bracketed = finite & (flo <= 0) & (fhi >= 0)

    a, fa, b, fb = lo.copy(), flo.copy(), hi.copy(), fhi.copy()
    exact_lo = bracketed & (flo == 0)
    b[exact_lo], fb[exact_lo] = lo[exact_lo], 0.0
    active = bracketed & (fb != 0)
    for _ in range(maxiter):
        i = np.flatnonzero(active)
        if i.size == 0:
            break
        denom = fb[i] - fa[i]
        with np.errstate(divide="ignore", invalid="ignore"):
            c = b[i] - fb[i] * (b[i] - a[i]) / denom
        low, high = np.minimum(a[i], b[i]), np.maximum(a[i], b[i])
        outside = ~((c > low) & (c < high))
        c[outside] = 0.5 * (a[i][outside] + b[i][outside])
        fc = func(c, i)
        opposite = np.sign(fc) != np.sign(fb[i])
        a_new = np.where(opposite, b[i], a[i])
        fa_new = np.where(opposite, fb[i], 0.5 * fa[i])
        a[i], fa[i], b[i], fb[i] = a_new, fa_new, c, fc
        done = (np.abs(fc) <= ftol) | (np.abs(b[i] - a[i]) <= ytol * (1.0 + np.abs(c)))
        done |= ~np.isfinite(fc)
        active[i[done]] = False
    good = bracketed & np.isfinite(fb) & (np.abs(fb) <= verify)
    y[good] = b[good]
    status[bracketed & ~good] = FAILED
    status[good] = OK
    return y, status
