"""The Fourfold main window: settings, summary line, the plan table and the plots.

This module builds the window and holds what ties its parts together: the document's state,
the row actions and the dialogs. Its actions and menus (:mod:`fourfold.ui.window_actions`),
plan files and exports (:mod:`fourfold.ui.window_files`), autosave and recovery prompts
(:mod:`fourfold.ui.window_recovery`), look and text size (:mod:`fourfold.ui.window_look`) and
scenarios (:mod:`fourfold.ui.window_scenarios`) each have a module of their own. Under the
table, one tab holds the trade-off plots and another the scenarios' comparison and what moves
the duration (:mod:`fourfold.ui.scenario_panel`).
"""

from __future__ import annotations

import dataclasses

from PySide6.QtCore import QItemSelectionModel, QSettings, Qt, QTimer
from PySide6.QtGui import QGuiApplication
from PySide6.QtWidgets import (
    QApplication,
    QLabel,
    QMainWindow,
    QMessageBox,
    QSplitter,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

import fourfold
from fourfold.plan import Metric, Plan
from fourfold.plan.commands import InsertMetrics, MoveMetric, RemoveMetrics, SetField
from fourfold.plan.rules import is_margin_row
from fourfold.ui import theme
from fourfold.ui.boundaries_plot import BoundariesView
from fourfold.ui.document import PlanDocument
from fourfold.ui.plots import PlotPanel
from fourfold.ui.recovery import Recovery
from fourfold.ui.scenario_panel import ScenarioPanel
from fourfold.ui.settings_panel import SettingsPanel
from fourfold.ui.summary import SummaryBar
from fourfold.ui.table_model import PlanTableModel
from fourfold.ui.table_view import PlanTableView
from fourfold.ui.window_actions import WindowActions
from fourfold.ui.window_files import WindowFiles
from fourfold.ui.window_look import WindowLook
from fourfold.ui.window_recovery import WindowRecovery, data_directory
from fourfold.ui.window_scenarios import WindowScenarios
from fourfold.ui.work_ahead import WorkAhead

AUTOSAVE_MS = 60_000


class MainWindow(WindowActions, WindowFiles, WindowRecovery, WindowLook, WindowScenarios,
                 QMainWindow):
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
        Folder of the recovery copies (default: :func:`fourfold.ui.window_recovery.data_directory`).
    """

    def __init__(self, plan: Plan, path=None, settings: QSettings | None = None,
                 data_dir=None) -> None:
        super().__init__()
        self.settings = settings if settings is not None else QSettings()
        self.recovery = Recovery(data_dir if data_dir is not None else data_directory())
        self.document = PlanDocument(plan, path, self)
        self.work_ahead = WorkAhead(self.document, self)
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
        self.scenario_panel = ScenarioPanel(self.document, ())
        self.lower_tabs = QTabWidget()
        self.lower_tabs.setDocumentMode(True)
        self.lower_tabs.addTab(self.figures, "Trade-offs")
        self.lower_tabs.addTab(self.scenario_panel, "Scenarios and what moves the duration")
        self.splitter.addWidget(self.lower_tabs)
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
        self._build_scenario_actions()
        self._build_menus()
        self._build_scenario_menu()
        self.scenario_panel.tools.addActions(self.scenario_tool_actions())
        self.scenario_panel.comparison.chosen.connect(self.switch_scenario)
        self.summary.chosen.connect(self.switch_scenario)
        self.settings_panel.traffic_requested.connect(lambda: self.traffic_action.trigger())
        self._problem: str | None = None
        for source in (self.document.message, self.settings_panel.message, self.table.problem):
            source.connect(self.show_problem)
        self.table.message.connect(self.show_message)
        self.document.changed.connect(self._clear_problem)
        # a redraw queued before the change would pair the changed plan with the old result
        self.document.changed.connect(self.plots.cancel_pending)
        self.document.history.connect(self._after_change)
        self.document.replaced.connect(self._after_replace)
        # the plots follow the table: drawn on their timer's next turn, after its repaint
        self.document.computed.connect(self._show_row)
        self.table.selectionModel().currentRowChanged.connect(self._show_row)
        self.plots.effect_dragged.connect(self._effect_dragged)
        self.model.rowsInserted.connect(self._rows_added)
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
        self.name_actions()

    # -- document state -----------------------------------------------------------------

    def show_message(self, text: str) -> None:
        """Show ``text`` in the status line (paste reports, saves)."""
        self._problem = None
        self.statusBar().showMessage(text, 12_000)

    def show_problem(self, text: str) -> None:
        """Show why something was refused; it stays until the plan next changes."""
        self.statusBar().showMessage(text, 30_000)
        self._problem = text

    def _clear_problem(self, _change) -> None:
        if self._problem is not None and self.statusBar().currentMessage() == self._problem:
            self.statusBar().clearMessage()
        self._problem = None

    def _after_change(self) -> None:
        self.show_title()
        stack = self.document.stack
        self.undo_action.setEnabled(stack.can_undo)
        self.redo_action.setEnabled(stack.can_redo)
        self.undo_action.setText(f"&Undo {stack.undo_text}" if stack.can_undo else "&Undo")
        self.redo_action.setText(f"&Redo {stack.redo_text}" if stack.can_redo else "&Redo")
        self._scenario_state()
        self.setWindowModified(self.document.dirty)

    def _after_replace(self) -> None:
        self.show_title()
        problems = self.document.stale_changes()
        if problems:
            self.show_message(" ".join(problems))
        if self.isVisible():  # a window being built is fitted when it is first shown
            self.fit_table()

    def fit_table(self) -> None:
        """Fit columns to the font and give the table the height of its rows (up to 12)."""
        self.table.fit_columns()
        self._fit_table_height()

    def _fit_table_height(self, grow_only: bool = False) -> None:
        """The table's height for its rows: 3 to 12 of them, at most 55 % of the splitter."""
        rows = min(max(self.model.rowCount(), 3), 12)
        total = sum(self.splitter.sizes()) or self.height()
        table = min(self.table.wanted_height(rows), int(total * 0.55))
        if not grow_only or table > self.splitter.sizes()[0]:
            self.splitter.setSizes([table, max(total - table, 1)])

    def _rows_added(self, *_args) -> None:
        """The table grows with added rows (up to 12), so that the first stays in view."""
        if self.isVisible():
            self._fit_table_height(grow_only=True)

    def current_row(self) -> int | None:
        """The row of the current cell (None when the table is empty)."""
        index = self.table.currentIndex()
        if not index.isValid() or index.row() >= self.model.rowCount():
            return None
        return index.row()

    def _show_row(self, *_args) -> None:
        if self.model.rowCount() != len(self.document.plan.metrics) or self.document.pending():
            return  # the plan changed: the recompute that follows shows the row
        row = self.current_row()
        if row is None and self.model.rowCount():
            self.table.setCurrentIndex(self.model.index(0, 0))  # calls back with row 0
            return
        self.plots.show_row(self.document.plan, self.document.result, row,
                            others=lambda: self._other_scenarios(row))
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

    def _other_scenarios(self, row: int | None) -> list:
        """The other scenarios' evaluations to overlay in the plots (when the toggle is on)."""
        if row is None or not self.overlay_action.isChecked():
            return []
        return [found for found in self.document.outcomes
                if found.name != self.document.scenario]

    def _effect_dragged(self, row: int, value: float) -> None:
        """The effect marker or slider moved: the row's effect, or a margin row's margin."""
        if 0 <= row < self.model.rowCount():
            field = "margin" if is_margin_row(self.model.metric(row)) else "effect"
            self.document.apply(SetField(row, field, value), merge=True)

    def _follow_scheme(self, *_args) -> None:
        self.dark = theme.apply(QApplication.instance())
        self.model.set_dark(self.dark)
        self.apply_style()

    # -- rows -------------------------------------------------------------------------

    def selected_rows(self) -> list[int]:
        """Rows with a selected cell (the current row when nothing is selected)."""
        rows = {index.row() for index in self.table.selectionModel().selectedIndexes()}
        current = self.table.currentIndex()
        if not rows and current.isValid():
            rows = {current.row()}
        return sorted(rows)

    def select_cell(self, row: int, column: int | None = None) -> None:
        """Make a cell current and the only one selected (in the current column by default).

        Not ``setCurrentIndex``: run from a shortcut such as Ctrl+D, it would read the held
        Ctrl as "add to the selection", and a following Ctrl+Del would delete both rows.
        """
        if column is None:
            column = max(self.table.currentIndex().column(), 0)
        self.table.selectionModel().setCurrentIndex(
            self.model.index(row, column), QItemSelectionModel.SelectionFlag.ClearAndSelect)

    def add_metric(self) -> None:
        """Insert a new metric row below the current one."""
        rows = self.selected_rows()
        row = rows[-1] + 1 if rows else self.model.rowCount()
        if self.document.apply(InsertMetrics(row, [Metric()])):
            self.select_cell(row)
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
            self.select_cell(rows[-1] + 1)

    def delete_metrics(self) -> None:
        """Remove the selected rows (undo brings them back)."""
        rows = self.selected_rows()
        if rows and self.document.apply(RemoveMetrics(rows)):
            if self.model.rowCount():
                self.select_cell(min(rows[0], self.model.rowCount() - 1))
            self.show_message(f"Removed {len(rows)} row(s); Undo brings them back")

    def move_metric(self, step: int) -> None:
        """Move the current row up (−1) or down (+1)."""
        current = self.table.currentIndex()
        if not current.isValid():
            return
        target = current.row() + step
        if 0 <= target < self.model.rowCount() and self.document.apply(
                MoveMetric(current.row(), target)):
            self.select_cell(target, current.column())

    # -- events and dialogs ---------------------------------------------------------------

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

    def import_history(self) -> None:
        """Plan → Import history…: the history dialog on this plan (its own module, lazily)."""
        from fourfold.ui.history_dialog import HistoryDialog

        HistoryDialog(self.document, self).exec()

    def edit_traffic(self) -> None:
        """Plan → Traffic model…: the traffic dialog on the plan on show (lazily)."""
        from fourfold.ui.traffic_dialog import TrafficDialog

        TrafficDialog(self.document, self).exec()

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
