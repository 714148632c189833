"""The open plan as the window sees it: the command stack, the file path and the last result.

:class:`PlanDocument` is the one place the window changes a plan (through commands) and the one
place it asks :func:`fourfold.plan.compute` for numbers. Bursts of changes (a paste of 500
cells, a spin box held down) are coalesced by a zero-delay single-shot timer, so the plan is
recomputed and redrawn once per burst.

A plan with scenarios shows one of them (or the base): :attr:`PlanDocument.plan` is the plan
shown and edited, :attr:`PlanDocument.whole` the document with every scenario (what is saved).
A recompute evaluates the scenario on show; the base and the other scenarios, each with a row
cache of its own, are evaluated when first asked for after it (:attr:`PlanDocument.outcomes`,
:meth:`PlanDocument.outcome`: the comparison view, the overlays, the summary's difference from
the base), so that the table is painted before they are.

An edit in place (the stack's ``"cells"`` changes) names its rows; the document hands them to
the shown scenario's row cache, which then looks at those rows only, and after the recompute
:meth:`PlanDocument.changed_rows` names the rows whose inputs, result or power at the duration
changed, for the table to repaint (any other change: every row).
"""

from __future__ import annotations

import pathlib
import re

from PySide6.QtCore import QObject, QTimer, Signal

from fourfold.errors import FourfoldError
from fourfold.plan import Plan
from fourfold.plan.commands import CommandStack
from fourfold.plan.comparison import Caches, Outcome, outcome
from fourfold.plan.prepare import preparation

UNTITLED = "Untitled plan"
_NOT_IN_FILE_NAMES = re.compile(r'[\\/:*?"<>|\x00-\x1f]+')
MAX_NAME_CHARS = 80


def file_name_for(title: str) -> str:
    """A plan file's name made from its title: characters that file systems refuse become
    spaces, runs of spaces one, and the name stays short enough for any file system.

    Examples
    --------
    >>> file_name_for("Quillmoss Garden Supply — checkout redesign")
    'Quillmoss Garden Supply — checkout redesign.json'
    >>> file_name_for("Q3: price test / EU"), file_name_for("  ")
    ('Q3 price test EU.json', 'Untitled plan.json')
    """
    name = " ".join(_NOT_IN_FILE_NAMES.sub(" ", title).split())[:MAX_NAME_CHARS].strip(" .")
    return f"{name or UNTITLED}.json"


class PlanDocument(QObject):
    """An open plan: its commands, where it lives on disk and its computed result.

    Signals
    -------
    changed(object)
        Emitted with the stack's ``Change`` right after every do/undo/redo (before recompute).
    computed()
        Emitted after a recompute; ``result`` holds the new :class:`fourfold.plan.PlanResult`.
    replaced()
        Emitted after a different plan was loaded (New, Open, recovery) and computed.
    message(str)
        A problem to show in the status line (a refused edit).
    history()
        Emitted after every do, undo, redo, save or load, with the stack's undo/redo texts and
        clean flag up to date.
    """

    changed = Signal(object)
    computed = Signal()
    replaced = Signal()
    message = Signal(str)
    history = Signal()

    def __init__(self, plan: Plan, path: str | pathlib.Path | None = None,
                 parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.recompute_now)
        self.compute_error = ""
        self._unsaved = False
        self._caches = Caches()
        self._outcomes: dict[str | None, Outcome] = {}
        self._earlier: dict[str | None, Outcome] = {}  # the outcomes before the recompute
        self._edited: set[int] | None = None  # rows edited in place since the last recompute
        self._moved: list[int] | None = None
        self._shown_cache = None
        self.stack = CommandStack(plan)
        self.stack.subscribe(self._on_change)
        self.path = pathlib.Path(path) if path is not None else None
        self.result = self._compute()

    @property
    def plan(self) -> Plan:
        """The plan shown and edited: the base, or the active scenario's effective plan."""
        return self.stack.view

    @property
    def whole(self) -> Plan:
        """The document: base, scenarios and the active one (what is saved)."""
        return self.stack.plan

    @property
    def scenario(self) -> str | None:
        """The active scenario's name (``None``: the base)."""
        return self.stack.plan.active

    @property
    def dirty(self) -> bool:
        """Whether there are changes since the last save (or load)."""
        return self._unsaved or not self.stack.clean

    @property
    def file_name(self) -> str:
        """The file's name; before the first save, a name made from the plan's title."""
        return self.path.name if self.path is not None else file_name_for(self.plan.settings.title)

    @property
    def display_name(self) -> str:
        """What the window's title calls the plan: its file's name, or its title until saved."""
        if self.path is not None:
            return self.path.name
        return " ".join(self.plan.settings.title.split()) or UNTITLED

    def stale_changes(self) -> tuple[str, ...]:
        """The scenarios' changes of rows or fields that no longer exist, in words."""
        from fourfold.plan.scenarios import problems

        return problems(self.whole)

    def replace(self, plan: Plan, path: str | pathlib.Path | None, *,
                unsaved: bool = False) -> None:
        """Edit a different plan from now on (a fresh undo history).

        ``unsaved=True`` marks it as not saved yet (a plan restored after a crash).
        """
        self.path = pathlib.Path(path) if path is not None else None
        self._unsaved = unsaved
        self.stack.reset(plan)
        self.recompute_now()
        self.replaced.emit()

    def mark_saved(self, path: str | pathlib.Path) -> None:
        """Record that the plan now lives, unchanged, in ``path``."""
        self.path = pathlib.Path(path)
        self._unsaved = False
        self.stack.mark_clean()
        self.history.emit()

    def apply(self, command, *, merge: bool = False, explain=None) -> bool:
        """Run a command; a refused value is reported on ``message`` and changes nothing.

        ``merge=True`` folds a repeated edit of the same cell (a dragged effect) into one
        undo step. ``explain(text)``, when given, turns the refusal into the message shown
        (naming the cell, say).
        """
        try:
            self.stack.do(command, merge=merge)
        except FourfoldError as error:
            self.message.emit(explain(str(error)) if explain is not None else str(error))
            return False
        return True

    def undo(self) -> None:
        """Undo the last command, if any."""
        if self.stack.can_undo:
            self.stack.undo()

    def redo(self) -> None:
        """Redo the last undone command, if any."""
        if self.stack.can_redo:
            self.stack.redo()

    def _on_change(self, change) -> None:
        if change.kind == "cells" and not change.settings and self._edited is not None:
            self._edited.update(change.rows)
        else:
            self._edited = None
        self.changed.emit(change)
        self.history.emit()
        if not self._timer.isActive():
            self._timer.start()

    def _compute(self):
        """The result of the scenario on show (the others wait until asked for)."""
        whole = self.stack.plan
        self._earlier = {**self._earlier, **self._outcomes}
        self._outcomes = {}
        edited, self._edited = self._edited, set()
        names = [None, *(scenario.name for scenario in whole.scenarios)]
        self._caches.keep(names)
        self._earlier = {name: self._earlier[name] for name in names if name in self._earlier}
        self._earlier.pop(whole.active, None)  # the scenario on show is evaluated afresh
        cache = self._caches.get(whole.active)
        try:
            result = self._evaluated(whole.active, edited).result
        except FourfoldError as error:
            self.compute_error = str(error)
            self._edited, self._moved, self._shown_cache = None, None, None
            return None
        self.compute_error = ""
        self._moved = (sorted(cache.moved) if cache is self._shown_cache
                       and cache.moved is not None else None)
        self._shown_cache = cache
        return result

    def _evaluated(self, name: str | None, edited: set[int] | None = None) -> Outcome:
        found = self._outcomes.get(name)
        if found is None:
            found = self._outcomes[name] = outcome(
                self.stack.plan, name, self._caches.get(name),
                edited=None if edited is None else sorted(edited),
                kept=self._earlier.get(name))
        return found

    def changed_rows(self) -> list[int] | None:
        """The rows of the plan shown whose inputs, result or power at the duration the latest
        recompute changed, ascending (``None``: any row — after a change other than cells
        edited in place, a switch of scenario or a failed recompute)."""
        return self._moved

    def outcome(self, name: str | None) -> Outcome | None:
        """Scenario ``name`` (``None``: the base) as of the latest recompute, evaluated on first
        ask; ``None`` for a plan without scenarios or one that could not be computed."""
        whole = self.stack.plan
        if self.result is None or not whole.scenarios:
            return None
        if name is not None and all(scenario.name != name for scenario in whole.scenarios):
            return None
        try:
            return self._evaluated(name)
        except FourfoldError as error:
            self.message.emit(str(error))
            return None

    @property
    def outcomes(self) -> list[Outcome]:
        """The base and every scenario, evaluated (empty for a plan without scenarios, or
        when the plan could not be computed); base first, then the scenarios in order."""
        found = []
        for name in (None, *(scenario.name for scenario in self.stack.plan.scenarios)):
            each = self.outcome(name)
            if each is None:
                return []
            found.append(each)
        return found

    def preparation(self):
        """The work ahead for the plan on show at its other numbers of looks, a
        generator of slices (:func:`fourfold.plan.prepare.preparation`, into the pool its
        scenarios' row caches share), or ``None`` when the plan could not be computed."""
        return None if self.result is None else preparation(self.plan, self._caches.pool)

    def pending(self) -> bool:
        """Whether a recompute is scheduled but has not run yet."""
        return self._timer.isActive()

    def recompute_now(self) -> None:
        """Recompute at once (the coalescing timer calls this; tests may too)."""
        self._timer.stop()
        self.result = self._compute()
        if self.compute_error:
            self.message.emit(self.compute_error)
        self.computed.emit()
