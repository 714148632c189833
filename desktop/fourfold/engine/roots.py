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


def _full(value, shape):
    value = np.asarray(value, dtype=float)
    return value if value.shape == shape else np.broadcast_to(value, shape).astype(float)


def _bracket(func, y0, f0, y1, y_min, y_max, grow, max_steps):
    """Grow a bracket outwards from the evaluated points ``y0`` and ``y1``."""
    first_low = y0 <= y1
    lo = np.where(first_low, y0, y1)
    hi = np.where(first_low, y1, y0)
    f1 = func(y1, np.arange(y0.size))
    flo = np.where(first_low, f0, f1)
    fhi = np.where(first_low, f1, f0)
    width = np.maximum(hi - lo, 1e-12 * (1.0 + np.abs(lo)))
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


def _model_step(model, y0, f0, toward, fallback):
    idx = np.arange(y0.size)
    with np.errstate(all="ignore"):
        value, _ = model(y0, idx)
        offset = f0 - value
        y = y0.copy()
        for _ in range(3):
            value, slope = model(y, idx)
            y = y - (value + offset) / slope
        y = y + 1e-3 * (y - y0) + toward * 1e-13 * (1.0 + np.abs(y0))
    usable = np.isfinite(y) & (y != y0)
    return np.where(usable, y, fallback)


def find_root(func, y0, step, y_min, y_max, *, model=None, grow=4.0, max_steps=60,
              maxiter=100, ftol=1e-12, ytol=1e-14, verify=1e-9):
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
    model : callable, optional
        ``model(y, idx)`` returns a cheap approximation of f and its derivative for the
        elements ``idx``.  The second point is then the root of the model shifted by its
        error at ``y0``, lengthened by 0.1 %, so that the first two evaluations usually
        bracket the root tightly (and often hit it within ``ftol``).

    Returns
    -------
    y : numpy.ndarray
        The roots, nan where not found.
    status : numpy.ndarray
        ``OK``; ``BELOW`` (f > 0 already at ``y_min``); ``ABOVE`` (f < 0 still at
        ``y_max``); ``FAILED`` (no finite bracket, no convergence, or failed verification).

    Notes
    -----
    A start strictly inside the limits where the evaluated |f| is already within ``ftol``
    is the root: that element is not searched further.  The others are searched as a
    subset, each exactly as it would be alone.
    """
    y0 = np.asarray(y0, dtype=float)
    y_min = _full(y_min, y0.shape)
    y_max = _full(y_max, y0.shape)
    start_ok = np.isfinite(y0) & np.isfinite(y_min) & np.isfinite(y_max) & (y_min < y_max)
    if not start_ok.all():
        y0 = np.where(start_ok, y0, 0.5 * (np.nan_to_num(y_min) + np.nan_to_num(y_max)))
    y0 = np.minimum(np.maximum(y0, y_min), y_max)
    f0 = func(y0, np.arange(y0.size))
    hit = start_ok & (np.abs(f0) <= ftol) & (y0 > y_min) & (y0 < y_max)
    if not hit.any():
        return _search(func, y0, f0, step, y_min, y_max, start_ok, model, grow, max_steps,
                       maxiter, ftol, ytol, verify)
    y = np.full(y0.size, np.nan)
    status = np.full(y0.size, FAILED)
    good = hit & (np.abs(f0) <= verify)
    y[good] = y0[good]
    status[good] = OK
    rest = np.flatnonzero(~hit)
    if rest.size:
        step = np.broadcast_to(np.asarray(step, dtype=float), y0.shape)[rest]
        sub_model = None if model is None else (lambda y, idx: model(y, rest[idx]))
        y[rest], status[rest] = _search(
            lambda y, idx: func(y, rest[idx]), y0[rest], f0[rest], step, y_min[rest],
            y_max[rest], start_ok[rest], sub_model, grow, max_steps, maxiter, ftol, ytol,
            verify)
    return y, status


def _search(func, y0, f0, step, y_min, y_max, start_ok, model, grow, max_steps, maxiter, ftol,
            ytol, verify):
    """Bracket from the evaluated start, then Illinois steps; see :func:`find_root`."""
    status = np.full(y0.size, FAILED)
    y = np.full(y0.size, np.nan)
    toward = np.where(f0 > 0, -1.0, 1.0)
    y1 = y0 + toward * step
    if model is not None:
        y1 = _model_step(model, y0, f0, toward, y1)
    y1 = np.minimum(np.maximum(y1, y_min), y_max)
    y1 = np.where(y1 == y0, np.where(y0 > y_min, y_min, y_max), y1)
    lo, hi, flo, fhi = _bracket(func, y0, f0, y1, y_min, y_max, grow, max_steps)
    finite = start_ok & np.isfinite(flo) & np.isfinite(fhi)
    status[finite & (flo > 0)] = BELOW
    status[finite & (fhi < 0)] = ABOVE
    bracketed = finite & (flo <= 0) & (fhi >= 0)

    low_better = np.abs(flo) < np.abs(fhi)
    a, fa = np.where(low_better, hi, lo), np.where(low_better, fhi, flo)
    b, fb = np.where(low_better, lo, hi), np.where(low_better, flo, fhi)
    active = bracketed & (np.abs(fb) > ftol)
    for _ in range(maxiter):
        i = np.flatnonzero(active)
        if i.size == 0:
            break
        ai, bi, fai, fbi = a[i], b[i], fa[i], fb[i]
        with np.errstate(divide="ignore", invalid="ignore"):
            c = bi - fbi * (bi - ai) / (fbi - fai)
        inside = (c > np.minimum(ai, bi)) & (c < np.maximum(ai, bi))
        if not inside.all():
            c = np.where(inside, c, 0.5 * (ai + bi))
        fc = func(c, i)
        opposite = np.sign(fc) != np.sign(fbi)
        a_new = np.where(opposite, bi, ai)
        a[i], fa[i] = a_new, np.where(opposite, fbi, 0.5 * fai)
        b[i], fb[i] = c, fc
        done = (np.abs(fc) <= ftol) | (np.abs(c - a_new) <= ytol * (1.0 + np.abs(c)))
        done |= ~np.isfinite(fc)
        active[i[done]] = False
    good = bracketed & np.isfinite(fb) & (np.abs(fb) <= verify)
    y[good] = b[good]
    status[bracketed & ~good] = FAILED
    status[good] = OK
    return y, status
