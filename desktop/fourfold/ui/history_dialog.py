"""Plan → Import history…: baselines and variances from a history file or a warehouse.

The dialog maps columns to metrics (kind, ratio denominator, pre-period column, cap), and
optionally a unit and a time column; it reads the file (streaming reader or DuckDB) or runs the
query in a warehouse on a worker thread with a progress bar and Cancel, shows what it found per
metric — over the whole history or over each unit's first days, with the reach curve — and
applies it to new or existing metric rows as one undoable command (with the reach curve as the
plan's traffic and rows following their windows when the user asks). All the reading and
statistics are :mod:`fourfold.history`'s; this module only collects choices and shows results.
Cancel or a bad file leaves the plan as it was.

The mapping table (:mod:`fourfold.ui.history_mapping`), the unit and time columns with the
windows (:mod:`fourfold.ui.history_traffic`), the warehouse page
(:mod:`fourfold.ui.history_warehouse`), the results and the command that applies them
(:mod:`fourfold.ui.history_results`) and the worker thread (:mod:`fourfold.ui.history_worker`)
each have a module of their own.
"""

from __future__ import annotations

import threading
import time

from PySide6.QtCore import Qt, QThread, Slot
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDialog,
    QFileDialog,
    QFrame,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QProgressBar,
    QPushButton,
    QTabBar,
    QTableWidget,
    QVBoxLayout,
    QWidget,
)

from fourfold.errors import FourfoldError
from fourfold.history import HistorySummary
from fourfold.history.guess import guess_mapping, guess_units
from fourfold.ui.history_mapping import MAP_COLUMNS, HistoryMapping
from fourfold.ui.history_results import RESULT_COLUMNS, HistoryResults
from fourfold.ui.history_traffic import HistoryTraffic
from fourfold.ui.history_warehouse import HistoryWarehouse
from fourfold.ui.history_worker import FileJob, HistoryWorker, rate_text

FILE_FILTER = "History files (*.csv *.parquet *.pq);;CSV (*.csv);;All files (*)"
ENGINES = {"automatic": "auto", "streaming reader": "stream", "DuckDB": "duckdb"}


class HistoryDialog(HistoryMapping, HistoryTraffic, HistoryWarehouse, HistoryResults, QDialog):
    """Import baselines and variances from history into the plan.

    Parameters
    ----------
    document : fourfold.ui.document.PlanDocument
        The open plan; the import is applied with ``document.apply`` (one undo step).
    path : str, optional
        A history file to open straight away.
    """

    def __init__(self, document, parent: QWidget | None = None, path: str | None = None):
        super().__init__(parent)
        self.document = document
        self.setWindowTitle("Import history")
        self.setObjectName("historyDialog")
        self.resize(1040, 860)
        self.columns: list[str] = []
        self.summary: HistorySummary | None = None
        self._thread: QThread | None = None
        self._worker: HistoryWorker | None = None
        self._job = None
        self._stop = threading.Event()
        self._started = 0.0
        self._build()
        self._source_changed(0)
        if path is not None:
            self.open_path(path)
        self._update_buttons()

    # -- layout --------------------------------------------------------------------------

    def _build(self) -> None:
        layout = QVBoxLayout(self)
        intro = QLabel(
            "Fill in baselines, standard deviations and the pre-period correlation ρ from a "
            "pre-period: read a file (CSV, or Parquet with pyarrow), or run the query written "
            "here in your warehouse. With a unit and a time column, rows are visits of units: "
            "the reach curve and each unit's first days come too."
        )
        intro.setWordWrap(True)
        layout.addWidget(intro)
        # A tab bar over pages that hide, so the short file page does not take the height of
        # the warehouse page.
        self.source_tabs = QTabBar()
        self.source_tabs.addTab("History file")
        self.source_tabs.addTab("Warehouse query")
        self.source_tabs.setExpanding(False)
        self.source_tabs.currentChanged.connect(self._source_changed)
        layout.addWidget(self.source_tabs)
        self.source_pages = [self._file_tab(), self._warehouse_tab()]
        for page in self.source_pages:
            page.setObjectName("historySource")
            layout.addWidget(page)
        layout.addWidget(self._units_row())

        layout.addWidget(QLabel("Columns to read (one line per metric):"))
        self.map_table = QTableWidget(0, len(MAP_COLUMNS))
        self.map_table.setHorizontalHeaderLabels(MAP_COLUMNS)
        self.map_table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.map_table.verticalHeader().setVisible(False)
        self.map_table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        layout.addWidget(self.map_table, 2)

        map_buttons = QHBoxLayout()
        self.add_button = QPushButton("Add metric")
        self.add_button.clicked.connect(lambda: self.add_mapping_row(None))
        self.remove_button = QPushButton("Remove metric")
        self.remove_button.clicked.connect(self.remove_mapping_rows)
        self.read_button = QPushButton("Read history")
        self.read_button.setDefault(True)
        self.read_button.clicked.connect(self.read)
        map_buttons.addWidget(self.add_button)
        map_buttons.addWidget(self.remove_button)
        map_buttons.addStretch(1)
        map_buttons.addWidget(self.read_button)
        layout.addLayout(map_buttons)

        progress_row = QHBoxLayout()
        self.progress = QProgressBar()
        self.progress.setRange(0, 1000)
        self.progress.setTextVisible(False)
        progress_row.addWidget(self.progress, 1)
        self.speed_label = QLabel("")
        self.speed_label.setMinimumWidth(220)
        progress_row.addWidget(self.speed_label)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.clicked.connect(self.cancel_reading)
        progress_row.addWidget(self.cancel_button)
        layout.addLayout(progress_row)

        layout.addWidget(self._results_header())
        self.reach_label = QLabel("")
        self.reach_label.setWordWrap(True)
        self.reach_label.setVisible(False)
        layout.addWidget(self.reach_label)
        layout.addWidget(self._plan_traffic_row())
        self.result_table = QTableWidget(0, len(RESULT_COLUMNS))
        self.result_table.setHorizontalHeaderLabels(RESULT_COLUMNS)
        header = self.result_table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(len(RESULT_COLUMNS) - 1, QHeaderView.ResizeMode.Stretch)
        self.result_table.verticalHeader().setVisible(False)
        self.result_table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        layout.addWidget(self.result_table, 2)

        self.status = QLabel("")
        self.status.setWordWrap(True)
        self.status.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        layout.addWidget(self.status)

        bottom = QHBoxLayout()
        bottom.addStretch(1)
        self.apply_button = QPushButton("Apply to plan")
        self.apply_button.clicked.connect(self.apply_to_plan)
        self.close_button = QPushButton("Close")
        self.close_button.clicked.connect(self.reject)
        bottom.addWidget(self.apply_button)
        bottom.addWidget(self.close_button)
        layout.addLayout(bottom)

    def _file_tab(self) -> QFrame:
        tab = QFrame()
        tab.setFrameShape(QFrame.Shape.StyledPanel)
        row = QHBoxLayout(tab)
        row.addWidget(QLabel("File:"))
        self.path_edit = QLineEdit()
        self.path_edit.setReadOnly(True)
        self.path_edit.setPlaceholderText("choose a file of one row per unit")
        row.addWidget(self.path_edit, 1)
        self.choose_button = QPushButton("Choose…")
        self.choose_button.clicked.connect(self.choose_file)
        row.addWidget(self.choose_button)
        row.addWidget(QLabel("Read with:"))
        self.engine_box = QComboBox()
        self.engine_box.addItems(list(ENGINES))
        self.engine_box.setToolTip("DuckDB (optional extra 'duckdb') runs the same query over "
                                   "the file; automatic takes it for a Parquet file's "
                                   "figures, and the streaming reader, which checks every "
                                   "line, otherwise")
        row.addWidget(self.engine_box)
        row.setContentsMargins(6, 6, 6, 6)
        return tab

    def _source_changed(self, index: int) -> None:
        for page_index, page in enumerate(self.source_pages):
            page.setVisible(page_index == index)
        self._update_buttons()

    # -- file --------------------------------------------------------------------------

    def choose_file(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Choose a history file", "", FILE_FILTER)
        if path:
            self.open_path(path)

    def open_path(self, path: str) -> bool:
        """Read the file's columns and start from a guessed mapping; False on a bad file."""
        try:
            columns, mapping = guess_mapping(path)
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return False
        try:
            unit, time = guess_units(path, mapping)
        except FourfoldError:
            unit = time = None
        self.path_edit.setText(str(path))
        self.columns = columns
        self._fill_unit_choices(columns, unit, time)
        self.map_table.setRowCount(0)
        for spec in mapping:
            self.add_mapping_row(spec)
        self._clear_results()
        found = f" Rows are visits of {unit!r} over {time!r}." if unit else ""
        self.show_status(f"{len(columns)} columns; {len(mapping)} mapped as a first guess."
                         f"{found} Set a ratio's denominator, pre-period columns and caps as "
                         "needed.")
        self._update_buttons()
        return True

    # -- reading on the worker thread ----------------------------------------------------

    @property
    def reading(self) -> bool:
        return self._thread is not None

    def read(self) -> None:
        """The Read button: the file on a worker thread, or the pasted query result."""
        if self.source_tabs.currentIndex() == 1:
            self.read_result()
        else:
            self.start_reading()

    def start_reading(self) -> None:
        """Read the chosen file on the worker thread."""
        try:
            mapping = self.mapping()
            unit, time_column = self.units()
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        if not mapping:
            self.show_status("Map at least one column to a metric.", error=True)
            return
        engine = ENGINES[self.engine_box.currentText()]
        job = FileJob(self.path_edit.text(), mapping, engine=engine, unit=unit,
                      time=time_column)
        self.start_job(job, "Reading the history file…")

    def start_job(self, job, message: str) -> None:
        """Run a reading job (file or warehouse) on the worker thread."""
        if self.reading:
            return
        self._clear_results()
        self._stop.clear()
        self._started = time.monotonic()
        self.progress.setValue(0)
        self.speed_label.setText("starting…")
        self.show_status(message)
        thread = QThread(self)
        worker = HistoryWorker(job, self._stop)
        self._job = job
        worker.moveToThread(thread)
        thread.started.connect(worker.run)
        worker.progress.connect(self._on_progress)
        worker.finished.connect(self._on_finished)
        worker.failed.connect(self._on_failed)
        worker.cancelled.connect(self._on_cancelled)
        for signal in (worker.finished, worker.failed, worker.cancelled):
            # Direct: quit from the worker thread, so a main thread blocked in wait() wakes.
            signal.connect(thread.quit, Qt.ConnectionType.DirectConnection)
        thread.finished.connect(self._on_thread_done)
        self._thread, self._worker = thread, worker
        self._update_buttons()
        thread.start()

    def cancel_reading(self) -> None:
        """Stop the import (after the chunk being read, or the query); nothing is applied."""
        if self.reading:
            self._stop.set()
            if self._job is not None:
                self._job.cancel()
            self.show_status("Cancelling…")

    def wait(self, timeout_ms: int = 30_000) -> bool:
        """Wait for the worker thread to end (tests and closing); True when it ended."""
        if self._thread is None:
            return True
        return self._thread.wait(timeout_ms)

    @Slot(float, int)
    def _on_progress(self, fraction: float, rows: int) -> None:
        self.progress.setValue(int(round(1000 * min(max(fraction, 0.0), 1.0))))
        elapsed = max(time.monotonic() - self._started, 1e-6)
        if rows:
            self.speed_label.setText(f"{rows:,} rows read · {rate_text(rows, elapsed)}")
        else:
            self.speed_label.setText(f"{100 * fraction:.0f} % · {elapsed:.1f} s")

    @Slot(object)
    def _on_finished(self, summary: HistorySummary) -> None:
        self.summary = summary
        self.progress.setValue(1000)
        elapsed = max(time.monotonic() - self._started, 1e-6)
        self.speed_label.setText(f"{summary.rows:,} rows in {elapsed:.2f} s")
        self._fill_windows(summary)
        self._fill_results(summary)
        self.show_status(f"Read {summary.rows:,} rows. Choose a plan row for each metric "
                         "(or a new row) and apply; one Undo takes it back.")

    @Slot(str)
    def _on_failed(self, message: str) -> None:
        self.progress.setValue(0)
        self.speed_label.setText("")
        self.show_status(message, error=True)

    @Slot()
    def _on_cancelled(self) -> None:
        self.progress.setValue(0)
        self.speed_label.setText("")
        self.show_status("Cancelled: nothing was read into the plan.")

    @Slot()
    def _on_thread_done(self) -> None:
        if self._thread is not None:
            self._thread.deleteLater()
        if self._worker is not None:
            self._worker.deleteLater()
        self._thread = self._worker = self._job = None
        self.progress.setRange(0, 1000)
        self._update_buttons()

    # -- state ---------------------------------------------------------------------------

    def show_status(self, text: str, *, error: bool = False) -> None:
        self.status.setText(text)
        self.status.setProperty("error", error)
        self.status.setStyleSheet("color: #b3261e;" if error else "")

    def _update_buttons(self, *_args) -> None:
        busy = self.reading
        warehouse = self.source_tabs.currentIndex() == 1
        ready = bool(self.result_edit.toPlainText().strip()) if warehouse else bool(
            self.path_edit.text())
        for widget in (self.source_tabs, *self.source_pages, self.add_button, self.remove_button,
                       self.map_table, self.unit_box, self.time_box):
            widget.setEnabled(not busy)
        self.read_button.setText("Read query result" if warehouse else "Read history file")
        self.read_button.setEnabled(not busy and ready and self.map_table.rowCount() > 0)
        self.cancel_button.setEnabled(busy)
        self.apply_button.setEnabled(not busy and self.summary is not None)
        self.run_button.setEnabled(not busy and bool(self.url_edit.text().strip())
                                   and self.map_table.rowCount() > 0)

    def done(self, result: int) -> None:
        """Close (also Esc): a running import is stopped first; the plan is left as it was."""
        if self.reading:
            self._stop.set()
            self.wait()
        super().done(result)
