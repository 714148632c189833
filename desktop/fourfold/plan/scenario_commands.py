"""Undoable commands on scenarios, and edits made while a scenario is active.

The scenario commands — :class:`NewScenario`, :class:`SwitchScenario`,
:class:`RenameScenario`, :class:`DuplicateScenario`, :class:`DeleteScenario`,
:class:`ApplyToBase`, :class:`RestoreRows` and :class:`ForgetStale` — go through the same
:class:`~fourfold.plan.commands.CommandStack` as every edit, and report
``Change("scenario")``: what the window shows may have changed as a whole.

While a scenario is active, :meth:`CommandStack.do` wraps every ordinary edit in
:class:`InScenario`: the edit is checked against the scenario's effective plan exactly as it
would be against the base (row numbers are those of the effective plan, which leaves out the
scenario's omitted rows) and stored as the scenario's change. A value equal to the base's
removes the scenario's change of that field, so later base edits reach it again. Removing
rows leaves them out of the scenario; adding, moving and sorting rows belong to the base and
are refused with a message.

Apply to base
-------------
:class:`ApplyToBase` makes a scenario's changes part of the base (rows it leaves out are
deleted from the base) and removes the scenario, which is now the base. Every other scenario
keeps the plan it described: where it did not change a field the applied scenario changed, it
now changes it back to the former base's value. Rows deleted from the base leave every
scenario; another scenario's changes to them stay, reported as stale (undo brings it all
back).

Examples
--------
>>> from fourfold.plan.commands import CommandStack, SetField
>>> from fourfold.plan.model import Plan
>>> stack = CommandStack(Plan.empty())
>>> stack.do(NewScenario("Larger effect"))
>>> stack.do(SetField(0, "effect", 0.07))
>>> stack.plan.metrics[0].effect, stack.view.metrics[0].effect, stack.undo_text
(0.05, 0.07, 'Set effect of Primary metric in Larger effect')
>>> stack.undo(); stack.undo(); stack.plan.scenarios
[]
"""

from __future__ import annotations

import copy
from typing import Any

from fourfold.engine import METHODS
from fourfold.plan import scenarios
from fourfold.plan.commands import (
    Change,
    Command,
    InsertMetrics,
    RemoveMetrics,
    SetField,
    SetFields,
    SetSetting,
    _check_row,
)
from fourfold.plan.fields import METRIC_FIELDS, SETTINGS_FIELDS, PlanError, validate_field
from fourfold.plan.model import Plan, Scenario
from fourfold.plan.settings_commands import SetSettings, WithSettings, checked_settings

_MISSING = object()


class ScenarioCommand(Command):
    """A command on the scenarios themselves; undone by restoring what it saved."""

    def _save(self, plan: Plan) -> None:
        self._saved = (copy.deepcopy(plan.scenarios), plan.active)

    def revert(self, plan: Plan) -> Change:
        scenarios_before, active = self._saved
        plan.scenarios[:] = copy.deepcopy(scenarios_before)
        plan.active = active
        return Change("scenario")


class NewScenario(ScenarioCommand):
    """A new scenario from what is shown now (the active scenario's changes, or none), made
    active.

    Parameters
    ----------
    name : str, optional
        Default: "Scenario N", the first free number.
    """

    def __init__(self, name: str | None = None) -> None:
        self.name = name
        self.text = "New scenario"

    def apply(self, plan: Plan) -> Change:
        name = (scenarios.check_name(plan, self.name) if self.name is not None else
                scenarios.free_name(plan, f"Scenario {len(plan.scenarios) + 1}"))
        self._save(plan)
        source = (scenarios.find(plan, plan.active) if plan.active is not None
                  else Scenario(name))
        plan.scenarios.append(_copy(source, name))
        plan.active = name
        self.text = f"New scenario {name}"
        return Change("scenario")


def _copy(scenario: Scenario, name: str) -> Scenario:
    return Scenario(name, copy.deepcopy(scenario.settings), copy.deepcopy(scenario.rows),
                    list(scenario.omitted))


class DuplicateScenario(ScenarioCommand):
    """A copy of scenario ``name`` placed after it and made active (default name
    "NAME (copy)")."""

    def __init__(self, name: str, new_name: str | None = None) -> None:
        self.name, self.new_name = name, new_name
        self.text = f"Duplicate scenario {name}"

    def apply(self, plan: Plan) -> Change:
        source = scenarios.find(plan, self.name)
        name = (scenarios.check_name(plan, self.new_name) if self.new_name is not None else
                scenarios.free_name(plan, f"{self.name} (copy)"))
        self._save(plan)
        plan.scenarios.insert(plan.scenarios.index(source) + 1, _copy(source, name))
        plan.active = name
        return Change("scenario")


class SwitchScenario(ScenarioCommand):
    """Show and edit scenario ``name`` from now on (``None``: the base)."""

    def __init__(self, name: str | None) -> None:
        self.name = name
        self.label = scenarios.BASE if name is None else name
        self.text = f"Show {self.label}"

    def apply(self, plan: Plan) -> Change:
        if self.name is not None:
            scenarios.find(plan, self.name)
        if self.name == plan.active:
            raise PlanError(f"{self.label} is shown already", "scenario")
        self._active = plan.active  # a switch changes no scenario: nothing else to save
        plan.active = self.name
        return Change("scenario")

    def revert(self, plan: Plan) -> Change:
        plan.active = self._active
        return Change("scenario")


class RenameScenario(ScenarioCommand):
    """Rename scenario ``name`` to ``new_name``."""

    def __init__(self, name: str, new_name: str) -> None:
        self.name, self.new_name = name, new_name
        self.text = f"Rename scenario {name}"

    def apply(self, plan: Plan) -> Change:
        scenario = scenarios.find(plan, self.name)
        new_name = scenarios.check_name(plan, self.new_name, renaming=self.name)
        if new_name == self.name:
            raise PlanError(f"the scenario is called {new_name!r} already", "scenario")
        self._save(plan)
        scenario.name = new_name
        if plan.active == self.name:
            plan.active = new_name
        return Change("scenario")


class DeleteScenario(ScenarioCommand):
    """Delete scenario ``name``; the base is shown if it was the active one."""

    def __init__(self, name: str) -> None:
        self.name = name
        self.text = f"Delete scenario {name}"

    def apply(self, plan: Plan) -> Change:
        scenario = scenarios.find(plan, self.name)
        self._save(plan)
        plan.scenarios.remove(scenario)
        if plan.active == self.name:
            plan.active = None
        return Change("scenario")


class ForgetStale(ScenarioCommand):
    """Drop the stale changes of scenario ``name`` (those :func:`scenarios.problems` reports
    for rows, fields and settings that do not exist)."""

    def __init__(self, name: str) -> None:
        self.name = name
        self.text = f"Forget stale changes of {name}"

    def apply(self, plan: Plan) -> Change:
        scenario = scenarios.find(plan, self.name)
        base = {metric.id: metric for metric in plan.metrics}
        ids = set(base)
        rows = {row_id: {field: value for field, value in fields.items()
                         if field in METRIC_FIELDS and _fits(field, value, fields, base[row_id])}
                for row_id, fields in scenario.rows.items() if row_id in ids}
        rows = {row_id: fields for row_id, fields in rows.items() if fields}
        settings = {field: value for field, value in scenario.settings.items()
                    if field in SETTINGS_FIELDS}
        omitted = [row_id for row_id in scenario.omitted if row_id in ids]
        if (rows, settings, omitted) == (scenario.rows, scenario.settings, scenario.omitted):
            raise PlanError(f"scenario {self.name!r} has no stale changes", "scenario")
        self._save(plan)
        scenario.rows, scenario.settings, scenario.omitted = rows, settings, omitted
        return Change("scenario")


def _fits(field: str, value: Any, fields: dict, metric) -> bool:
    """Whether a changed method belongs to the row's kind in the scenario (else it is stale)."""
    if field != "method" or value is None:
        return True
    return value in METHODS[fields.get("kind", metric.kind)]


class RestoreRows(ScenarioCommand):
    """Bring back every row scenario ``name`` leaves out."""

    def __init__(self, name: str) -> None:
        self.name = name
        self.text = f"Bring back the rows {name} leaves out"

    def apply(self, plan: Plan) -> Change:
        scenario = scenarios.find(plan, self.name)
        if not scenario.omitted:
            raise PlanError(f"scenario {self.name!r} leaves out no rows", "scenario")
        self._save(plan)
        scenario.omitted = []
        return Change("scenario")


class ApplyToBase(ScenarioCommand):
    """Make scenario ``name`` the base; every other scenario keeps its plan (module notes)."""

    def __init__(self, name: str) -> None:
        self.name = name
        self.text = f"Apply {name} to the base"

    def apply(self, plan: Plan) -> Change:
        scenario = scenarios.find(plan, self.name)
        chosen = scenarios.effective(plan, self.name)
        self._save(plan)
        self._base = (plan.settings, list(plan.metrics))
        for other in plan.scenarios:
            if other is not scenario:
                _keep(other, scenario, plan)
        by_id = {metric.id: metric for metric in chosen.metrics}
        plan.settings = copy.deepcopy(chosen.settings)
        plan.metrics[:] = [copy.deepcopy(by_id[metric.id]) for metric in plan.metrics
                           if metric.id in by_id]
        plan.scenarios.remove(scenario)
        plan.active = None
        return Change("scenario")

    def revert(self, plan: Plan) -> Change:
        plan.settings, metrics = self._base
        plan.metrics[:] = metrics
        return super().revert(plan)


def _keep(other: Scenario, applied: Scenario, plan: Plan) -> None:
    """Pin in ``other`` the former base values of what ``applied`` changes and ``other`` not."""
    for field in applied.settings:
        if field in SETTINGS_FIELDS and field not in other.settings:
            other.settings[field] = getattr(plan.settings, field)
    base = {metric.id: metric for metric in plan.metrics}
    for row_id, fields in applied.rows.items():
        if row_id not in base or row_id in other.omitted:
            continue
        own = other.rows.setdefault(row_id, {})
        for field in fields:
            if field not in own and hasattr(base[row_id], field):
                own[field] = copy.deepcopy(getattr(base[row_id], field))
        if not own:
            del other.rows[row_id]


class InScenario(Command):
    """An ordinary edit stored as the active scenario's change (see the module notes).

    Parameters
    ----------
    inner : Command
        A :class:`SetFields` (or :class:`SetField`), :class:`SetSetting`, :class:`SetSettings` or
        :class:`RemoveMetrics`; other commands are refused when applied.
    name : str
        The scenario.
    """

    def __init__(self, inner: Command, name: str) -> None:
        self.inner, self.name = inner, name
        self.text = f"{inner.text} in {name}" if inner.text else f"Edit {name}"
        self._old: dict[tuple[str | None, str], Any] = {}
        self._omitted: list[str] | None = None

    @property
    def cell(self) -> tuple | None:
        inner = self.inner.cell
        return None if inner is None else (self.name, *inner)

    def absorb(self, older: Command) -> None:
        self._old = {**self._old, **older._old}

    def apply(self, plan: Plan) -> Change:
        scenario = scenarios.find(plan, self.name)
        view = scenarios.effective(plan, self.name)
        inner = self.inner
        if isinstance(inner, SetFields):
            if inner.append:
                raise PlanError(f"rows are added to the base, not to a scenario: show "
                                f"{scenarios.BASE} to add rows", "rows")
            if isinstance(inner, SetField):
                name = view.metrics[_check_row(view, inner.row)].name
                self.text = f"Set {inner.field} of {name} in {self.name}"
            new = inner._planned(view, view.metrics)
            base = {metric.id: metric for metric in plan.metrics}
            self._old = {}
            for (row, field), value in new.items():
                row_id = view.metrics[row].id
                self._set(scenario.rows.setdefault(row_id, {}), (row_id, field), value,
                          getattr(base[row_id], field))
            _prune(scenario)
            fields = tuple(dict.fromkeys(field for _, field in new))
            return Change("cells", tuple(sorted({row for row, _ in new})), fields)
        if isinstance(inner, SetSetting):
            if inner.field not in SETTINGS_FIELDS:
                raise PlanError(f"unknown setting {inner.field!r}", inner.field)
            value = validate_field(inner.field, inner.value, settings=True)
            self._old = {}
            self._set(scenario.settings, (None, inner.field), value,
                      getattr(plan.settings, inner.field))
            return Change("settings", fields=(inner.field,))
        if isinstance(inner, SetSettings):
            values = checked_settings(inner.values)
            self._old = {}
            for field, value in values.items():
                self._set(scenario.settings, (None, field), value, getattr(plan.settings, field))
            return Change("settings", fields=tuple(values))
        if isinstance(inner, RemoveMetrics):
            rows = sorted(_check_row(view, row) for row in inner.rows)
            if not rows or len(set(rows)) != len(rows):
                raise PlanError("rows must name each row to leave out once", "rows")
            self._omitted = list(scenario.omitted)
            scenario.omitted.extend(view.metrics[row].id for row in rows)
            self.text = (f"Leave out {view.metrics[rows[0]].name} in {self.name}"
                         if len(rows) == 1 else f"Leave out {len(rows)} rows in {self.name}")
            return Change("rows_removed", tuple(rows))
        if isinstance(inner, InsertMetrics):
            raise PlanError(f"rows are added to the base, not to a scenario: show "
                            f"{scenarios.BASE} to add rows", "rows")
        raise PlanError(f"{inner.text or 'this edit'}: the order of the rows belongs to the "
                        f"base; show {scenarios.BASE} to move or sort rows", "scenario")

    def _set(self, store: dict, key: tuple, value: Any, base_value: Any) -> None:
        """Store ``value`` in ``store`` under ``key[1]`` (dropped when equal to the base's)."""
        field = key[1]
        self._old.setdefault(key, store.get(field, _MISSING))
        if value == base_value and type(value) is type(base_value):
            store.pop(field, None)
        else:
            store[field] = value

    def revert(self, plan: Plan) -> Change:
        scenario = scenarios.find(plan, self.name)
        if self._omitted is not None:
            view_before = scenarios.effective(plan, self.name)
            scenario.omitted[:] = self._omitted
            view = scenarios.effective(plan, self.name)
            kept = {metric.id for metric in view_before.metrics}
            rows = tuple(index for index, metric in enumerate(view.metrics)
                         if metric.id not in kept)
            return Change("rows_inserted", rows)
        for (row_id, field), value in self._old.items():
            store = scenario.settings if row_id is None else scenario.rows.setdefault(row_id, {})
            if value is _MISSING:
                store.pop(field, None)
            else:
                store[field] = value
        _prune(scenario)
        if isinstance(self.inner, SetSetting):
            return Change("settings", fields=(self.inner.field,))
        if isinstance(self.inner, SetSettings):
            return Change("settings", fields=tuple(self.inner.values))
        view = scenarios.effective(plan, self.name)
        index = {metric.id: row for row, metric in enumerate(view.metrics)}
        fields = tuple(dict.fromkeys(field for _, field in self._old))
        return Change("cells", tuple(sorted({index[row_id] for row_id, _ in self._old})),
                      fields)


def _prune(scenario: Scenario) -> None:
    """Drop rows whose changes are all gone."""
    for row_id in [row_id for row_id, fields in scenario.rows.items() if not fields]:
        del scenario.rows[row_id]


def routed(plan: Plan, command: Command) -> Command:
    """``command`` as the stack runs it: wrapped in :class:`InScenario` while a scenario is
    active (scenario commands run as they are; both parts of a :class:`WithSettings`
    wrapped)."""
    if plan.active is None or isinstance(command, ScenarioCommand):
        return command
    if isinstance(command, WithSettings):
        return WithSettings(InScenario(command.rows, plan.active),
                            InScenario(command.settings, plan.active),
                            f"{command.text} in {plan.active}")
    return InScenario(command, plan.active)
