"""The rules for every field of a plan: allowed choices, ranges and normalisation.

The table's editors, the command stack and the JSON loader all go through
:func:`validate_field`, so a value the window accepts is a value the file accepts and the other
way round. Checks here are per field; whether a baseline fits its kind (a proportion in (0, 1),
a mean count above 0) depends on other fields of the row and is reported per row by the
evaluation (:func:`fourfold.engine.problems`), so that changing a row's kind never loses data.
The one cross-field rule enforced here is that a row's method belongs to its kind.
"""

from __future__ import annotations

import dataclasses
import math
import numbers
import re
from collections.abc import Callable
from typing import Any

from fourfold.engine import ALTERNATIVES, KINDS, METHODS
from fourfold.engine.design import ALLOCATIONS, CORRECTIONS
from fourfold.engine.sequential import SPENDING
from fourfold.errors import FourfoldError
from fourfold.plan.model import Metric, Settings

ROLES = ("primary", "secondary", "guardrail")
SOLVES = ("sample_size", "detectable_effect", "power", "significance_level")
BETTER = ("higher", "lower")
CORRECTION_LABELS = {"none": "none", "bonferroni": "Bonferroni", "sidak": "Šidák",
                     "dunnett": "Dunnett"}
ALLOCATION_LABELS = {"fixed": "as set", "sqrt-k": "√k rule"}
TRAFFIC_MODELS = ("constant", "reach")
TRAFFIC_LABELS = {"constant": "constant daily units", "reach": "reach curve"}
WINDOW_FIELDS = ("baseline", "sd", "rho", "denominator", "numerator_sd", "denominator_sd",
                 "correlation")
"""The row fields a history window may set (:mod:`fourfold.plan.windows`)."""

CHOICES: dict[str, Any] = {
    "role": ROLES,
    "kind": KINDS,
    "method": METHODS,
    "alternative": ALTERNATIVES,
    "solve": SOLVES,
    "correction": CORRECTIONS,
    "spending": SPENDING,
    "better": BETTER,
    "allocation": ALLOCATIONS,
    "traffic": TRAFFIC_MODELS,
}
"""Allowed values of every choice field; ``CHOICES["method"]`` maps each kind to its methods
(the first is the kind's default, used when a row's method is ``None``)."""

METRIC_FIELDS = tuple(f.name for f in dataclasses.fields(Metric) if f.name != "id")
"""The fields of a metric row a user edits (a row's ``id`` is its identity, not a field)."""
SETTINGS_FIELDS = tuple(f.name for f in dataclasses.fields(Settings))

MAX_ARMS = 20
MAX_LOOKS = 20
MAX_TEXT = 200
_SURROGATE = re.compile("[\ud800-\udfff]")
MAX_DAYS = 3650
MAX_UNIT = 20
MAX_WINDOWS = 64


class PlanError(FourfoldError, ValueError):
    """A plan value or file that cannot be used; the message names the field.

    Parameters
    ----------
    message : str
        The text shown to the user.
    field : str, optional
        The field (or file location such as ``"metrics[2].alpha"``) at fault.
    """

    def __init__(self, message: str, field: str | None = None) -> None:
        super().__init__(message)
        self.field = field


def shown(value: Any, limit: int = 60) -> str:
    """``repr(value)`` cut to about ``limit`` characters, for one-line messages.

    Examples
    --------
    >>> shown("x" * 100, limit=10)
    "'xxxxxxxx…"
    """
    if isinstance(value, (list, dict)) and len(value) > limit:
        return f"a {type(value).__name__} of {len(value):,} items"
    try:
        text = repr(value)
    except (RecursionError, ValueError):
        text = f"a {type(value).__name__}"
    return text if len(text) <= limit else text[:limit - 1] + "…"


def key_name(key: str) -> str:
    """A key as a message names its place: on one line, cut to about 40 characters.

    Examples
    --------
    >>> key_name("colour"), key_name("a\\nb")
    ('colour', 'a\\\\nb')
    """
    text = shown(key, 42)
    return text[1:-1] if text[:1] in "'\"" and text[-1:] == text[:1] else text[1:]


def check_text(field: str, text: str) -> str:
    """``text`` if it is valid Unicode; PlanError for an unpaired surrogate (which no file
    can hold).

    Examples
    --------
    >>> check_text("notes", "ok ✓")
    'ok ✓'
    >>> check_text("notes", "bad " + chr(0xD800))
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: notes holds an unpaired surrogate (\\ud800) at character 5, \
which is not a character; remove it
    """
    found = _SURROGATE.search(text)
    if found is not None:
        code = found.group().encode("unicode_escape").decode("ascii")
        raise PlanError(f"{field} holds an unpaired surrogate ({code}) at character "
                        f"{found.start() + 1}, which is not a character; remove it", field)
    return text


def _magnitude(value: Any) -> str:
    """An infinite or too large number as a message shows it (as written in a file)."""
    if hasattr(value, "text"):
        return shown(value.text, 30)[1:-1] if len(value.text) < 30 else \
            f"a number of {len(value.text):,} characters ({value.text[:12]}…)"
    if isinstance(value, numbers.Integral):
        digits = len(str(abs(int(value)))) if abs(int(value)).bit_length() < 14000 else None
        return f"a whole number of {digits:,} digits" if digits else "a whole number"
    return str(float(value))


def _number(field: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise PlanError(f"{field} must be a number, not {shown(value)}", field)
    try:
        number = float(value)
    except OverflowError:  # a whole number beyond the largest float
        number = math.inf if value > 0 else -math.inf
    if math.isnan(number):
        raise PlanError(f"{field} must be a finite number, not nan", field)
    if math.isinf(number):
        raise PlanError(f"{field} must be a finite number, at most about 1.8e308 in size; "
                        f"got {_magnitude(value)}", field)
    return number


def _ranged(low: float | None, high: float | None, *, low_open: bool = True,
            high_open: bool = True, optional: bool = False) -> Callable[[str, Any], Any]:
    left = "<" if low_open else "≤"
    right = "<" if high_open else "≤"
    if low is not None and high is not None:
        text = f"{low:g} {left} {{f}} {right} {high:g}"
    elif low is not None:
        text = f"{{f}} {'>' if low_open else '≥'} {low:g}"
    else:
        text = "{f} finite"

    def check(field: str, value: Any) -> float | None:
        if value is None and optional:
            return None
        number = _number(field, value)
        too_low = low is not None and (number <= low if low_open else number < low)
        too_high = high is not None and (number >= high if high_open else number > high)
        if too_low or too_high:
            allowed = text.format(f=field)
            empty = " or empty" if optional else ""
            raise PlanError(f"{field} must satisfy {allowed}{empty}; got {number:g}", field)
        return number

    return check


def _integer(low: int, high: int) -> Callable[[str, Any], int]:
    def check(field: str, value: Any) -> int:
        number = _number(field, value)
        if number != int(number) or not low <= number <= high:
            raise PlanError(
                f"{field} must be a whole number from {low} to {high}; got {number:g}", field
            )
        return int(number)

    return check


def _whole_days(field: str, value: Any) -> float | None:
    """A whole number of days from 1 to MAX_DAYS, or empty (days are counted whole everywhere)."""
    if value is None:
        return None
    number = _number(field, value)
    if number != int(number) or not 1 <= number <= MAX_DAYS:
        raise PlanError(f"{field} must be a whole number of days from 1 to {MAX_DAYS}, or empty; "
                        f"got {number:g}", field)
    return number


def _choice(choices: tuple[str, ...]) -> Callable[[str, Any], str]:
    def check(field: str, value: Any) -> str:
        if not isinstance(value, str) or value not in choices:
            raise PlanError(
                f"{field} must be one of {', '.join(choices)}; got {shown(value)}", field
            )
        return value

    return check


def _flag(field: str, value: Any) -> bool:
    if not isinstance(value, bool):
        raise PlanError(f"{field} must be true or false, not {shown(value)}", field)
    return value


def _text(*, required: bool) -> Callable[[str, Any], str]:
    def check(field: str, value: Any) -> str:
        if not isinstance(value, str):
            raise PlanError(f"{field} must be text, not {shown(value)}", field)
        check_text(field, value)
        if required and not value.strip():
            raise PlanError(f"{field} must not be empty", field)
        return value.strip() if required else value

    return check


def _short_text(*, required: bool, limit: int = MAX_TEXT) -> Callable[[str, Any], str]:
    text = _text(required=required)

    def check(field: str, value: Any) -> str:
        value = text(field, value)
        if len(value) > limit:
            raise PlanError(f"{field} must be at most {limit} characters long", field)
        return value

    return check


def _unit(field: str, value: Any) -> str:
    value = _short_text(required=False, limit=MAX_UNIT)(field, value).strip()
    if any(not character.isprintable() for character in value):
        raise PlanError(f"{field} must be printable text on one line", field)
    return value


def _method(field: str, value: Any, kind: str | None = None) -> str | None:
    if value is None:
        return None
    if kind is not None:
        return _choice(METHODS[_choice(KINDS)("kind", kind)])(field, value)
    every = tuple(dict.fromkeys(name for names in METHODS.values() for name in names))
    return _choice(every)(field, value)


def _simulation(field: str, value: Any) -> dict | None:
    from fourfold.plan.simulation_record import validate_record

    return validate_record(field, value)


def _pairs(field: str, value: Any, what: str) -> list[tuple[float, float]]:
    """A list of ``[day, number]`` pairs, days whole from 1 to MAX_DAYS and increasing."""
    if not isinstance(value, (list, tuple)):
        raise PlanError(f"{field} must be a list of [day, {what}] pairs", field)
    if len(value) > MAX_DAYS:
        raise PlanError(f"{field} must have at most {MAX_DAYS} days", field)
    pairs = []
    for place, pair in enumerate(value):
        if not isinstance(pair, (list, tuple)) or len(pair) != 2:
            raise PlanError(f"{field}[{place}] must be a [day, {what}] pair", field)
        day = _number(f"{field}[{place}] day", pair[0])
        number = _number(f"{field}[{place}] {what}", pair[1])
        if day != int(day) or not 1 <= day <= MAX_DAYS:
            raise PlanError(f"{field}[{place}]: the day must be a whole number from 1 to "
                            f"{MAX_DAYS}; got {day:g}", field)
        if pairs and day <= pairs[-1][0]:
            raise PlanError(f"{field}[{place}]: days must increase (day {day:g} after day "
                            f"{pairs[-1][0]:g})", field)
        pairs.append((int(day), number))
    return pairs


def _reach(field: str, value: Any) -> tuple[tuple[float, float], ...]:
    """A reach curve: distinct units after each day, never falling, the first above 0."""
    pairs = _pairs(field, value, "units")
    for place, (day, units) in enumerate(pairs):
        low = 0.0 if not place else pairs[place - 1][1]
        if units < low or (not place and units <= 0):
            raise PlanError(f"{field}: units after day {day:g} must be "
                            + ("above 0" if not place else
                               f"at least those after day {pairs[place - 1][0]:g} "
                               f"({low:,.10g}; distinct units never fall)")
                            + f"; got {units:,.10g}", field)
    return tuple(pairs)


def _ramp(field: str, value: Any) -> tuple[tuple[float, float], ...]:
    """A ramp-up: the share of traffic up to each day, in (0, 1] and never falling."""
    pairs = _pairs(field, value, "share")
    for place, (day, share) in enumerate(pairs):
        if not 0 < share <= 1:
            raise PlanError(f"{field}: the share up to day {day:g} must satisfy 0 < share ≤ 1; "
                            f"got {share:g}", field)
        if place and share < pairs[place - 1][1]:
            raise PlanError(f"{field}: the share up to day {day:g} ({share:g}) is below the "
                            f"one before ({pairs[place - 1][1]:g}); a ramp-up only rises", field)
    return tuple(pairs)


def _windows(field: str, value: Any) -> tuple[dict, ...]:
    """A row's history windows: objects with whole ``days`` (increasing) and row fields."""
    if not isinstance(value, (list, tuple)) or len(value) > MAX_WINDOWS:
        raise PlanError(f"{field} must be a list of at most {MAX_WINDOWS} windows", field)
    windows: list[dict] = []
    for place, window in enumerate(value):
        where = f"{field}[{place}]"
        if not isinstance(window, dict) or "days" not in window:
            raise PlanError(f"{where} must be an object with its days", field)
        days = _number(f"{where}.days", window["days"])
        if days != int(days) or not 1 <= days <= MAX_DAYS:
            raise PlanError(f"{where}.days must be a whole number from 1 to {MAX_DAYS}", field)
        if windows and days <= windows[-1]["days"]:
            raise PlanError(f"{where}.days must be longer than the window before", field)
        checked: dict[str, Any] = {"days": int(days)}
        for name, number in window.items():
            if name == "days":
                continue
            if name not in WINDOW_FIELDS:
                raise PlanError(f"{where}.{name}: unknown field {name!r}", field)
            checked[name] = _METRIC_RULES[name](f"{where}.{name}", number)
        windows.append(checked)
    return tuple(windows)


_PROBABILITY = dict(low=0.0, high=1.0)

_METRIC_RULES: dict[str, Callable[[str, Any], Any]] = {
    "name": _short_text(required=True),
    "role": _choice(ROLES),
    "kind": _choice(KINDS),
    "method": _method,
    "baseline": _ranged(None, None),
    "sd": _ranged(0.0, None, optional=True),
    "unit": _unit,
    "better": _choice(BETTER),
    "denominator": _ranged(0.0, None, optional=True),
    "numerator_sd": _ranged(0.0, None, low_open=False, optional=True),
    "denominator_sd": _ranged(0.0, None, low_open=False, optional=True),
    "correlation": _ranged(-1.0, 1.0, low_open=False, high_open=False, optional=True),
    "quantile_level": _ranged(**_PROBABILITY, optional=True),
    "density": _ranged(0.0, None, optional=True),
    "second_level": _ranged(**_PROBABILITY, optional=True),
    "second_value": _ranged(0.0, None, optional=True),
    "effect": _ranged(None, None, optional=True),
    "relative": _flag,
    "alternative": _choice(ALTERNATIVES),
    "margin": _ranged(None, None),
    "alpha": _ranged(0.0, 0.5, optional=True),
    "power": _ranged(**_PROBABILITY, optional=True),
    "rho": _ranged(-1.0, 1.0),
    "cluster_size": _ranged(1.0, None, low_open=False),
    "icc": _ranged(0.0, 1.0, low_open=False, high_open=False),
    "cluster_cv": _ranged(0.0, None, low_open=False),
    "solve": _choice(SOLVES),
    "n": _ranged(0.0, None, optional=True),
    "notes": _text(required=False),
    "simulation": _simulation,
    "windowed": _flag,
    "windows": _windows,
}

_SETTINGS_RULES: dict[str, Callable[[str, Any], Any]] = {
    "title": _short_text(required=False),
    "description": _text(required=False),
    "alpha": _ranged(0.0, 0.5),
    "power": _ranged(**_PROBABILITY),
    "arms": _integer(1, MAX_ARMS),
    "ratio": _ranged(0.01, 100.0, low_open=False, high_open=False),
    "allocation": _choice(ALLOCATIONS),
    "correction": _choice(CORRECTIONS),
    "daily_units": _ranged(0.0, None, optional=True),
    "share": _ranged(0.0, 1.0, high_open=False),
    "whole_weeks": _flag,
    "runtime_days": _whole_days,
    "looks": _integer(1, MAX_LOOKS),
    "spending": _choice(SPENDING),
    "futility": _flag,
    "traffic": _choice(TRAFFIC_MODELS),
    "reach": _reach,
    "reach_source": _short_text(required=False),
    "ramp": _ramp,
    "burn_in": _integer(0, MAX_DAYS - 1),
}


def validate_field(field: str, value: Any, *, kind: str | None = None,
                   settings: bool = False) -> Any:
    """Check one value of a metric row or of the plan settings and return it normalised.

    Parameters
    ----------
    field : str
        A :class:`~fourfold.plan.model.Metric` or :class:`~fourfold.plan.model.Settings` field.
    value
        The new value: numbers (ints, floats, numpy scalars), text, booleans or ``None`` for
        optional fields. Text is never parsed as a number here; that is the editor's job.
    kind : str, optional
        The row's kind; with it, ``method`` is checked against that kind's methods (otherwise
        against the methods of every kind).
    settings : bool
        Validate as a settings field; needed only for ``alpha`` and ``power``, which exist in
        both (a row's may be ``None``, meaning the plan default; the plan's may not).

    Returns
    -------
    value
        Numbers as ``float`` (``int`` for ``arms`` and ``looks``), names stripped.

    Raises
    ------
    PlanError
        Naming the field and its allowed values or range.

    Examples
    --------
    >>> validate_field("alpha", 0.01)
    0.01
    >>> validate_field("arms", 2.0)
    2
    >>> validate_field("solve", "duration")
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: solve must be one of sample_size, detectable_effect, power, \
significance_level; got 'duration'
    """
    if settings or field not in _METRIC_RULES:
        rule = _SETTINGS_RULES.get(field)
        if rule is None:
            raise PlanError(f"unknown field {field!r}", field)
        return rule(field, value)
    if field == "method":
        return _method(field, value, kind)
    return _METRIC_RULES[field](field, value)


def validate_metric(metric: Metric) -> Metric:
    """Return a copy of ``metric`` with every field validated and normalised (its id kept).

    Raises
    ------
    PlanError
        For the first field at fault (``method`` is checked against the row's kind).

    Examples
    --------
    >>> validate_metric(Metric(name="  Conversion ")).name
    'Conversion'
    """
    values = {}
    for name in METRIC_FIELDS:
        values[name] = validate_field(name, getattr(metric, name), kind=metric.kind)
    return Metric(**values, id=metric.id)


def validate_settings(settings: Settings) -> Settings:
    """Return a copy of ``settings`` with every field validated and normalised.

    Examples
    --------
    >>> validate_settings(Settings(arms=2.0)).arms
    2
    """
    return Settings(
        **{name: validate_field(name, getattr(settings, name), settings=True)
           for name in SETTINGS_FIELDS}
    )
