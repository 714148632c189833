"""The main window's autosave and its offer to restore plans that windows left unsaved.

The copies themselves are kept by :class:`fourfold.ui.recovery.Recovery`; this module decides
when to write them and asks the user what to do with the ones found at start.
"""

from __future__ import annotations

import pathlib

from PySide6.QtCore import QCoreApplication, QDateTime, QLocale, QStandardPaths
from PySide6.QtWidgets import QMessageBox


def data_directory() -> pathlib.Path:
    """The folder of the windows' recovery copies: ``Fourfold`` in the platform's data
    location (``~/.local/share/Fourfold`` on Linux).

    Not Qt's application data location: it joins organisation and application name, both
    "Fourfold", into ``Fourfold/Fourfold``.
    """
    location = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.GenericDataLocation)
    return pathlib.Path(location) / (QCoreApplication.applicationName() or "Fourfold")


def when_text(seconds: float, locale: QLocale | None = None) -> str:
    """A moment as the system's locale writes a short date and time.

    The bare C locale has no date conventions of its own (Qt writes "4 12 2026 15:20"):
    there the moment reads as ISO 8601, "2026-12-04 15:20".
    """
    locale = QLocale.system() if locale is None else locale
    moment = QDateTime.fromSecsSinceEpoch(int(seconds))
    if locale.language() == QLocale.Language.C:
        return moment.toString("yyyy-MM-dd HH:mm")
    return locale.toString(moment, QLocale.FormatType.ShortFormat)


class WindowRecovery:
    """Autosave and recovery prompts of :class:`fourfold.ui.main_window.MainWindow`."""

    def autosave(self) -> None:
        """Write the recovery copy when there are unsaved changes."""
        if self.document.dirty:
            try:
                self.recovery.write(self.document.whole, self.document.path)
            except OSError as error:
                self.show_message(f"Autosave failed: {error}")

    def offer_recovery(self, ask=None) -> bool:
        """Offer the plans that windows left unsaved when they ended, newest first.

        ``ask(recovered)`` decides for each (default: a dialog): True restores it here (then
        no more are offered: the rest wait for another window), False deletes it, None keeps
        it for later. Copies of windows still running are never offered; damaged copies are
        set aside and named in the status line. Returns whether a plan was restored.
        """
        leftovers = self.recovery.leftovers()
        aside = self._set_aside_note()
        if aside:
            self.show_message(aside)
        for number, found in enumerate(leftovers, start=1):
            answer = ask(found) if ask is not None else self._ask_recover(
                found, number, len(leftovers))
            if answer is None:
                self.recovery.keep(found)
                continue
            if not answer:
                self.recovery.drop(found)
                continue
            self.document.replace(found.plan, found.source, unsaved=True)
            try:
                self.recovery.write(found.plan, found.source)  # this window's copy takes over
            except OSError:
                self.recovery.keep(found)
            else:
                self.recovery.drop(found)
            for rest in leftovers[number:]:
                self.recovery.keep(rest)
            waiting = len(leftovers) - number
            more = (f"; {waiting} more kept for the next Fourfold window" if waiting else "")
            self.show_message(f"Restored the unsaved plan from the last session{more}"
                              + (f". {aside}" if aside else ""))
            return True
        return False

    def _set_aside_note(self) -> str:
        """The status line's words on recovery copies set aside as damaged ("" for none)."""
        found = self.recovery.set_aside
        if not found:
            return ""
        path, why = found[-1]
        more = f" (and {len(found) - 1} more)" if len(found) > 1 else ""
        return f"A damaged recovery copy was set aside as {path}{more}: {why}"

    def _ask_recover(self, found, number: int = 1, total: int = 1) -> bool | None:
        title = " ".join(found.plan.settings.title.split())
        source = found.source.name if found.source else f"the unsaved plan “{title}”"
        when = when_text(found.saved_at)
        count = f" ({number} of {total})" if total > 1 else ""
        box = QMessageBox(QMessageBox.Icon.Question, f"Restore unsaved changes?{count}",
                          f"A Fourfold window closed without saving changes to {source} "
                          f"(last copy {when}). Restore them here?", parent=self)
        restore = box.addButton("Restore", QMessageBox.ButtonRole.AcceptRole)
        discard = box.addButton("Discard", QMessageBox.ButtonRole.DestructiveRole)
        box.addButton("Keep for later", QMessageBox.ButtonRole.RejectRole)
        box.setDefaultButton(restore)
        box.exec()
        clicked = box.clickedButton()
        if clicked is restore:
            return True
        return False if clicked is discard else None
