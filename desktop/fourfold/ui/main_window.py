"""The Fourfold main window: settings, summary line, the plan table and the plots.

Menus: File (new, open, recent, save, export, quit), Edit (undo/redo mirrored from the plan's
command stack, copy, paste), Plan (row actions; the history import and the simulation check add
theirs here), View (text size) and Help (about). Every action has a keyboard shortcut.
"""

from __future__ import annotations

import dataclasses
import pathlib

from PySide6.QtCore import QDateTime, QLocale, QSettings, QStandardPaths, Qt, QTimer
from PySide6.QtGui import QAction, QGuiApplication, QKeySequence
from PySide6.QtWidgets import (
    QApplication,
    QFileDialog,
    QLabel,
    QMainWindow,
    QMessageBox,
    QSplitter,
    QVBoxLayout,
    QWidget,
)

import fourfold
from fourfold.errors import FourfoldError
from fourfold.plan import Metric, Plan, load, save
from fourfold.plan.commands import InsertMetrics, MoveMetric, RemoveMetrics, SetField
from fourfold.ui import theme
from fourfold.ui.boundaries_plot import BoundariesView
from fourfold.ui.document import PlanDocument
from fourfold.ui.plots import PlotPanel
from fourfold.ui.recovery import Recovery
from fourfold.ui.settings_panel import SettingsPanel
from fourfold.ui.summary import SummaryBar
from fourfold.ui.table_model import PlanTableModel
from fourfold.ui.table_view import PlanTableView

AUTOSAVE_MS = 60_000
MAX_RECENT = 8
SCALE_STEP = 0.1
SCALE_RANGE = (0.6, 2.5)
PLAN_FILTER = "Fourfold plans (*.json);;All files (*)"

STYLE = """
QFrame#settingsGroup {{ border: 1px solid {mid}; border-radius: 6px; background: {base}; }}
QLabel#groupHeading {{ color: {accent}; font-weight: 600; font-size: {small}pt;
    letter-spacing: 1px; }}
QLabel#fieldLabel {{ color: {muted}; }}
QLineEdit#planTitle {{ font-size: {title}pt; font-weight: 600; border: none;
    border-bottom: 2px solid {accent}; background: transparent; padding: 2px 0; }}
QPlainTextEdit#planDescription {{ color: {muted}; border: none; background: transparent; }}
QFrame#summaryBar {{ background: {summary}; border-radius: 6px; }}
QLabel#summaryItem {{ font-size: {summary_pt}pt; }}
QLabel#summaryNotes {{ color: {muted}; }}
"""
HEADER_STYLE = """
QHeaderView::section {{ padding: 2px 6px; border: none; border-right: 1px solid {mid};
    border-bottom: 1px solid {mid}; background: {button}; font-weight: 600; }}
"""


def data_directory() -> pathlib.Path:
    """The folder of the windows' recovery copies (the platform's application data location)."""
    location = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.AppDataLocation)
    return pathlib.Path(location)


class MainWindow(QMainWindow):
    """The window on one plan.

    Parameters
    ----------
    plan : Plan
        The plan to show.
    path : path-like or None
        Where it was loaded from (None: a new or bundled plan, saved with Save As).
    settings : QSettings, optional
        Where recent files and the text size are kept (tests pass a temporary ini file).
    data_dir : path-like, optional
        Folder of the recovery copies (default: :func:`data_directory`).
    """

    def __init__(self, plan: Plan, path=None, settings: QSettings | None = None,
                 data_dir=None) -> None:
        super().__init__()
        self.settings = settings if settings is not None else QSettings()
        self.recovery = Recovery(data_dir if data_dir is not None else data_directory())
        self.document = PlanDocument(plan, path, self)
        self.model = PlanTableModel(self.document, self)
        self.dark = theme.system_is_dark()
        self.setWindowIcon(theme.app_icon())

        self.settings_panel = SettingsPanel(self.document)
        self.summary = SummaryBar(self.document)
        self.table = PlanTableView()
        self.table.setModel(self.model)
        self.splitter = QSplitter(Qt.Orientation.Vertical)
        self.splitter.addWidget(self.table)
        self.plots = PlotPanel()
        self.boundaries = BoundariesView()
        self.figures = QSplitter(Qt.Orientation.Horizontal)
        self.figures.addWidget(self.plots)
        self.figures.addWidget(self.boundaries)
        self.figures.setStretchFactor(0, 3)
        self.figures.setStretchFactor(1, 1)
        self.figures.setChildrenCollapsible(False)
        self.figures.setSizes([2500, 1000])
        self.splitter.addWidget(self.figures)
        # the table keeps the height fitted to its rows; the plots take what the window gains
        # or loses (the description growing to three lines after the first layout, say)
        self.splitter.setStretchFactor(0, 0)
        self.splitter.setStretchFactor(1, 1)
        self.splitter.setChildrenCollapsible(False)
        central = QWidget()
        layout = QVBoxLayout(central)
        layout.setContentsMargins(12, 10, 12, 6)
        layout.setSpacing(8)
        layout.addWidget(self.settings_panel)
        layout.addWidget(self.summary)
        layout.addWidget(self.splitter, 1)
        self.setCentralWidget(central)
        self.row_status = QLabel()
        self.statusBar().addPermanentWidget(self.row_status)

        self._build_actions()
        self._build_menus()
        for source in (self.document.message, self.settings_panel.message, self.table.message):
            source.connect(self.show_message)
        self.document.history.connect(self._after_change)
        self.document.replaced.connect(self._after_replace)
        self.document.computed.connect(self._show_computed)
        self.table.selectionModel().currentRowChanged.connect(self._show_row)
        self.plots.effect_dragged.connect(self._effect_dragged)
        hints = QGuiApplication.styleHints()
        hints.colorSchemeChanged.connect(self._follow_scheme)

        self.autosave_timer = QTimer(self)
        self.autosave_timer.setInterval(AUTOSAVE_MS)
        self.autosave_timer.timeout.connect(self.autosave)
        self.autosave_timer.start()

        self.apply_style()
        self.set_text_scale(self.text_scale(), announce=False)
        self._after_replace()
        self._after_change()
        if self.model.rowCount():
            self.table.setCurrentIndex(self.model.index(0, 0))
        self.table.setFocus()

    # -- actions and menus --------------------------------------------------------------

    def _action(self, text: str, slot, shortcut=None, tip: str = "") -> QAction:
        action = QAction(text, self)
        if shortcut is not None:
            keys = shortcut if isinstance(shortcut, list) else [shortcut]
            sequences = {}
            for key in keys:
                sequence = QKeySequence(key)
                if not sequence.isEmpty():
                    sequences.setdefault(sequence.toString(), sequence)
            action.setShortcuts(list(sequences.values()))
        action.setStatusTip(tip)
        action.triggered.connect(slot)
        self.addAction(action)
        return action

    def _build_actions(self) -> None:
        key = QKeySequence.StandardKey
        self.new_action = self._action("&New plan", self.new_plan, key.New, "Start an empty plan")
        self.open_action = self._action("&Open…", self.open_file, key.Open, "Open a plan file")
        self.save_action = self._action("&Save", self.save_file, key.Save, "Save the plan")
        self.save_as_action = self._action("Save &as…", self.save_file_as, key.SaveAs,
                                           "Save the plan under a new name")
        self.csv_action = self._action("&CSV table…", self.export_csv, "Ctrl+E",
                                       "Write the plan table as CSV")
        self.pdf_action = self._action("&PDF report…", self.export_pdf, "Ctrl+Shift+E",
                                       "Write the plan as a PDF report")
        self.quit_action = self._action("&Quit", self.close, [key.Quit, "Ctrl+Q"],
                                        "Close Fourfold")
        self.undo_action = self._action("&Undo", self.document.undo, key.Undo)
        self.redo_action = self._action("&Redo", self.document.redo, [key.Redo, "Ctrl+Y"])
        self.copy_action = self._action("&Copy cells", self.table.copy_selection, key.Copy,
                                        "Copy the selected cells as tab-separated text")
        self.paste_action = self._action("&Paste cells", self.table.paste, key.Paste,
                                         "Paste tab-separated text at the current cell")
        for action in (self.copy_action, self.paste_action):
            action.setShortcutContext(Qt.ShortcutContext.WidgetShortcut)
            self.table.addAction(action)
        self.add_action = self._action("&Add metric", self.add_metric, "Ctrl+Shift+N",
                                       "Add a metric row below the current one")
        self.duplicate_action = self._action("&Duplicate metric", self.duplicate_metrics,
                                             "Ctrl+D", "Copy the selected rows below them")
        self.delete_action = self._action("De&lete metric", self.delete_metrics,
                                          "Ctrl+Del", "Remove the selected rows")
        self.up_action = self._action("Move &up", lambda: self.move_metric(-1), "Alt+Up",
                                      "Move the current row up")
        self.down_action = self._action("Move do&wn", lambda: self.move_metric(1), "Alt+Down",
                                        "Move the current row down")
        self.sort_action = self._action(
            "S&ort rows by this column", lambda: self.table.sort_column(), "Ctrl+Shift+O",
            "Sort the rows by the current cell's column (again: descending); one undo step")
        self.bigger_action = self._action("&Larger text", lambda: self.step_text(1),
                                          [key.ZoomIn, "Ctrl+="])
        self.smaller_action = self._action("&Smaller text", lambda: self.step_text(-1),
                                           key.ZoomOut)
        self.reset_text_action = self._action("&Normal text size", lambda: self.set_text_scale(1),
                                              "Ctrl+0")
        self.about_action = self._action("&About Fourfold", self.about, key.HelpContents)

    def _build_menus(self) -> None:
        bar = self.menuBar()
        self.file_menu = bar.addMenu("&File")
        self.file_menu.addActions([self.new_action, self.open_action])
        self.recent_menu = self.file_menu.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self._fill_recent)
        self.file_menu.addSeparator()
        self.file_menu.addActions([self.save_action, self.save_as_action])
        self.export_menu = self.file_menu.addMenu("&Export")
        self.export_menu.addActions([self.csv_action, self.pdf_action])
        self.file_menu.addSeparator()
        self.file_menu.addAction(self.quit_action)
        self.edit_menu = bar.addMenu("&Edit")
        self.edit_menu.addActions([self.undo_action, self.redo_action])
        self.edit_menu.addSeparator()
        self.edit_menu.addActions([self.copy_action, self.paste_action])
        self.plan_menu = bar.addMenu("&Plan")
        self.plan_menu.addActions([self.add_action, self.duplicate_action, self.delete_action])
        self.plan_menu.addSeparator()
        self.plan_menu.addActions([self.up_action, self.down_action, self.sort_action])
        self.table.setContextMenuPolicy(Qt.ContextMenuPolicy.ActionsContextMenu)
        separator = QAction(self.table)
        separator.setSeparator(True)
        self.table.addActions([separator, self.add_action, self.duplicate_action,
                               self.delete_action, self.up_action, self.down_action])
        self.plan_menu.addSeparator()
        self.history_action = self._action(
            "Import &history…", self.import_history, "Ctrl+Shift+H",
            "Fill baselines, sds and ρ from a per-unit history file (one undo step)")
        self.plan_menu.addAction(self.history_action)
        self.simulate_action = self._action(
            "Check by &simulation…", self.check_by_simulation, "Ctrl+Shift+K",
            "Simulate the selected rows' tests and compare with the closed-form power")
        self.simulate_plan_action = self._action(
            "Check whole plan by si&mulation…", self.check_plan_by_simulation, "Ctrl+Alt+K",
            "Simulate every row's test and compare with the closed-form power")
        self.plan_menu.addActions([self.simulate_action, self.simulate_plan_action])
        self.table.addAction(self.simulate_action)
        self.view_menu = bar.addMenu("&View")
        self.view_menu.addActions([self.bigger_action, self.smaller_action,
                                   self.reset_text_action])
        self.help_menu = bar.addMenu("&Help")
        self.help_menu.addAction(self.about_action)

    # -- document state -----------------------------------------------------------------

    def show_message(self, text: str) -> None:
        """Show ``text`` in the status line (refused edits, paste reports, saves)."""
        self.statusBar().showMessage(text, 12_000)

    def _after_change(self) -> None:
        stack = self.document.stack
        self.undo_action.setEnabled(stack.can_undo)
        self.redo_action.setEnabled(stack.can_redo)
        self.undo_action.setText(f"&Undo {stack.undo_text}" if stack.can_undo else "&Undo")
        self.redo_action.setText(f"&Redo {stack.redo_text}" if stack.can_redo else "&Redo")
        self.setWindowModified(self.document.dirty)

    def _after_replace(self) -> None:
        self.setWindowTitle(f"{self.document.file_name}[*] — Fourfold")
        if self.isVisible():  # a window being built is fitted when it is first shown
            self.fit_table()

    def fit_table(self) -> None:
        """Fit columns to the font and give the table the height of its rows (up to 12)."""
        self.table.fit_columns()
        rows = min(max(self.model.rowCount(), 3), 12)
        total = sum(self.splitter.sizes()) or self.height()
        table = min(self.table.wanted_height(rows), int(total * 0.55))
        self.splitter.setSizes([table, max(total - table, 1)])

    def current_row(self) -> int | None:
        """The row of the current cell (None when the table is empty)."""
        index = self.table.currentIndex()
        if not index.isValid() or index.row() >= self.model.rowCount():
            return None
        return index.row()

    def _show_computed(self) -> None:
        # a recompute is coalesced already: its plots are drawn in the table's paint pass
        self._show_row(now=True)

    def _show_row(self, *_args, now: bool = False) -> None:
        if self.model.rowCount() != len(self.document.plan.metrics):
            return  # mid row insertion/removal: the recompute that follows shows the row
        row = self.current_row()
        if row is None and self.model.rowCount():
            self.table.setCurrentIndex(self.model.index(0, 0))  # calls back with row 0
            return
        self.plots.show_row(self.document.plan, self.document.result, row, now=now)
        self.boundaries.setVisible(self.document.plan.settings.looks > 1)
        self.boundaries.show_row(self.document.plan, self.document.result, row)
        if row is None:
            self.row_status.setText("")
            return
        result = self.model.row_result(row)
        metric = self.model.metric(row)
        if result is not None and result.reason:
            self.row_status.setText(f"{metric.name}: {result.reason}")
        else:
            self.row_status.setText(metric.name)

    def _effect_dragged(self, row: int, effect: float) -> None:
        if 0 <= row < self.model.rowCount():
            self.document.apply(SetField(row, "effect", effect), merge=True)

    def _follow_scheme(self, *_args) -> None:
        self.dark = theme.apply(QApplication.instance())
        self.model.set_dark(self.dark)
        self.apply_style()

    def apply_style(self) -> None:
        """Style sheet details on top of the palette (group frames, title, summary, headers).

        The table's cells are left to the plain Fusion style: a style sheet on the table
        itself would slow down every repaint of its cells. The colours come from the scheme's
        palette, not ``self.palette()``: right after a live scheme change the window may still
        hold the old one.
        """
        palette = theme.palette(self.dark)
        tints = theme.tints(self.dark)
        base_pt = max(QApplication.font().pointSizeF(), 9.0)
        sheet = STYLE.format(
            mid=palette.mid().color().name(), base=palette.base().color().name(),
            button=palette.button().color().name(), accent=tints.accent.name(),
            muted=tints.muted.name(), summary=tints.computed.name(),
            small=round(base_pt * 0.8, 1), title=round(base_pt * 1.45, 1),
            summary_pt=round(base_pt * 1.1, 1),
        )
        self.settings_panel.setStyleSheet(sheet)
        self.summary.setStyleSheet(sheet)
        header = HEADER_STYLE.format(mid=palette.mid().color().name(),
                                     button=palette.button().color().name())
        self.table.horizontalHeader().setStyleSheet(header)
        self.table.verticalHeader().setStyleSheet(header)

    # -- text size ----------------------------------------------------------------------

    def text_scale(self) -> float:
        """The remembered text scale of the table and plots (1 = normal)."""
        try:
            value = float(self.settings.value("view/text_scale", 1.0))
        except (TypeError, ValueError):
            value = 1.0
        low, high = SCALE_RANGE
        return min(max(value, low), high)

    def set_text_scale(self, scale: float, announce: bool = True) -> None:
        """Scale the text of the table and plots and remember it."""
        low, high = SCALE_RANGE
        scale = round(min(max(scale, low), high), 2)
        self.settings.setValue("view/text_scale", scale)
        font = QApplication.font()
        font.setPointSizeF(font.pointSizeF() * scale)
        self.table.setFont(font)
        self.table.horizontalHeader().setFont(font)
        self.table.verticalHeader().setFont(font)
        self.boundaries.setFont(font)
        if self.isVisible():  # a window being built is fitted when it is first shown
            self.fit_table()
        self.plots.set_text_scale(scale)
        if announce:
            self.show_message(f"Text size {round(scale * 100)} %")

    def step_text(self, steps: int) -> None:
        """Make the text one step larger (+1) or smaller (−1)."""
        self.set_text_scale(self.text_scale() + steps * SCALE_STEP)

    # -- rows -------------------------------------------------------------------------

    def selected_rows(self) -> list[int]:
        """Rows with a selected cell (the current row when nothing is selected)."""
        rows = {index.row() for index in self.table.selectionModel().selectedIndexes()}
        current = self.table.currentIndex()
        if not rows and current.isValid():
            rows = {current.row()}
        return sorted(rows)

    def _select_row(self, row: int) -> None:
        column = max(self.table.currentIndex().column(), 0)
        self.table.setCurrentIndex(self.model.index(row, column))

    def add_metric(self) -> None:
        """Insert a new metric row below the current one."""
        rows = self.selected_rows()
        row = rows[-1] + 1 if rows else self.model.rowCount()
        if self.document.apply(InsertMetrics(row, [Metric()])):
            self._select_row(row)
            self.table.edit(self.model.index(row, 0))

    def duplicate_metrics(self) -> None:
        """Copy the selected rows, inserted below the last of them."""
        rows = self.selected_rows()
        if not rows:
            return
        copies = []
        for row in rows:
            metric = self.document.plan.metrics[row]
            copies.append(dataclasses.replace(metric, name=f"{metric.name} (copy)"[:200]))
        if self.document.apply(InsertMetrics(rows[-1] + 1, copies)):
            self._select_row(rows[-1] + 1)

    def delete_metrics(self) -> None:
        """Remove the selected rows (undo brings them back)."""
        rows = self.selected_rows()
        if rows and self.document.apply(RemoveMetrics(rows)):
            if self.model.rowCount():
                self._select_row(min(rows[0], self.model.rowCount() - 1))
            self.show_message(f"Removed {len(rows)} row(s); Undo brings them back")

    def move_metric(self, step: int) -> None:
        """Move the current row up (−1) or down (+1)."""
        current = self.table.currentIndex()
        if not current.isValid():
            return
        target = current.row() + step
        if 0 <= target < self.model.rowCount() and self.document.apply(
                MoveMetric(current.row(), target)):
            self.table.setCurrentIndex(self.model.index(target, current.column()))

    # -- files ------------------------------------------------------------------------

    def ask_to_save(self) -> QMessageBox.StandardButton:
        """Ask whether to save unsaved changes: Save, Discard or Cancel."""
        return QMessageBox.question(
            self, "Unsaved changes",
            f"Save the changes to {self.document.file_name} first?",
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
        self.show_message(f"Opened {path}")
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
            save(self.document.plan, path)
        except (FourfoldError, OSError) as error:
            self.show_error("Cannot save the plan", f"{path}\n\n{error}")
            return False
        self.document.mark_saved(path)
        self.recovery.discard()
        self.remember_recent(path)
        self.setWindowTitle(f"{self.document.file_name}[*] — Fourfold")
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
            action.setToolTip(path)
            action.triggered.connect(lambda _=False, p=path: self.may_discard()
                                     and self.open_path(p))
        if not recent:
            self.recent_menu.addAction("No recent plans").setEnabled(False)

    # -- autosave and recovery ----------------------------------------------------------

    def autosave(self) -> None:
        """Write the recovery copy when there are unsaved changes."""
        if self.document.dirty:
            try:
                self.recovery.write(self.document.plan, self.document.path)
            except OSError as error:
                self.show_message(f"Autosave failed: {error}")

    def offer_recovery(self, ask=None) -> bool:
        """Offer the plans that windows left unsaved when they ended, newest first.

        ``ask(recovered)`` decides for each (default: a dialog): True restores it here (then
        no more are offered: the rest wait for another window), False deletes it, None keeps
        it for later. Copies of windows still running are never offered. Returns whether a
        plan was restored.
        """
        leftovers = self.recovery.leftovers()
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
            self.show_message(f"Restored the unsaved plan from the last session{more}")
            return True
        return False

    def _ask_recover(self, found, number: int = 1, total: int = 1) -> bool | None:
        source = found.source.name if found.source else "an unsaved plan"
        when = QLocale().toString(QDateTime.fromSecsSinceEpoch(int(found.saved_at)),
                                  QLocale.FormatType.ShortFormat)
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

    def showEvent(self, event) -> None:
        super().showEvent(event)
        if not event.spontaneous():
            self.fit_table()

    def closeEvent(self, event) -> None:
        if not self.may_discard():
            event.ignore()
            return
        self.autosave_timer.stop()
        self.recovery.discard()
        event.accept()

    # -- exports and help ---------------------------------------------------------------

    def _export_path(self, suffix: str, title: str) -> str:
        base = self.document.path.with_suffix(suffix) if self.document.path else \
            pathlib.Path.home() / f"plan{suffix}"
        path, _ = QFileDialog.getSaveFileName(self, title, str(base),
                                              f"{suffix[1:].upper()} (*{suffix})")
        if path and not path.lower().endswith(suffix):
            path += suffix
        return path

    def export_csv(self) -> None:
        """Write the plan table to a CSV file."""
        path = self._export_path(".csv", "Export CSV table")
        if path:
            from fourfold.export.csv import write_csv

            self._export(write_csv, path)

    def export_pdf(self) -> None:
        """Write the plan report to a PDF (Letter in US locales, A4 elsewhere)."""
        path = self._export_path(".pdf", "Export PDF report")
        if path:
            from fourfold.export.pdf import write_pdf

            imperial = QLocale().measurementSystem() == QLocale.MeasurementSystem.ImperialUSSystem
            self._export(lambda plan, target: write_pdf(plan, target,
                                                        page="letter" if imperial else "a4"),
                         path)

    def _export(self, writer, path: str) -> None:
        try:
            writer(self.document.plan, path)
        except (FourfoldError, OSError) as error:
            self.show_error("Cannot export", f"{path}\n\n{error}")
            return
        self.show_message(f"Wrote {path}")

    def import_history(self) -> None:
        """Plan → Import history…: the history dialog on this plan (its own module, lazily)."""
        from fourfold.ui.history_dialog import HistoryDialog

        HistoryDialog(self.document, self).exec()

    def check_by_simulation(self) -> None:
        """Plan → Check by simulation: the selected rows (the dialog's own module, lazily)."""
        rows = self.selected_rows()
        if not rows:
            self.show_message("Select a row to check by simulation")
            return
        from fourfold.ui.simulation_dialog import SimulationDialog

        SimulationDialog(self.document, rows, self).exec()

    def check_plan_by_simulation(self) -> None:
        """Plan → Check whole plan by simulation."""
        from fourfold.ui.simulation_dialog import SimulationDialog

        SimulationDialog(self.document, None, self).exec()

    def about(self) -> None:
        """The About box: version and the caution."""
        QMessageBox.about(
            self, "About Fourfold",
            f"<h3>Fourfold {fourfold.__version__}</h3>"
            "<p>Plan the sample size of online controlled experiments: fix three of sample "
            "size, effect, α and power; solve the fourth.</p>"
            f"<p><i>{fourfold.CAUTION}</i></p>")
