"""Scenarios: named alternatives to the base plan that store only what they change.

A :class:`~fourfold.plan.model.Scenario` holds setting values, row field values keyed by the
row's stable id, and the ids of rows it leaves out. Its plan — the **effective plan** — is the
base with those changes laid over it (:func:`effective`), so an edit of the base reaches every
scenario that does not change that field itself. The effective plan is an ordinary
:class:`~fourfold.plan.model.Plan` without scenarios: evaluation, exports and the window's
row cache use it as they use the base.

Stale changes
-------------
A change may name a row that is no longer in the base (deleted after the scenario changed it),
a field this Fourfold does not know (a file from elsewhere) or a method that no longer fits
its row's kind (the base's kind changed). Such a change is kept — undoing the deletion brings
the row back with its changes, and saving writes it again — but not applied, and
:func:`problems` reports it in words; :func:`resolve` gives the effective plan and these
reports in one pass.

Examples
--------
>>> from fourfold.plan.model import Metric, Plan, Scenario, Settings
>>> plan = Plan(Settings(share=0.6), [Metric(name="Conversion", id="r1")],
...             [Scenario("All traffic", settings={"share": 1.0})])
>>> effective(plan, "All traffic").settings.share, effective(plan).settings.share
(1.0, 0.6)
>>> plan.settings.share = 0.5            # a base edit reaches the scenario's other fields
>>> plan.metrics[0].baseline = 0.2
>>> effective(plan, "All traffic").metrics[0].baseline
0.2
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from fourfold.engine import METHODS
from fourfold.plan.fields import (
    METRIC_FIELDS,
    SETTINGS_FIELDS,
    TRAFFIC_LABELS,
    PlanError,
    validate_field,
)
from fourfold.plan.model import Metric, Plan, Scenario
from fourfold.plan.traffic import TRAFFIC_SETTINGS, steps_text

BASE = "Base"
"""The base's name in the comparison and the window (no scenario may take it)."""

MAX_NAME = 60
ROW_ID = re.compile(r"[A-Za-z0-9_-]{1,40}")


@dataclass(frozen=True)
class Resolved:
    """A scenario's effective plan and the reports of its stale changes."""

    plan: Plan
    problems: tuple[str, ...]


def find(plan: Plan, name: str) -> Scenario:
    """The scenario called ``name``.

    Raises
    ------
    PlanError
        When the plan has no scenario of that name.

    Examples
    --------
    >>> find(Plan(scenarios=[Scenario("A")]), "B")
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: the plan has no scenario called 'B' (it has 'A')
    """
    for scenario in plan.scenarios:
        if scenario.name == name:
            return scenario
    names = ", ".join(repr(scenario.name) for scenario in plan.scenarios)
    raise PlanError(f"the plan has no scenario called {name!r} "
                    f"({'it has ' + names if names else 'it has none'})", "scenario")


def check_name(plan: Plan, name: Any, *, renaming: str | None = None) -> str:
    """Validate a new scenario name (stripped): text, unique ignoring case, not "base".

    ``renaming`` is the scenario being renamed (its own name is not a clash).

    Examples
    --------
    >>> check_name(Plan(scenarios=[Scenario("Drop arm B")]), "  drop arm b ")
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: a scenario called 'Drop arm B' exists already
    >>> check_name(Plan(), "BASE")
    Traceback (most recent call last):
    ...
    fourfold.plan.fields.PlanError: "Base" names the plan as entered; choose another name
    """
    if not isinstance(name, str) or not name.strip():
        raise PlanError("a scenario needs a name (text)", "scenario")
    name = " ".join(name.split())
    if len(name) > MAX_NAME:
        raise PlanError(f"a scenario name must be at most {MAX_NAME} characters long",
                        "scenario")
    if name.casefold() == BASE.casefold():
        raise PlanError(f'"{BASE}" names the plan as entered; choose another name', "scenario")
    for scenario in plan.scenarios:
        if scenario.name.casefold() == name.casefold() and scenario.name != renaming:
            raise PlanError(f"a scenario called {scenario.name!r} exists already", "scenario")
    return name


def free_name(plan: Plan, stem: str) -> str:
    """``stem``, or ``stem 2``, ``stem 3``…: the first name no scenario has.

    Examples
    --------
    >>> free_name(Plan(scenarios=[Scenario("Scenario 1")]), "Scenario 1")
    'Scenario 1 2'
    """
    taken = {scenario.name.casefold() for scenario in plan.scenarios}
    stem = stem[:MAX_NAME - 4].strip()
    name, number = stem, 1
    while name.casefold() in taken or name.casefold() == BASE.casefold():
        number += 1
        name = f"{stem} {number}"
    return name


def resolve(plan: Plan, name: str | None = None) -> Resolved:
    """The effective plan of scenario ``name`` (``None``: the base) and its stale changes.

    The effective plan shares the base's objects where the scenario changes nothing (the
    base's settings, its unchanged rows): treat it as read-only and edit through
    :mod:`fourfold.plan.commands`. Its rows keep the base rows' ids.

    Raises
    ------
    PlanError
        When the plan has no scenario called ``name``.
    """
    if name is None:
        return Resolved(Plan(plan.settings, plan.metrics), ())
    scenario = find(plan, name)
    problems: list[str] = []
    settings = plan.settings
    changes = {}
    for field, value in scenario.settings.items():
        if field in SETTINGS_FIELDS:
            changes[field] = value
        else:
            problems.append(f"its setting {field!r} is not one this Fourfold knows; "
                            "the change is kept but not applied")
    if changes:
        settings = dataclasses.replace(settings, **changes)
    omitted = set(scenario.omitted)
    metrics = []
    for metric in plan.metrics:
        if metric.id in omitted:
            continue
        fields = scenario.rows.get(metric.id)
        metrics.append(_changed(metric, fields, problems) if fields else metric)
    ids = {metric.id for metric in plan.metrics}
    for row_id, fields in scenario.rows.items():
        if row_id not in ids:
            problems.append(f"it changes {_listed(fields)} of row {row_id}, which is no longer "
                            "in the plan; the change is kept but not applied")
    for row_id in scenario.omitted:
        if row_id not in ids:
            problems.append(f"it leaves out row {row_id}, which is no longer in the plan")
    return Resolved(Plan(settings, metrics), tuple(f"Scenario {name!r}: {problem}"
                                                   for problem in problems))


def _listed(fields: Mapping[str, Any]) -> str:
    return ", ".join(fields) if fields else "nothing"


_CHANGED: dict[tuple[int, str], tuple[Metric, tuple[str, ...]]] = {}
"""Rows of effective plans by the base row's stamp and the scenario's changes in text: an
unchanged scenario row is the same object, with the same stamp, on every resolve, so the row
cache (and the fixed point of rows that follow their windows) finds it unchanged."""
_CHANGED_KEPT = 1024


def _changed(metric: Metric, fields: Mapping[str, Any], problems: list[str]) -> Metric:
    """``metric`` with the known fields of ``fields`` laid over it (read-only: shared)."""
    key = (metric.stamp, repr(sorted(fields.items())))
    found = _CHANGED.get(key)
    if found is None:
        said: list[str] = []
        found = _CHANGED[key] = (_laid_over(metric, fields, said), tuple(said))
        if len(_CHANGED) > _CHANGED_KEPT:
            del _CHANGED[next(iter(_CHANGED))]
    problems.extend(found[1])
    return found[0]


def _laid_over(metric: Metric, fields: Mapping[str, Any], problems: list[str]) -> Metric:
    known = {field: value for field, value in fields.items() if field in METRIC_FIELDS}
    for field in fields:
        if field not in known:
            problems.append(f"its change of {field!r} in {metric.name} names a field this "
                            "Fourfold does not know; the change is kept but not applied")
    changed = dataclasses.replace(metric, **known)
    if changed.method is not None and changed.method not in METHODS[changed.kind]:
        problems.append(f"{metric.name}: method {changed.method!r} does not fit the kind "
                        f"{changed.kind!r}; the kind's default method is used")
        changed.method = None
    return changed


def effective(plan: Plan, name: str | None = None) -> Plan:
    """The plan scenario ``name`` describes (``None``: the base); see :func:`resolve`.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, Scenario
    >>> plan = Plan(metrics=[Metric(name="A", id="a"), Metric(name="B", id="b")],
    ...             scenarios=[Scenario("Only B", omitted=["a"])])
    >>> [metric.name for metric in effective(plan, "Only B").metrics]
    ['B']
    """
    return resolve(plan, name).plan


def problems(plan: Plan, name: str | None = None) -> tuple[str, ...]:
    """The stale changes of scenario ``name`` (of every scenario when ``None``), in words.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, Scenario
    >>> plan = Plan(metrics=[Metric(id="a")],
    ...             scenarios=[Scenario("S", rows={"gone": {"effect": 0.1}})])
    >>> problems(plan)
    ("Scenario 'S': it changes effect of row gone, which is no longer in the plan; the change \
is kept but not applied",)
    """
    names = [scenario.name for scenario in plan.scenarios] if name is None else [name]
    return tuple(problem for each in names for problem in resolve(plan, each).problems)


def overrides(scenario: Scenario) -> int:
    """How many settings and row fields the scenario changes, and rows it leaves out.

    Examples
    --------
    >>> overrides(Scenario("S", {"arms": 1}, {"r": {"effect": 0.1, "sd": 2.0}}, ["q"]))
    4
    """
    return (len(scenario.settings) + sum(len(fields) for fields in scenario.rows.values())
            + len(scenario.omitted))


# --- files -------------------------------------------------------------------------------

def check_row_id(value: Any, where: str) -> str:
    """A row id from a file: 1 to 40 letters, digits, ``_`` or ``-``."""
    if not isinstance(value, str) or not ROW_ID.fullmatch(value):
        raise PlanError(f"{where}: a row id must be 1 to 40 letters, digits, '_' or '-'; "
                        f"got {value!r}", where)
    return value


def to_dict(scenario: Scenario) -> dict[str, Any]:
    """The JSON object of a scenario (what it changes, nothing else)."""
    return {
        "name": scenario.name,
        "settings": dict(scenario.settings),
        "rows": {row_id: dict(fields) for row_id, fields in scenario.rows.items()},
        "omitted": list(scenario.omitted),
    }


def _mapping(value: Any, where: str) -> dict:
    if not isinstance(value, dict):
        raise PlanError(f"{where} must be a JSON object, not {type(value).__name__}", where)
    return value


def _value(field: str, value: Any, where: str, *, settings: bool) -> Any:
    """A known field's value checked as a base edit's would be; an unknown one kept as is.

    A method is checked against every kind's methods here: whether it fits its row's kind
    depends on the base, which may change after the scenario was made (see :func:`resolve`).
    """
    known = SETTINGS_FIELDS if settings else METRIC_FIELDS
    if field not in known:
        return value
    try:
        return validate_field(field, value, settings=settings)
    except PlanError as error:
        raise PlanError(f"{where}: {error}", where) from None


def from_dict(plan: Plan, data: Any, where: str) -> Scenario:
    """Read a scenario of a plan file (``plan`` holds the scenarios read before it).

    Values of known fields are validated as base edits are; rows and fields that do not
    exist are kept for :func:`problems` to report.

    Raises
    ------
    PlanError
        For a malformed object, a bad name, a bad row id or an invalid value (naming its
        place, e.g. ``scenarios[0].rows.r1.alpha``).
    """
    data = _mapping(data, where)
    unknown = [key for key in data if key not in ("name", "settings", "rows", "omitted")]
    if unknown:
        raise PlanError(f"{where}.{unknown[0]}: unknown field {unknown[0]!r}",
                        f"{where}.{unknown[0]}")
    try:
        name = check_name(plan, data.get("name"))
    except PlanError as error:
        raise PlanError(f"{where}.name: {error}", f"{where}.name") from None
    settings = {field: _value(field, value, f"{where}.settings.{field}", settings=True)
                for field, value in _mapping(data.get("settings", {}), f"{where}.settings")
                .items()}
    rows = {}
    for row_id, fields in _mapping(data.get("rows", {}), f"{where}.rows").items():
        place = f"{where}.rows.{check_row_id(row_id, f'{where}.rows')}"
        rows[row_id] = {field: _value(field, value, f"{place}.{field}", settings=False)
                        for field, value in _mapping(fields, place).items()}
    omitted = data.get("omitted", [])
    if not isinstance(omitted, list):
        raise PlanError(f"{where}.omitted must be a JSON list of row ids", f"{where}.omitted")
    omitted = [check_row_id(row_id, f"{where}.omitted[{index}]")
               for index, row_id in enumerate(omitted)]
    if len(set(omitted)) != len(omitted):
        raise PlanError(f"{where}.omitted names a row twice", f"{where}.omitted")
    return Scenario(name, settings, rows, omitted)


# --- in words ----------------------------------------------------------------------------

_LABELS = {
    "arms": "treatment arms", "ratio": "allocation", "daily_units": "daily units",
    "share": "share of traffic in the test", "whole_weeks": "whole weeks",
    "runtime_days": "fixed runtime (days)", "looks": "looks", "rho": "CUPED ρ",
    "n": "n (control units)", "icc": "ICC", "sd": "sd", "cluster_cv": "cluster-size cv",
    "traffic": "traffic model", "reach": "reach curve", "reach_source": "reach curve's source",
    "ramp": "ramp-up", "burn_in": "burn-in", "windowed": "figures by window",
    "windows": "history windows",
}
_FRACTIONS = ("alpha", "power", "share")


def _traffic_shown(field: str, value: Any) -> str:
    """A traffic model field in a sentence (a curve or a ramp-up in brief)."""
    if field == "traffic":
        return TRAFFIC_LABELS[value]
    if field == "reach":
        return (f"{value[-1][1]:,.0f} distinct units by day {value[-1][0]:g} "
                f"({len(value)} points)") if value else "none"
    if field == "ramp":
        return steps_text(value) or "none"
    if field == "windows":
        return ", ".join(f"{window['days']} d" for window in value) or "none"
    if field == "burn_in":
        return f"{value} {'day' if value == 1 else 'days'}"
    return f"“{value}”" if value else "none"


def _shown(field: str, value: Any, metric: Metric | None = None) -> str:
    """A value in a sentence: fractions and relative effects as percentages."""
    if field in (*TRAFFIC_SETTINGS, "windows"):
        return _traffic_shown(field, value)
    if value is None:
        return "none" if field in ("daily_units", "runtime_days", "n", "sd") else "default"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        relative = (metric is not None and field in ("effect", "margin") and metric.relative)
        proportion = metric is not None and field == "baseline" and metric.kind == "proportion"
        if field in _FRACTIONS or relative or proportion:
            return f"{100 * value:.4g} %"
        return f"{value:,.6g}"
    return str(value)


def describe(plan: Plan, name: str) -> str:
    """What scenario ``name`` changes, as one plain sentence.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, Scenario, Settings
    >>> plan = Plan(Settings(arms=2, share=0.6),
    ...             [Metric(name="Conversion", id="c"), Metric(name="Page load", id="p")],
    ...             [Scenario("S", {"arms": 1, "share": 1.0}, {"c": {"effect": 0.07}}, ["p"])])
    >>> describe(plan, "S")
    'Differs from the base in treatment arms 1 (base 2), share of traffic in the test 100 % \
(base 60 %), Conversion: effect 7 % (base 5 %); leaves out Page load.'

    Rows with the same changes are named together:

    >>> plan.scenarios.append(Scenario("T", rows={"c": {"effect": 0.07}, "p": {"effect": 0.07}}))
    >>> describe(plan, "T")
    'Differs from the base in Conversion, Page load: effect 7 % (base 5 %).'
    """
    scenario = find(plan, name)
    view = effective(plan, name)
    parts = [f"{_LABELS.get(field, field.replace('_', ' '))} "
             f"{_shown(field, getattr(view.settings, field))} "
             f"(base {_shown(field, getattr(plan.settings, field))})"
             for field in SETTINGS_FIELDS if field in scenario.settings]
    changed = {metric.id: metric for metric in view.metrics}
    rows: dict[tuple[str, ...], list[str]] = {}  # rows with the same changes named together
    for metric in plan.metrics:
        fields = scenario.rows.get(metric.id, {})
        if metric.id not in changed or not fields:
            continue
        mine = changed[metric.id]
        clauses = tuple(f"{_LABELS.get(field, field.replace('_', ' '))} "
                        f"{_shown(field, getattr(mine, field), mine)} "
                        f"(base {_shown(field, getattr(metric, field), metric)})"
                        for field in METRIC_FIELDS if field in fields)
        rows.setdefault(clauses, []).append(metric.name)
    parts += [f"{', '.join(names)}: {', '.join(clauses)}" for clauses, names in rows.items()]
    left_out = [metric.name for metric in plan.metrics if metric.id in scenario.omitted]
    if not parts and not left_out:
        return "Same as the base."
    sentences = []
    if parts:
        sentences.append("differs from the base in " + ", ".join(parts))
    if left_out:
        sentences.append("leaves out " + ", ".join(left_out))
    sentence = "; ".join(sentences)
    return sentence[0].upper() + sentence[1:] + "."
