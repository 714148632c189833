"""Plan files: JSON in Fourfold's own format, read strictly and written atomically.

A plan file is one JSON object::

    {"format": "fourfold-plan", "schema_version": 1,
     "settings": {...every Settings field...},
     "metrics": [{...every Metric field...}, ...]}

On reading, every value goes through :func:`fourfold.plan.fields.validate_field`; a missing
field takes its default (except a metric's ``name``, ``kind`` and ``baseline``), an unknown
field, a wrong type or an out-of-range value is a :class:`~fourfold.plan.fields.PlanError` that
names its place (``metrics[2].alpha``). Saving writes a temporary file next to the target and
moves it into place with :func:`os.replace`, so the old file survives any failure.
"""

from __future__ import annotations

import dataclasses
import json
import os
import pathlib
from typing import Any

from fourfold import atomic
from fourfold.plan.fields import (
    METRIC_FIELDS,
    SETTINGS_FIELDS,
    PlanError,
    shown,
    validate_field,
)
from fourfold.plan.model import Metric, Plan, Settings

FORMAT = "fourfold-plan"
SCHEMA_VERSION = 1
REQUIRED_METRIC_FIELDS = ("name", "kind", "baseline")
MAX_DIGITS = 400
"""Longest JSON integer read exactly (larger ones are beyond any float and are refused)."""


def sample_path() -> pathlib.Path:
    """The bundled demo plan, ``samples/quillmoss-checkout.json`` at the repository root.

    Examples
    --------
    >>> sample_path().name
    'quillmoss-checkout.json'
    """
    return pathlib.Path(__file__).resolve().parents[3] / "samples" / "quillmoss-checkout.json"


def to_dict(plan: Plan) -> dict[str, Any]:
    """The JSON object of a plan (every field written, in declaration order)."""
    return {
        "format": FORMAT,
        "schema_version": SCHEMA_VERSION,
        "settings": dataclasses.asdict(plan.settings),
        "metrics": [dataclasses.asdict(metric) for metric in plan.metrics],
    }


def dumps(plan: Plan) -> str:
    """The plan as JSON text (indented, UTF-8 friendly, ending with a newline).

    Examples
    --------
    >>> loads(dumps(Plan.empty())) == Plan.empty()
    True
    """
    return json.dumps(to_dict(plan), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _object(value: Any, where: str) -> dict:
    if not isinstance(value, dict):
        raise PlanError(f"{where} must be a JSON object, not {type(value).__name__}", where)
    return value


def _place(key: str) -> str:
    """A key as a message names its place: on one line, cut to about 40 characters."""
    text = shown(key, 42)
    return text[1:-1] if text[:1] in "'\"" and text[-1:] == text[:1] else text[1:]


def _fields(data: dict, names: tuple[str, ...], where: str, *, settings: bool,
            kind: str | None = None) -> dict[str, Any]:
    unknown = [key for key in data if key not in names]
    if unknown:
        key = _place(unknown[0])
        raise PlanError(f"{where}.{key}: unknown field {shown(unknown[0], 40)}",
                        f"{where}.{key}")
    values = {}
    for name in names:
        if name in data:
            try:
                values[name] = validate_field(name, data[name], kind=kind, settings=settings)
            except PlanError as error:
                raise PlanError(f"{where}.{name}: {error}", f"{where}.{name}") from None
    return values


def from_dict(data: Any) -> Plan:
    """Build a plan from a parsed JSON object, checking every field.

    Raises
    ------
    PlanError
        For a foreign object (``format`` missing or not ``"fourfold-plan"``), a newer
        ``schema_version``, or any field at fault; the message names the field's place.
    """
    data = _object(data, "plan")
    if data.get("format") != FORMAT:
        found = data.get("format")
        raise PlanError(
            f"format: not a Fourfold plan (expected \"format\": \"{FORMAT}\", found "
            f"{shown(found)})",
            "format",
        )
    version = data.get("schema_version")
    if isinstance(version, bool) or not isinstance(version, int):
        raise PlanError(f"schema_version must be a whole number, not {shown(version)}",
                        "schema_version")
    if version > SCHEMA_VERSION:
        raise PlanError(
            f"schema_version {shown(version)} is newer than this Fourfold reads "
            f"({SCHEMA_VERSION}); "
            "open it with a newer Fourfold",
            "schema_version",
        )
    if version < 1:
        raise PlanError(f"schema_version must be 1 or more, not {version}", "schema_version")
    unknown = [key for key in data if key not in ("format", "schema_version", "settings",
                                                   "metrics")]
    if unknown:
        key = _place(unknown[0])
        raise PlanError(f"{key}: unknown field {shown(unknown[0], 40)}", key)
    settings = Settings(**_fields(_object(data.get("settings", {}), "settings"),
                                  SETTINGS_FIELDS, "settings", settings=True))
    rows = data.get("metrics", [])
    if not isinstance(rows, list):
        raise PlanError(f"metrics must be a JSON list, not {type(rows).__name__}", "metrics")
    metrics = []
    for index, row in enumerate(rows):
        where = f"metrics[{index}]"
        row = _object(row, where)
        for name in REQUIRED_METRIC_FIELDS:
            if name not in row:
                raise PlanError(f"{where}.{name}: missing (required)", f"{where}.{name}")
        kind = _fields({"kind": row["kind"]}, ("kind",), where, settings=False)["kind"]
        metrics.append(Metric(**_fields(row, METRIC_FIELDS, where, settings=False, kind=kind)))
    return Plan(settings, metrics)


class _Duplicate(ValueError):
    """A key that appears twice in one JSON object."""


def _unique(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    seen: dict[str, Any] = {}
    for key, value in pairs:
        if key in seen:
            raise _Duplicate(key)
        seen[key] = value
    return seen


def _whole_number(text: str) -> int | float:
    """A JSON integer: exact up to :data:`MAX_DIGITS` digits, beyond that a float (inf), which
    the field's check then refuses by name instead of Python's digit limit failing the file."""
    return int(text) if len(text) <= MAX_DIGITS else float(text)


def parse_json(text: str) -> Any:
    """Parse JSON text strictly: a key twice in one object, nesting deeper than the reader can
    follow, or any syntax error is a :class:`PlanError` with a one-line message.

    Examples
    --------
    >>> parse_json('{"metrics": [], "metrics": [1]}')
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: the field 'metrics' appears twice in one object; a plan \
file names each field once
    >>> parse_json("[" * 100_000)
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: not valid JSON: nested too deeply (a plan file is a few \
levels deep)
    """
    try:
        return json.loads(text, object_pairs_hook=_unique, parse_int=_whole_number)
    except json.JSONDecodeError as error:
        raise PlanError(
            f"not valid JSON: {error.msg} at line {error.lineno}, column {error.colno}", None
        ) from None
    except _Duplicate as error:
        key = shown(error.args[0])
        raise PlanError(f"the field {key} appears twice in one object; a plan file names "
                        "each field once", None) from None
    except RecursionError:
        raise PlanError("not valid JSON: nested too deeply (a plan file is a few levels deep)",
                        None) from None
    except ValueError as error:
        raise PlanError(f"not valid JSON: {error}", None) from None


def loads(text: str) -> Plan:
    """Parse plan JSON text.

    Raises
    ------
    PlanError
        For text that is not JSON (with line and column), a field named twice in one object,
        or text that is not a valid plan.

    Examples
    --------
    >>> loads('{"format": "fourfold-plan", "schema_version": 1}').metrics
    []
    >>> loads('{"format": "fourfold-plan", "schema_version": 1, "settings": {"alpha": 2}}')
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: settings.alpha: alpha must satisfy 0 < alpha < 0.5; got 2
    """
    return from_dict(parse_json(text))


def load(path: str | os.PathLike) -> Plan:
    """Read a plan file.

    Raises
    ------
    PlanError
        For an unreadable file (naming it) or any fault :func:`loads` reports.
    """
    path = pathlib.Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as error:
        raise PlanError(f"cannot read {path}: {error}") from None
    try:
        return loads(text)
    except PlanError as error:
        raise PlanError(f"{path.name}: {error}", error.field) from None


def save(plan: Plan, path: str | os.PathLike) -> None:
    """Write a plan file atomically: the old file stays intact if anything fails.

    The text is written to a temporary file in the target's folder, flushed to disk, checked
    and moved over the target with :func:`os.replace` (see :mod:`fourfold.atomic`); an
    existing file's permissions are kept, and a symbolic link is followed (its target is
    replaced, the link stays). Temporary files of earlier saves that were killed are removed.

    Raises
    ------
    PlanError
        When the plan cannot be written (the message names the file and the reason), or the
        target is not a regular file (a folder or a device).
    """
    try:
        data = dumps(plan).encode("utf-8")
    except (TypeError, ValueError) as error:
        raise PlanError(f"cannot save {os.fspath(path)!r}: {error}") from None
    atomic.write_bytes(path, data, error=PlanError, verb="save")
