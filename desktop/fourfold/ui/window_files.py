"""The main window's plan files: new, open, save, recent files, and the CSV and PDF exports.

A file that cannot be read or written is named in a dialog and loses nothing: a failed open
leaves the plan on show, a failed save leaves the old file intact.
"""

from __future__ import annotations

import pathlib

from PySide6.QtCore import QLocale
from PySide6.QtWidgets import QFileDialog, QMessageBox

from fourfold.errors import FourfoldError
from fourfold.plan import Plan, load, save

MAX_RECENT = 8
PLAN_FILTER = "Fourfold plans (*.json);;All files (*)"


class WindowFiles:
    """Opening, saving and exporting the plan of :class:`fourfold.ui.main_window.MainWindow`."""

    def ask_to_save(self) -> QMessageBox.StandardButton:
        """Ask whether to save unsaved changes: Save, Discard or Cancel."""
        return QMessageBox.question(
            self, "Unsaved changes",
            f"Save the changes to {self.document.display_name} first?",
            QMessageBox.StandardButton.Save | QMessageBox.StandardButton.Discard
            | QMessageBox.StandardButton.Cancel, QMessageBox.StandardButton.Save)

    def may_discard(self) -> bool:
        """Whether the current plan may be replaced (saved, discarded or unchanged)."""
        self.settings_panel.commit_pending()
        if not self.document.dirty:
            return True
        answer = self.ask_to_save()
        if answer == QMessageBox.StandardButton.Save:
            return self.save_file()
        return answer == QMessageBox.StandardButton.Discard

    def new_plan(self) -> None:
        """Start an empty plan (after asking about unsaved changes)."""
        if self.may_discard():
            self.document.replace(Plan.empty(), None)
            self.recovery.discard()

    def open_file(self) -> None:
        """Ask for a plan file and open it."""
        if not self.may_discard():
            return
        start = str(self.document.path.parent) if self.document.path else ""
        path, _ = QFileDialog.getOpenFileName(self, "Open plan", start, PLAN_FILTER)
        if path:
            self.open_path(path)

    def open_path(self, path) -> bool:
        """Open ``path``; an unreadable or foreign file leaves the current plan untouched."""
        try:
            plan = load(path)
        except (FourfoldError, OSError) as error:
            self.show_error("Cannot open the plan", f"{path}\n\n{error}")
            return False
        self.document.replace(plan, path)
        self.recovery.discard()
        self.remember_recent(path)
        self.show_message(" ".join([f"Opened {path}.", *self.document.stale_changes()]))
        return True

    def save_file(self) -> bool:
        """Save to the plan's file (asks for a name the first time)."""
        if self.document.path is None:
            return self.save_file_as()
        return self.save_to(self.document.path)

    def save_file_as(self) -> bool:
        """Ask for a file name and save there."""
        start = str(self.document.path or pathlib.Path.home() / self.document.file_name)
        path, _ = QFileDialog.getSaveFileName(self, "Save plan", start, PLAN_FILTER)
        if not path:
            return False
        if not path.lower().endswith(".json"):
            path += ".json"
        return self.save_to(path)

    def save_to(self, path) -> bool:
        """Write the plan to ``path`` (atomically); on failure the old file stays intact."""
        self.settings_panel.commit_pending()
        try:
            save(self.document.whole, path)
        except (FourfoldError, OSError) as error:
            self.show_error("Cannot save the plan", f"{path}\n\n{error}")
            return False
        self.document.mark_saved(path)
        self.recovery.discard()
        self.remember_recent(path)
        self.show_message(f"Saved {path}")
        return True

    def show_error(self, title: str, text: str) -> None:
        """A dialog naming a problem with a file (overridden in tests)."""
        QMessageBox.warning(self, title, text)

    def recent_files(self) -> list[str]:
        """Recently opened or saved plan files, newest first."""
        value = self.settings.value("files/recent", [])
        if isinstance(value, str):
            value = [value]
        return [str(item) for item in (value or [])][:MAX_RECENT]

    def remember_recent(self, path) -> None:
        """Put ``path`` at the top of the recent files."""
        path = str(pathlib.Path(path).resolve())
        recent = [path] + [item for item in self.recent_files() if item != path]
        self.settings.setValue("files/recent", recent[:MAX_RECENT])

    def _fill_recent(self) -> None:
        self.recent_menu.clear()
        recent = self.recent_files()
        for number, path in enumerate(recent, start=1):
            action = self.recent_menu.addAction(f"&{number} {pathlib.Path(path).name}")
            action.setObjectName("recent_file_action")
            action.setToolTip(path)
            action.triggered.connect(lambda _=False, p=path: self.may_discard()
                                     and self.open_path(p))
        if not recent:
            placeholder = self.recent_menu.addAction("No recent plans")
            placeholder.setObjectName("no_recent_action")
            placeholder.setEnabled(False)

    def _export_path(self, suffix: str, title: str) -> str:
        base = self.document.path.with_suffix(suffix) if self.document.path else \
            pathlib.Path.home() / pathlib.Path(self.document.file_name).with_suffix(suffix)
        path, _ = QFileDialog.getSaveFileName(self, title, str(base),
                                              f"{suffix[1:].upper()} (*{suffix})")
        if path and not path.lower().endswith(suffix):
            path += suffix
        return path

    def export_csv(self) -> None:
        """Write the plan table of the scenario on show to a CSV file (and, for a plan with
        scenarios, their comparison beside it)."""
        path = self._export_path(".csv", "Export CSV table")
        if path:
            from fourfold.export.csv import write_csv

            self._export(write_csv, path)

    def export_pdf(self) -> None:
        """Write the report of the scenario on show to a PDF (Letter in US locales, A4
        elsewhere)."""
        path = self._export_path(".pdf", "Export PDF report")
        if path:
            from fourfold.export.pdf import write_pdf

            imperial = QLocale().measurementSystem() == QLocale.MeasurementSystem.ImperialUSSystem
            self._export(lambda plan, target, scenario: write_pdf(
                plan, target, page="letter" if imperial else "a4", scenario=scenario), path)

    def _export(self, writer, path: str) -> None:
        try:
            writer(self.document.whole, path, self.document.scenario)
        except (FourfoldError, OSError) as error:
            self.show_error("Cannot export", f"{path}\n\n{error}")
            return
        result = self.document.result
        if result is not None and result.incomplete:
            self.show_message(f"Wrote {path}: an incomplete plan, so it says \"incomplete\" and "
                              f"gives no duration ({result.incomplete_text()})")
        else:
            self.show_message(f"Wrote {path}")
