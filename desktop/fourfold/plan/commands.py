"""A Qt-free undo stack for plan edits.

Every change to a plan — a cell, a setting, rows inserted, removed, moved or sorted, a paste —
is a command done through a :class:`CommandStack`. The stack validates the command before
touching the plan (an invalid value raises :class:`~fourfold.plan.fields.PlanError` and changes
nothing), applies it, and tells every subscriber exactly what changed with a :class:`Change`,
so that a Qt model can emit one ranged signal. The window's Edit menu and undo view mirror the
stack (``undo_text``, ``redo_text``, ``clean``).

Examples
--------
>>> from fourfold.plan.model import Plan
>>> stack = CommandStack(Plan.empty())
>>> stack.do(SetField(0, "baseline", 0.031))
>>> stack.plan.metrics[0].baseline, stack.undo_text
(0.031, 'Set baseline of Primary metric')
>>> stack.undo()
>>> stack.plan.metrics[0].baseline
0.1
"""

from __future__ import annotations

import abc
import copy
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import Any

from fourfold.plan.fields import (
    METHODS,
    METRIC_FIELDS,
    SETTINGS_FIELDS,
    PlanError,
    validate_field,
    validate_metric,
)
from fourfold.plan.kinds import guardrail_direction
from fourfold.plan.model import Metric, Plan, new_row_id
from fourfold.plan.rules import check_edits, check_setting

CHANGE_KINDS = ("cells", "rows_inserted", "rows_removed", "rows_moved", "rows_reordered",
                "settings", "scenario", "reset")


@dataclass(frozen=True)
class Change:
    """What one do, undo or redo changed.

    Attributes
    ----------
    kind : str
        ``"cells"`` (metric fields of existing rows), ``"rows_inserted"``, ``"rows_removed"``,
        ``"rows_moved"``, ``"rows_reordered"``, ``"settings"``, ``"scenario"`` (the scenarios
        or the active one changed: the plan shown may differ as a whole) or ``"reset"`` (a new
        document). Row indices are those of the plan shown (:attr:`CommandStack.view`).
    rows : tuple of int
        ``"cells"``: the rows touched, ascending. ``"rows_inserted"``: the new rows' indices
        after the insertion, ascending. ``"rows_removed"``: the removed rows' indices before
        the removal, ascending. ``"rows_moved"``: ``(source, destination)``, the moved row's
        index before and after. ``"rows_reordered"``: the permutation, one entry per row: row
        ``i`` after the change was row ``rows[i]`` before. Empty for ``"settings"`` and
        ``"reset"``. Apply
        :meth:`blocks` of an insertion in ascending order and of a removal in descending
        order to replay the change block by block.
    fields : tuple of str
        ``"cells"``: the metric fields touched; ``"settings"``: the settings fields touched.
        A :class:`SetFields` that also appends rows (a paste running past the last row)
        reports ``"rows_inserted"`` (undone: ``"rows_removed"``) for the new rows, with the
        fields it set in ``fields``; cells of the rows above may have changed too.
    settings : tuple of str
        Settings fields changed besides the rows (a history import with its reach curve).
    """

    kind: str
    rows: tuple[int, ...] = ()
    fields: tuple[str, ...] = ()
    settings: tuple[str, ...] = ()

    def blocks(self) -> tuple[tuple[int, int], ...]:
        """``rows`` as contiguous ``(first, last)`` ranges, ascending.

        Examples
        --------
        >>> Change("rows_removed", (1, 2, 5)).blocks()
        ((1, 2), (5, 5))
        """
        ranges: list[tuple[int, int]] = []
        for row in self.rows:
            if ranges and row == ranges[-1][1] + 1:
                ranges[-1] = (ranges[-1][0], row)
            else:
                ranges.append((row, row))
        return tuple(ranges)


def _check_row(plan: Plan, row: int, *, end: bool = False, count: int | None = None) -> int:
    limit = (len(plan.metrics) if count is None else count) + (1 if end else 0)
    if isinstance(row, bool) or not isinstance(row, int) or not 0 <= row < limit:
        raise PlanError(f"row must be from 0 to {limit - 1}; got {row!r}", "row")
    return row


def _identified(plan: Plan, metrics: list[Metric], ids: list[str] | None) -> list[str]:
    """Give new rows ids no row or scenario of ``plan`` uses; ``ids`` from a first apply stay.

    A copied row (duplicate, paste) arrives with its original's id; it gets a fresh one. The
    ids are set on ``metrics`` (fresh copies) and returned, so that a redo reuses them.
    """
    if ids is None and not metrics:
        return []
    if ids is None:
        taken = {metric.id for metric in plan.metrics}
        for scenario in plan.scenarios:
            taken.update(scenario.rows, scenario.omitted)
        ids = []
        for metric in metrics:
            identity = metric.id
            while not identity or identity in taken:
                identity = new_row_id()
            taken.add(identity)
            ids.append(identity)
    for metric, identity in zip(metrics, ids, strict=True):
        metric.id = identity
    return ids


def _metric_field(field: str) -> str:
    if field not in METRIC_FIELDS:
        raise PlanError(f"unknown metric field {field!r}", field)
    return field


class Command(abc.ABC):
    """Base of the plan commands: ``text`` names it in the Edit menu.

    ``cell`` names the one cell a command sets, for merging repeated edits of it (``None``:
    never merged); :meth:`absorb` takes over the undo state of the command it merges with.
    """

    text = ""
    cell: tuple | None = None

    def absorb(self, older: Command) -> None:
        """Undo to the state before ``older`` (the same cell's edit just before this one)."""
        raise NotImplementedError

    @abc.abstractmethod
    def apply(self, plan: Plan) -> Change:
        """Validate against ``plan``, then change it; raise PlanError before any change."""

    @abc.abstractmethod
    def revert(self, plan: Plan) -> Change:
        """Undo :meth:`apply` exactly."""


class SetFields(Command):
    """Set many metric cells in one undo step (paste, history import, a dragged effect).

    Parameters
    ----------
    edits : iterable of (row, field, value)
        Applied in order; a later edit of the same cell wins.
    text : str, optional
        Edit-menu text (default: "Edit N cells").
    append : sequence of Metric, optional
        Rows added below the last row in the same step (a paste running past the table's end);
        ``edits`` may fill them. Nothing is added when any row or edit is refused.

    Notes
    -----
    A refused value raises PlanError naming its row ("row 8: alpha must …"): a block of
    cells is not where the user is looking for one cell.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, new_row_id
    >>> stack = CommandStack(Plan.empty())
    >>> stack.do(SetFields([(0, "baseline", 0.2), (1, "name", "Refunds")], append=[Metric()]))
    >>> [(m.name, m.baseline) for m in stack.plan.metrics]
    [('Primary metric', 0.2), ('Refunds', 0.1)]
    >>> stack.undo(); len(stack.plan.metrics)
    1
    """

    def __init__(self, edits: Iterable[tuple[int, str, Any]], text: str | None = None, *,
                 append: Sequence[Metric] = ()) -> None:
        self.edits = tuple(edits)
        self.append = tuple(append)
        self.text = text or f"Edit {len(self.edits)} cells"
        self._old: dict[tuple[int, str], Any] = {}
        self._count = 0
        self._ids: list[str] | None = None

    name_rows = True

    def _planned(self, plan: Plan, metrics: list[Metric]) -> dict[tuple[int, str], Any]:
        """The validated new values by (row, field); a kind change clears a foreign method."""
        new: dict[tuple[int, str], Any] = {}
        for row, field, value in self.edits:
            metric = metrics[_check_row(plan, row, count=len(metrics))]
            field = _metric_field(field)
            kind = new.get((row, "kind"), metric.kind)
            try:
                if field == "kind":
                    kind = validate_field("kind", value)
                    method = new.get((row, "method"), metric.method)
                    new[(row, "kind")] = kind
                    if method is not None and method not in METHODS[kind]:
                        new[(row, "method")] = None
                else:
                    new[(row, field)] = validate_field(field, value, kind=kind)
            except PlanError as error:
                if not self.name_rows:
                    raise
                raise PlanError(f"row {row + 1}: {error}", error.field) from None
        _guardrail_defaults(new, metrics, {(row, field) for row, field, _ in self.edits})
        return new

    def apply(self, plan: Plan) -> Change:
        count = len(plan.metrics)
        added = [validate_metric(metric) for metric in self.append]  # fresh copies each time
        new = self._planned(plan, plan.metrics + added if added else plan.metrics)
        check_edits(plan, added, new, {(row, field) for row, field, _ in self.edits})
        self._ids = _identified(plan, added, self._ids)
        self._count = count
        self._old = {key: getattr(plan.metrics[key[0]], key[1]) for key in new
                     if key[0] < count}
        plan.metrics.extend(added)
        for (row, name), value in new.items():
            setattr(plan.metrics[row], name, value)
        return self._change(new, "rows_inserted")

    def revert(self, plan: Plan) -> Change:
        for (row, name), value in self._old.items():
            setattr(plan.metrics[row], name, value)
        del plan.metrics[self._count:self._count + len(self.append)]
        return self._change(self._old, "rows_removed")

    def _change(self, values: dict[tuple[int, str], Any], rows_kind: str) -> Change:
        fields = tuple(dict.fromkeys(name for _, name in values))
        if self.append:
            return Change(rows_kind, tuple(range(self._count, self._count + len(self.append))),
                          fields)
        return Change("cells", tuple(sorted({row for row, _ in values})), fields)


def _guardrail_defaults(new: dict[tuple[int, str], Any], metrics: list[Metric],
                        explicit: set[tuple[int, str]]) -> None:
    """A row that becomes a guardrail, or a guardrail whose ``better`` changes, gets the
    one-sided test of its direction (:func:`fourfold.plan.kinds.guardrail_direction`), unless
    the same command sets its alternative or margin itself."""
    rows = {row for row, field in new if field in ("role", "better")}
    for row in sorted(rows):
        metric = metrics[row]
        if new.get((row, "role"), metric.role) != "guardrail":
            continue
        if (row, "alternative") in explicit or (row, "margin") in explicit:
            continue
        if (row, "role") in new and metric.role == "guardrail" and (row, "better") not in new:
            continue
        alternative, margin = guardrail_direction(new.get((row, "better"), metric.better),
                                                  new.get((row, "margin"), metric.margin))
        if alternative != metric.alternative:
            new[(row, "alternative")] = alternative
        if margin != metric.margin:
            new[(row, "margin")] = margin


class SetField(SetFields):
    """Set one metric cell: ``SetField(row, field, value)``.

    Changing ``kind`` also clears a ``method`` that does not belong to the new kind, and
    making a row a guardrail or changing a guardrail's ``better`` sets its one-sided
    alternative and the side of its margin (in the same undo step).

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan
    >>> stack = CommandStack(Plan(metrics=[Metric(name="Load time", margin=0.05)]))
    >>> stack.do(SetField(0, "better", "lower")); stack.do(SetField(0, "role", "guardrail"))
    >>> row = stack.plan.metrics[0]
    >>> row.alternative, row.margin
    ('less', 0.05)
    """

    name_rows = False  # one cell: the user is looking at it

    def __init__(self, row: int, field: str, value: Any) -> None:
        super().__init__([(row, field, value)], text="")
        self.row, self.field, self.value = row, field, value
        self.cell = (row, field)

    def absorb(self, older: Command) -> None:
        self._old = {**self._old, **older._old}

    def apply(self, plan: Plan) -> Change:
        name = plan.metrics[_check_row(plan, self.row)].name
        change = super().apply(plan)
        self.text = f"Set {self.field} of {name}"
        return change


class SetSetting(Command):
    """Set one plan setting: ``SetSetting(field, value)``."""

    def __init__(self, field: str, value: Any) -> None:
        self.field, self.value = field, value
        self.text = f"Set {field}"
        self._old: Any = None

    def apply(self, plan: Plan) -> Change:
        if self.field not in SETTINGS_FIELDS:
            raise PlanError(f"unknown setting {self.field!r}", self.field)
        value = validate_field(self.field, self.value, settings=True)
        check_setting(plan, self.field, value)
        self._old = getattr(plan.settings, self.field)
        setattr(plan.settings, self.field, value)
        return Change("settings", fields=(self.field,))

    def revert(self, plan: Plan) -> Change:
        setattr(plan.settings, self.field, self._old)
        return Change("settings", fields=(self.field,))


class InsertMetrics(Command):
    """Insert metric rows before ``row`` (``row == len(metrics)`` appends)."""

    def __init__(self, row: int, metrics: Sequence[Metric]) -> None:
        self.row = row
        self.metrics = list(metrics)
        count = len(self.metrics)
        self.text = "Insert metric" if count == 1 else f"Insert {count} metrics"
        self._ids: list[str] | None = None

    def apply(self, plan: Plan) -> Change:
        row = _check_row(plan, self.row, end=True)
        if not self.metrics:
            raise PlanError("metrics must hold at least one metric row to insert", "metrics")
        checked = [validate_metric(metric) for metric in self.metrics]
        self._ids = _identified(plan, checked, self._ids)
        plan.metrics[row:row] = checked
        return Change("rows_inserted", tuple(range(row, row + len(checked))))

    def revert(self, plan: Plan) -> Change:
        rows = tuple(range(self.row, self.row + len(self.metrics)))
        del plan.metrics[self.row:self.row + len(self.metrics)]
        return Change("rows_removed", rows)


class RemoveMetrics(Command):
    """Remove the metric rows at the given indices (any order, no repeats)."""

    def __init__(self, rows: Iterable[int]) -> None:
        self.rows = tuple(rows)
        count = len(self.rows)
        self.text = "Remove metric" if count == 1 else f"Remove {count} metrics"
        self._removed: list[tuple[int, Metric]] = []

    def apply(self, plan: Plan) -> Change:
        rows = sorted(_check_row(plan, row) for row in self.rows)
        if not rows:
            raise PlanError("rows must name at least one metric row to remove", "rows")
        if len(set(rows)) != len(rows):
            raise PlanError("rows must not repeat a row", "rows")
        self._removed = [(row, plan.metrics[row]) for row in rows]
        for row in reversed(rows):
            del plan.metrics[row]
        return Change("rows_removed", tuple(rows))

    def revert(self, plan: Plan) -> Change:
        for row, metric in self._removed:
            plan.metrics.insert(row, metric)
        return Change("rows_inserted", tuple(row for row, _ in self._removed))


class MoveMetric(Command):
    """Move the row at ``src`` so that it ends up at index ``dst``."""

    def __init__(self, src: int, dst: int) -> None:
        self.src, self.dst = src, dst
        self.text = "Move metric"

    def apply(self, plan: Plan) -> Change:
        src, dst = _check_row(plan, self.src), _check_row(plan, self.dst)
        if src == dst:
            raise PlanError("the row is already there: src and dst are equal", "dst")
        plan.metrics.insert(dst, plan.metrics.pop(src))
        return Change("rows_moved", (src, dst))

    def revert(self, plan: Plan) -> Change:
        plan.metrics.insert(self.src, plan.metrics.pop(self.dst))
        return Change("rows_moved", (self.dst, self.src))


class ReorderMetrics(Command):
    """Put the rows in a new order given as a permutation (a sort of the table).

    Parameters
    ----------
    order : sequence of int
        Row ``i`` after the command is row ``order[i]`` before it; every row exactly once.
    text : str, optional
        Edit-menu text (default: "Reorder metrics").

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, new_row_id
    >>> stack = CommandStack(Plan(metrics=[Metric(name="A"), Metric(name="B")]))
    >>> stack.do(ReorderMetrics([1, 0], text="Sort rows by Metric, descending"))
    >>> [metric.name for metric in stack.plan.metrics], stack.undo_text
    (['B', 'A'], 'Sort rows by Metric, descending')
    """

    def __init__(self, order: Iterable[int], text: str | None = None) -> None:
        self.order = tuple(order)
        self.text = text or "Reorder metrics"

    def apply(self, plan: Plan) -> Change:
        count = len(plan.metrics)
        if any(isinstance(row, bool) or not isinstance(row, int) for row in self.order) or \
                sorted(self.order) != list(range(count)):
            raise PlanError(f"order must name each of the rows 0 to {count - 1} exactly once; "
                            f"got {list(self.order)!r}", "order")
        if list(self.order) == list(range(count)):
            raise PlanError("the rows are already in that order", "order")
        plan.metrics[:] = [plan.metrics[row] for row in self.order]
        return Change("rows_reordered", self.order)

    def revert(self, plan: Plan) -> Change:
        inverse = [0] * len(self.order)
        for position, row in enumerate(self.order):
            inverse[row] = position
        plan.metrics[:] = [plan.metrics[position] for position in inverse]
        return Change("rows_reordered", tuple(inverse))


Subscriber = Callable[[Change], None]


class CommandStack:
    """The undo history of one plan.

    Parameters
    ----------
    plan : Plan
        The document the commands change (in place; ``stack.plan`` is that object).

    Notes
    -----
    ``subscribe(callback)`` registers a function called with a :class:`Change` after every
    do, undo, redo and :meth:`reset`, once ``undo_text``, ``redo_text`` and ``clean`` describe
    the new state; with ``before=True`` it is called just before the plan
    changes instead (what a Qt model needs for ``beginRemoveRows`` and friends). Both return a
    function that unsubscribes.
    """

    def __init__(self, plan: Plan) -> None:
        self.plan = plan
        self._view: Plan | None = None
        self._done: list[Command] = []
        self._undone: list[Command] = []
        self._clean_depth: int | None = 0
        self._after: list[Subscriber] = []
        self._before: list[Subscriber] = []

    @property
    def view(self) -> Plan:
        """The plan shown and edited: the base (``plan`` itself) or the active scenario's
        effective plan (:func:`fourfold.plan.scenarios.effective`, rebuilt after a change)."""
        if self.plan.active is None:
            return self.plan
        if self._view is None:
            from fourfold.plan.scenarios import effective

            self._view = effective(self.plan, self.plan.active)
        return self._view

    def subscribe(self, callback: Subscriber, *, before: bool = False) -> Callable[[], None]:
        """Call ``callback(change)`` on every change; returns the unsubscribe function."""
        listeners = self._before if before else self._after
        listeners.append(callback)
        return lambda: listeners.remove(callback) if callback in listeners else None

    def _notify(self, listeners: list[Subscriber], change: Change) -> None:
        for callback in list(listeners):
            callback(change)

    def _run(self, step: Callable[[Plan], Change], preview: Change | None,
             record: Callable[[], None]) -> Change:
        """Apply ``step``, update the history with ``record``, then tell the subscribers.

        The ``after`` subscribers run once the undo/redo texts and the clean flag describe the
        new state, so they can read them.
        """
        if preview is not None and self._before:
            self._notify(self._before, preview)
        change = step(self.plan)
        self._view = None
        record()
        self._notify(self._after, change)
        return change

    def _preview(self, command: Command, undo: bool) -> Change | None:
        """The change a step will make, for the ``before`` subscribers (computed on a copy)."""
        if not self._before:
            return None
        trial = copy.deepcopy(self.plan)
        twin = copy.deepcopy(command)
        if undo:
            return twin.revert(trial)
        return twin.apply(trial)

    def do(self, command: Command, *, merge: bool = False) -> None:
        """Apply ``command`` and push it; PlanError (nothing changed) if it is invalid.

        While a scenario is active, an edit is stored in that scenario
        (:class:`fourfold.plan.scenario_commands.InScenario`). With ``merge=True`` and an
        edit of the same cell on top of the stack (a value being dragged), the two become one
        undo step.
        """
        from fourfold.plan.scenario_commands import routed

        command = routed(self.plan, command)

        def record() -> None:
            if self._clean_depth is not None and self._clean_depth > len(self._done):
                self._clean_depth = None
            self._undone.clear()
            top = self._done[-1] if self._done else None
            if (merge and command.cell is not None and top is not None
                    and top.cell == command.cell and type(top) is type(command)
                    and self._clean_depth != len(self._done)):
                command.absorb(top)
                self._done[-1] = command
            else:
                self._done.append(command)

        self._run(command.apply, self._preview(command, undo=False), record)

    def undo(self) -> None:
        """Revert the last command (nothing happens when there is none)."""
        if not self._done:
            return
        command = self._done[-1]
        self._run(command.revert, self._preview(command, undo=True),
                  lambda: self._undone.append(self._done.pop()))

    def redo(self) -> None:
        """Re-apply the last undone command (nothing happens when there is none)."""
        if not self._undone:
            return
        command = self._undone[-1]
        self._run(command.apply, self._preview(command, undo=False),
                  lambda: self._done.append(self._undone.pop()))

    def reset(self, plan: Plan) -> None:
        """Replace the document (File → New/Open): history cleared, clean, ``"reset"`` sent."""
        change = Change("reset")
        if self._before:
            self._notify(self._before, change)
        self.plan = plan
        self._view = None
        self._done.clear()
        self._undone.clear()
        self._clean_depth = 0
        self._notify(self._after, change)

    def mark_clean(self) -> None:
        """Record the current state as saved."""
        self._clean_depth = len(self._done)

    @property
    def clean(self) -> bool:
        """Whether the plan is in the state last marked clean (saved or loaded)."""
        return self._clean_depth == len(self._done)

    @property
    def can_undo(self) -> bool:
        return bool(self._done)

    @property
    def can_redo(self) -> bool:
        return bool(self._undone)

    @property
    def undo_text(self) -> str:
        """Text of the command :meth:`undo` would revert ("" when none)."""
        return self._done[-1].text if self._done else ""

    @property
    def redo_text(self) -> str:
        """Text of the command :meth:`redo` would re-apply ("" when none)."""
        return self._undone[-1].text if self._undone else ""
