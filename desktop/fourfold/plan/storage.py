"""Plan files: JSON in Fourfold's own format, read strictly and written atomically.

A plan file is one JSON object::

    {"format": "fourfold-plan", "schema_version": 2,
     "settings": {...every Settings field...},
     "metrics": [{...every Metric field...}, ...]}

A plan with scenarios is written as ``"schema_version": 2``: every metric row also has its
stable ``"id"``, and two more members hold the scenarios and the one the window shows::

     "scenarios": [{"name": "All traffic", "settings": {"share": 1.0},
                    "rows": {"<row id>": {"effect": 0.07}}, "omitted": ["<row id>"]}, ...],
     "active": "All traffic"            (or null: the base)

A plan without scenarios is written as version 1, exactly as before scenarios existed, so
older Fourfolds read it; its rows get fresh ids when it is read. Scenario values are checked
as base values are (:func:`fourfold.plan.scenarios.from_dict`); a scenario change naming a row
or field that does not exist is kept and reported, not dropped.

A plan that uses what version 3 added — a row's unit or "better" direction, the ratio and
quantile kinds and their inputs, the √k allocation or Dunnett's correction — is written as
``"schema_version": 3``, with row ids and the scenario members as in version 2; a plan that
uses none of it is written as before (version 1 or 2), so older Fourfolds still read it, and
files of every earlier version open unchanged, the new fields at their defaults.

A plan that uses the traffic model beyond constant daily units — a reach curve, a ramp-up, a
burn-in (:mod:`fourfold.plan.traffic`) — or rows that follow their history windows
(:mod:`fourfold.plan.windows`) is written as ``"schema_version": 4`` with every field of
version 3; a plan that uses none of it is written as before::

    "traffic": "reach", "reach": [[1, 41500.0], [2, 46200.0], ...], "reach_source": "...",
    "ramp": [[2, 0.05], [4, 0.25]], "burn_in": 1                          (settings)
    "windowed": true, "windows": [{"days": 7, "baseline": 2.3, "sd": 14.1}, ...]  (rows)

On reading, every value goes through :func:`fourfold.plan.fields.validate_field`; a missing
field takes its default (except a metric's ``name``, ``kind`` and ``baseline``), an unknown
field, a wrong type or an out-of-range value is a :class:`~fourfold.plan.fields.PlanError` that
names its place (``metrics[2].alpha``). Saving writes a temporary file next to the target and
moves it into place with :func:`os.replace`, so the old file survives any failure.
"""

from __future__ import annotations

import copy
import dataclasses
import json
import math
import os
import pathlib
from typing import Any

from fourfold import atomic
from fourfold.plan import scenarios, traffic
from fourfold.plan.fields import (
    METRIC_FIELDS,
    SETTINGS_FIELDS,
    PlanError,
    key_name,
    shown,
    validate_field,
)
from fourfold.plan.model import Metric, Plan, Settings

FORMAT = "fourfold-plan"
PLAIN_VERSION = 1
"""The version written for a plan without scenarios (what every Fourfold since 1 reads)."""
SCENARIOS_VERSION = 2
"""The version that added row ids, scenarios and the active scenario; written only for a plan
with scenarios."""
KINDS_VERSION = 3
"""The version that added units, directions, the ratio and quantile kinds, the √k allocation
and Dunnett's correction; written only for a plan that uses one of them."""
TRAFFIC_VERSION = 4
"""The version that added the traffic model (reach curve, ramp-up, burn-in) and rows that
follow their history windows; written only for a plan that uses them."""
SCHEMA_VERSION = TRAFFIC_VERSION
"""The newest version this Fourfold reads."""
KINDS_METRIC_FIELDS = ("unit", "better", "denominator", "numerator_sd", "denominator_sd",
                       "correlation", "quantile_level", "density", "second_level",
                       "second_value")
KINDS_SETTINGS_FIELDS = ("allocation",)
TRAFFIC_METRIC_FIELDS = ("windowed", "windows")
TRAFFIC_SETTINGS_FIELDS = traffic.TRAFFIC_SETTINGS
REQUIRED_METRIC_FIELDS = ("name", "kind", "baseline")
MAX_DIGITS = 4000
"""Longest JSON integer read exactly (below Python's 4,300-digit limit; any integer past 309
digits is beyond a double and refused by the field's check)."""


def sample_path() -> pathlib.Path:
    """The bundled demo plan, ``samples/quillmoss-checkout.json`` at the repository root.

    Examples
    --------
    >>> sample_path().name
    'quillmoss-checkout.json'
    """
    return pathlib.Path(__file__).resolve().parents[3] / "samples" / "quillmoss-checkout.json"


def _uses_kinds(plan: Plan) -> bool:
    """Whether the plan (or a scenario of it) uses anything version 3 added."""
    defaults, plain = Metric(), Settings()
    if plan.settings.correction == "dunnett" or any(
            getattr(plan.settings, name) != getattr(plain, name)
            for name in KINDS_SETTINGS_FIELDS):
        return True
    for metric in plan.metrics:
        if metric.kind in ("ratio", "quantile") or any(
                getattr(metric, name) != getattr(defaults, name) for name in KINDS_METRIC_FIELDS):
            return True
    for scenario in plan.scenarios:
        changed = dict(scenario.settings)
        for fields in scenario.rows.values():
            changed.update(fields)
        if changed.get("correction") == "dunnett" or changed.get("kind") in ("ratio",
                                                                             "quantile"):
            return True
        if any(name in changed for name in (*KINDS_METRIC_FIELDS, *KINDS_SETTINGS_FIELDS)):
            return True
    return False


def _uses_traffic(plan: Plan) -> bool:
    """Whether the plan (or a scenario of it) uses anything version 4 added."""
    if traffic.uses_model(plan.settings) or any(
            metric.windowed or metric.windows for metric in plan.metrics):
        return True
    for scenario in plan.scenarios:
        changed = set(scenario.settings)
        for fields in scenario.rows.values():
            changed.update(fields)
        if changed & {*TRAFFIC_SETTINGS_FIELDS, *TRAFFIC_METRIC_FIELDS}:
            return True
    return False


def _written(names, version: int, fields: dict[int, tuple[str, ...]]) -> list[str]:
    """The names a file of ``version`` holds: those of later versions left out."""
    return [name for name in names
            if not any(name in added for since, added in fields.items() if version < since)]


def to_dict(plan: Plan) -> dict[str, Any]:
    """The JSON object of a plan (every field written, in declaration order).

    Version 2 (row ids, scenarios and the active one) only when the plan has scenarios;
    version 3 (and its fields) only when it uses what version 3 added; version 4 (and its
    fields) only when it uses what version 4 added.
    """
    version = PLAIN_VERSION
    if plan.scenarios:
        version = SCENARIOS_VERSION
    if _uses_kinds(plan):
        version = KINDS_VERSION
    if _uses_traffic(plan):
        version = TRAFFIC_VERSION
    versioned = version >= SCENARIOS_VERSION
    metric_fields = _written(METRIC_FIELDS, version, {KINDS_VERSION: KINDS_METRIC_FIELDS,
                                                      TRAFFIC_VERSION: TRAFFIC_METRIC_FIELDS})
    kept = _written(SETTINGS_FIELDS, version, {KINDS_VERSION: KINDS_SETTINGS_FIELDS,
                                              TRAFFIC_VERSION: TRAFFIC_SETTINGS_FIELDS})
    settings = {key: value for key, value in dataclasses.asdict(plan.settings).items()
                if key in kept}
    data = {
        "format": FORMAT,
        "schema_version": version,
        "settings": settings,
        "metrics": [{**({"id": metric.id} if versioned else {}),
                     **{name: copy.deepcopy(getattr(metric, name)) for name in metric_fields}}
                    for metric in plan.metrics],
    }
    if versioned:
        data["scenarios"] = [scenarios.to_dict(scenario) for scenario in plan.scenarios]
        data["active"] = plan.active
    return data


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


def _fields(data: dict, names: tuple[str, ...], where: str, *, settings: bool,
            kind: str | None = None) -> dict[str, Any]:
    unknown = [key for key in data if key not in names]
    if unknown:
        key = key_name(unknown[0])
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
    members = ("format", "schema_version", "settings", "metrics")
    if version >= SCENARIOS_VERSION:
        members += ("scenarios", "active")
    unknown = [key for key in data if key not in members]
    if unknown:
        key = key_name(unknown[0])
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
        identity = {}
        if version >= SCENARIOS_VERSION:
            row = dict(row)
            if "id" not in row:
                raise PlanError(f"{where}.id: missing (required)", f"{where}.id")
            identity["id"] = scenarios.check_row_id(row.pop("id"), f"{where}.id")
            if any(metric.id == identity["id"] for metric in metrics):
                raise PlanError(f"{where}.id: {identity['id']!r} is the id of another row",
                                f"{where}.id")
        for name in REQUIRED_METRIC_FIELDS:
            if name not in row:
                raise PlanError(f"{where}.{name}: missing (required)", f"{where}.{name}")
        kind = _fields({"kind": row["kind"]}, ("kind",), where, settings=False)["kind"]
        metrics.append(Metric(**_fields(row, METRIC_FIELDS, where, settings=False, kind=kind),
                              **identity))
    plan = Plan(settings, metrics)
    if version >= SCENARIOS_VERSION:
        _scenarios(plan, data)
    return plan


def _scenarios(plan: Plan, data: dict) -> None:
    """Read a version-2 file's scenarios and active scenario into ``plan``."""
    listed = data.get("scenarios", [])
    if not isinstance(listed, list):
        raise PlanError("scenarios must be a JSON list", "scenarios")
    for index, scenario in enumerate(listed):
        plan.scenarios.append(scenarios.from_dict(plan, scenario, f"scenarios[{index}]"))
    active = data.get("active")
    if active is not None and active not in [scenario.name for scenario in plan.scenarios]:
        raise PlanError(f"active: the plan has no scenario called {active!r}", "active")
    plan.active = active


class _Duplicate(ValueError):
    """A key that appears twice in one JSON object."""


def _unique(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    seen: dict[str, Any] = {}
    for key, value in pairs:
        if key in seen:
            raise _Duplicate(key)
        seen[key] = value
    return seen


class Beyond(float):
    """A JSON number beyond a double: ±inf that remembers how the file wrote it, so that the
    field's check refuses it by name and shows it (instead of Python's digit limit failing the
    whole file, or a message about "inf" the file never said)."""

    text: str

    def __new__(cls, text: str) -> Beyond:
        number = super().__new__(cls, -math.inf if text.startswith("-") else math.inf)
        number.text = text
        return number


def _whole_number(text: str) -> int | float:
    """A JSON integer: exact up to :data:`MAX_DIGITS` digits, beyond that :class:`Beyond`."""
    return int(text) if len(text) <= MAX_DIGITS else Beyond(text)


def _real_number(text: str) -> float:
    """A JSON number with a fraction or exponent; :class:`Beyond` past ±1.8e308."""
    number = float(text)
    return Beyond(text) if math.isinf(number) else number


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
        return json.loads(text, object_pairs_hook=_unique, parse_int=_whole_number,
                          parse_float=_real_number)
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
    if "\x00" in str(path):
        raise PlanError(f"cannot read {str(path)!r}: the file name holds a NUL character")
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
