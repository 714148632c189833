"""Inputs of the kinds' helper functions: broadcast, check, and give a reason per element.

The helpers that turn a kind's own inputs into the per-unit sd the solvers take
(:func:`fourfold.engine.ratio.unit_sd`, :func:`fourfold.engine.quantile.unit_sd`, …) follow
the solvers' convention: a scalar call with impossible input raises ``ValueError`` with the
reason; an array call returns nan there, and the ``..._and_reasons`` form gives the reason
per element (``""`` where the value is computed).

Examples
--------
>>> values, reasons = checked(dict(x=[1.0, -1.0]), lambda a: [(a["x"] <= 0, "x must be > 0")])
>>> values["x"].tolist(), reasons.tolist()
([1.0, -1.0], ['', 'x must be > 0'])
"""

import numpy as np


def checked(inputs, checks, infinite=()):
    """Broadcast ``inputs`` (name → array_like) and apply ``checks``.

    Parameters
    ----------
    inputs : dict
        The named inputs, converted to float arrays of one broadcast shape.
    checks : callable
        ``checks(arrays)`` returns ``(bad, message)`` pairs in order; the first bad one names
        an element's reason. Non-finite inputs are reported first, by name.
    infinite : tuple of str
        Inputs that may be +inf (degrees of freedom of a normal limit).

    Returns
    -------
    arrays : dict
        The broadcast float arrays.
    reasons : numpy.ndarray
        Object array of the broadcast shape, ``""`` where every check passed.

    Raises
    ------
    ValueError
        When an input is not a number.
    """
    arrays = {}
    for name, value in inputs.items():
        try:
            arrays[name] = np.asarray(value, dtype=float)
        except (TypeError, ValueError):
            raise ValueError(f"{name} must be a number or an array of numbers") from None
    shape = np.broadcast_shapes(*(a.shape for a in arrays.values()))
    arrays = {name: np.broadcast_to(a, shape) for name, a in arrays.items()}
    reasons = np.full(shape, "", dtype=object)
    with np.errstate(all="ignore"):
        rules = [(np.isnan(a) | (a == -np.inf) if name in infinite else ~np.isfinite(a),
                  f"{name} must be a {'number' if name in infinite else 'finite number'}")
                 for name, a in arrays.items()]
        rules += checks(arrays)
    for bad, message in reversed(rules):
        reasons[np.broadcast_to(bad, shape)] = message
    return arrays, reasons


def finish(values, reasons, scalar):
    """nan where a reason is given; a 0-d result or ``ValueError`` for a scalar call."""
    values = np.where(reasons == "", values, np.nan)
    if scalar:
        if reasons.reshape(-1)[0]:
            raise ValueError(reasons.reshape(-1)[0])
        return values.reshape(())
    return values


def is_scalar(*values):
    """True when every input is a plain number (no array)."""
    return all(np.ndim(value) == 0 for value in values)
