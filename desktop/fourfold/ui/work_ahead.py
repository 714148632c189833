"""Work done while the window is idle, so that a change of the number of looks is quick.

:class:`WorkAhead` belongs to the window (its parent, so that its timer lives and dies in the
window's thread). :data:`AHEAD_AFTER_MS` after a recompute it runs the document's
:meth:`~fourfold.ui.document.PlanDocument.preparation` (:mod:`fourfold.plan.prepare`: the plan
on show at every other number of looks, the nearest first), one slice of a few milliseconds
per turn of the event loop, so that input is served between slices. Any change of the plan
drops the work; the recompute that follows starts it again for the changed plan. A window
closed (hidden) drops its work: a window closed but not yet deleted would otherwise go on
working for a plan no one sees, taking the processor from the window in use.
"""

from __future__ import annotations

from PySide6.QtCore import QObject, QTimer
from PySide6.QtWidgets import QWidget

from fourfold.ui.document import PlanDocument

AHEAD_AFTER_MS = 250
"""How long the window is left idle after a recompute (its redraws done meanwhile) before
the work ahead starts."""

_DONE = object()


class WorkAhead(QObject):
    """Runs ``document``'s work ahead while ``window`` is idle and shown."""

    def __init__(self, document: PlanDocument, window: QWidget) -> None:
        super().__init__(window)
        self.document = document
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.timeout.connect(self._step)
        self._slices = None
        document.changed.connect(self._drop)
        document.computed.connect(self._restart)
        self._restart()

    def preparing(self) -> bool:
        """Whether work ahead is still to be done."""
        return self._slices is not None

    def _drop(self, _change) -> None:
        """A change of the plan (the stack's ``Change``): the work ahead is out of date."""
        self._timer.stop()
        self._slices = None

    def _restart(self) -> None:
        self._slices = self.document.preparation()
        if self._slices is None:
            self._timer.stop()
        else:
            self._timer.start(AHEAD_AFTER_MS)

    def _step(self) -> None:
        """One slice; the next runs in the next turn of the event loop."""
        if self._slices is None:
            return
        if not self.parent().isVisible():
            self._slices = None
            return
        if next(self._slices, _DONE) is _DONE:
            self._slices = None
        else:
            self._timer.start(0)
