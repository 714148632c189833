"""What a metric row's stored simulation check (``Metric.simulation``) may hold.

The check is written by :func:`fourfold.simulation.check.check_metric` and read back by the
reports and the window; a plan file is checked here on loading, like every other field, so a
foreign or damaged object is refused with the key at fault instead of breaking an export later.
Every key the readers need must be present with a value of the right type and range; other keys
are refused.

Examples
--------
>>> validate_record("simulation", {"power": 0.8})
Traceback (most recent call last):
...
fourfold.plan.fields.PlanError: simulation.low: missing (a stored simulation check needs it)
"""

from __future__ import annotations

import math
import numbers
from typing import Any

from fourfold.plan.fields import PlanError, check_text, key_name, shown

INPUT_FIELDS = ("kind", "method", "baseline", "sd", "effect", "alpha", "alternative", "margin",
                "n_control", "ratio", "looks", "kind_inputs")
"""The row inputs a check was run on (to tell when it has gone stale)."""

VERDICTS = ("agrees", "borderline", "below", "above")

_SHARES = ("power", "low", "high", "false_positive", "false_positive_low", "false_positive_high",
           "analytic_power")
_COUNTS = {"reps": 1, "n_control": 1, "n_treatment": 1}
_TEXTS = ("model", "test")
_REQUIRED = (*_SHARES, "alpha", *_COUNTS, "seed", *_TEXTS)
_OPTIONAL = ("effect", "looks", "expected_fraction", "inputs", "verdict", "message")
KEYS = _REQUIRED + _OPTIONAL
"""Every key a stored check may have."""

_MAX_TEXT = 2000
_MAX_COUNT = 10**18
_MAX_SEED = 2**128


def _error(where: str, text: str) -> PlanError:
    return PlanError(f"{where}: {text}", where.split(".", 1)[0])


def _finite(where: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise _error(where, "must be a number")
    try:
        number = float(value)
    except OverflowError:
        number = math.inf
    if not math.isfinite(number):
        raise _error(where, "must be a finite number")
    return number


def _share(where: str, value: Any) -> float:
    number = _finite(where, value)
    if not 0.0 <= number <= 1.0:
        raise _error(where, f"must be between 0 and 1; got {number:g}")
    return number


def _whole(where: str, value: Any, low: int, high: int) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise _error(where, "must be a whole number")
    if isinstance(value, numbers.Integral):
        number = int(value)
    else:
        number = _finite(where, value)
        if number != math.floor(number):
            raise _error(where, "must be a whole number")
        number = int(number)
    if not low <= number <= high:
        raise _error(where, f"must be a whole number from {low:,} to {high:.3g}")
    return number


def _text(where: str, value: Any) -> str:
    if not isinstance(value, str):
        raise _error(where, "must be text")
    if len(value) > _MAX_TEXT:
        raise _error(where, f"must be at most {_MAX_TEXT:,} characters long")
    return check_text(where, value)


def _inputs(where: str, value: Any) -> dict:
    if not isinstance(value, dict):
        raise _error(where, "must be an object")
    out = {}
    for key, item in value.items():
        place = f"{where}.{key_name(key)}"
        if key not in INPUT_FIELDS:
            raise _error(place, f"unknown field {shown(key, 40)}")
        out[key] = (_scalars(place, item) if key == "kind_inputs" and item is not None
                    else _scalar(place, item))
    return out


def _scalars(where: str, value: Any) -> dict:
    """A flat object of plain values (a ratio's or quantile's own inputs)."""
    if not isinstance(value, dict):
        raise _error(where, "must be an object")
    return {key: _scalar(f"{where}.{key_name(key)}", item) for key, item in value.items()}


def _scalar(where: str, item: Any) -> Any:
    """A plain value: empty, true/false, text or a finite number."""
    if item is None or isinstance(item, bool):
        return item
    if isinstance(item, str):
        return _text(where, item)
    if isinstance(item, numbers.Integral):
        return _whole(where, item, -_MAX_COUNT, _MAX_COUNT)
    return _finite(where, item)


def validate_record(field: str, value: Any) -> dict | None:
    """Check a stored simulation check and return a plain copy of it (None stays None).

    Parameters
    ----------
    field : str
        The field's name for messages (``"simulation"``).
    value : dict or None
        The stored check.

    Raises
    ------
    fourfold.plan.fields.PlanError
        Naming the key at fault (``simulation.power: must be between 0 and 1; got 3``).

    Examples
    --------
    >>> record = dict.fromkeys(_SHARES, 0.5) | {"alpha": 0.05, "reps": 400, "seed": 1,
    ...     "n_control": 10, "n_treatment": 10, "model": "normal", "test": "z"}
    >>> validate_record("simulation", record) == record
    True
    >>> validate_record("simulation", record | {"draws": 5})
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: simulation.draws: unknown field 'draws'
    """
    if value is None:
        return None
    if not isinstance(value, dict):
        raise _error(field, "must be a stored simulation check (an object) or empty")
    for key in value:
        if key not in KEYS:
            raise _error(f"{field}.{key_name(key)}", f"unknown field {shown(key, 40)}")
    for key in _REQUIRED:
        if key not in value:
            raise _error(f"{field}.{key}", "missing (a stored simulation check needs it)")
    out: dict[str, Any] = {}
    for key, item in value.items():
        where = f"{field}.{key}"
        if key in _SHARES or key == "expected_fraction":
            out[key] = _share(where, item)
        elif key == "alpha":
            out[key] = _share(where, item)
        elif key in _COUNTS:
            out[key] = _whole(where, item, _COUNTS[key], _MAX_COUNT)
        elif key == "seed":
            out[key] = _whole(where, item, 0, _MAX_SEED)
        elif key == "looks":
            out[key] = _whole(where, item, 1, 1000)
        elif key == "effect":
            out[key] = _finite(where, item)
        elif key == "inputs":
            out[key] = _inputs(where, item)
        elif key == "verdict":
            if item not in VERDICTS:
                raise _error(where, f"must be one of {', '.join(VERDICTS)}")
            out[key] = item
        else:
            out[key] = _text(where, item)
    return out
