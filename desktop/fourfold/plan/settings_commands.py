"""Several plan settings in one undo step: the traffic model's table, ramp-up and burn-in.

:class:`SetSettings` sets every field it holds or none: each value is validated
(:func:`fourfold.plan.fields.validate_field`) and checked against the rows' rules
(:func:`fourfold.plan.rules.check_setting`) before the plan is touched. While a scenario is
active, :class:`fourfold.plan.scenario_commands.InScenario` stores the values as its changes.
:class:`WithSettings` makes an edit of rows and a :class:`SetSettings` one undo step (a
history import that brings its reach curve as the plan's traffic).

Examples
--------
>>> from fourfold.plan.commands import CommandStack
>>> from fourfold.plan.model import Plan
>>> stack = CommandStack(Plan.empty())
>>> stack.do(SetSettings({"traffic": "reach", "reach": [[1, 500], [2, 800]]}, "Set traffic"))
>>> stack.plan.settings.reach, stack.undo_text
(((1, 500.0), (2, 800.0)), 'Set traffic')
>>> stack.undo()
>>> stack.plan.settings.traffic
'constant'
"""

from __future__ import annotations

import dataclasses
from typing import Any

from fourfold.plan.commands import Change, Command
from fourfold.plan.fields import SETTINGS_FIELDS, PlanError, validate_field
from fourfold.plan.model import Plan
from fourfold.plan.rules import check_setting


def checked_settings(values: dict[str, Any]) -> dict[str, Any]:
    """``values`` validated and normalised (PlanError for an unknown field or a bad value)."""
    out = {}
    for field, value in values.items():
        if field not in SETTINGS_FIELDS:
            raise PlanError(f"unknown setting {field!r}", field)
        out[field] = validate_field(field, value, settings=True)
    return out


class SetSettings(Command):
    """Set several plan settings at once: ``SetSettings({field: value, …}, text)``."""

    def __init__(self, values: dict[str, Any], text: str | None = None) -> None:
        self.values = dict(values)
        self.text = text or "Set " + ", ".join(self.values)
        self._old: dict[str, Any] = {}

    def apply(self, plan: Plan) -> Change:
        values = checked_settings(self.values)
        for field, value in values.items():
            check_setting(plan, field, value)
        self._old = {field: getattr(plan.settings, field) for field in values}
        for field, value in values.items():
            setattr(plan.settings, field, value)
        return Change("settings", fields=tuple(values))

    def revert(self, plan: Plan) -> Change:
        for field, value in self._old.items():
            setattr(plan.settings, field, value)
        return Change("settings", fields=tuple(self._old))


class WithSettings(Command):
    """An edit of rows (``rows``) and settings (``settings``, a :class:`SetSettings`) as one
    undo step: both are applied or neither.

    The :class:`Change` is the rows' with the settings fields in ``settings``. While a scenario
    is active each part is stored as its change (:func:`fourfold.plan.scenario_commands.routed`).

    Examples
    --------
    >>> from fourfold.plan.commands import CommandStack, SetField
    >>> from fourfold.plan.model import Plan
    >>> stack = CommandStack(Plan.empty())
    >>> stack.do(WithSettings(SetField(0, "baseline", 0.2), SetSettings({"burn_in": 2}),
    ...                       "Import history"))
    >>> stack.plan.metrics[0].baseline, stack.plan.settings.burn_in
    (0.2, 2)
    >>> stack.undo()
    >>> stack.plan.metrics[0].baseline, stack.plan.settings.burn_in
    (0.1, 0)
    """

    def __init__(self, rows: Command, settings: Command, text: str) -> None:
        self.rows, self.settings, self.text = rows, settings, text

    def apply(self, plan: Plan) -> Change:
        change = self.rows.apply(plan)
        try:
            settings = self.settings.apply(plan)
        except PlanError:
            self.rows.revert(plan)
            raise
        return dataclasses.replace(change, settings=settings.fields)

    def revert(self, plan: Plan) -> Change:
        settings = self.settings.revert(plan)
        return dataclasses.replace(self.rows.revert(plan), settings=settings.fields)
