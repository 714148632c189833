"""Plan → Import history…: baselines and variances from a per-unit history file.

The dialog maps file columns to metrics (kind, ratio denominator, pre-period column, cap),
reads the file on a worker thread with a progress bar, a rows-per-second figure and Cancel,
shows what it found per metric, and applies it to new or existing metric rows as one undoable
command. All the reading and statistics are :func:`fourfold.history.read_history`'s; this
module only collects choices and shows results. Cancel or a bad file leaves the plan as it was.
"""

from __future__ import annotations

import math
import threading
import time
from pathlib import Path

from PySide6.QtCore import QObject, Qt, QThread, Signal, Slot
from PySide6.QtGui import QFontDatabase, QGuiApplication
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDialog,
    QFileDialog,
    QFrame,
    QGridLayout,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPlainTextEdit,
    QProgressBar,
    QPushButton,
    QTabBar,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from fourfold.errors import FourfoldError
from fourfold.history import (
    HISTORY_KINDS,
    ColumnMap,
    HistoryCancelled,
    HistoryError,
    HistorySummary,
    read_history,
)
from fourfold.history.guess import guess_mapping
from fourfold.history.text import number
from fourfold.history.warehouse import read_warehouse_result, warehouse_sql
from fourfold.plan import Metric
from fourfold.plan.commands import InsertMetrics, SetFields

NONE = "—"
NEW_ROW = "new row"
CAP_CHOICES = ("no cap", "99", "99.5", "99.9", "99.99")
MAP_COLUMNS = ("Column", "Kind", "Denominator", "Pre-period", "Cap at percentile")
RESULT_COLUMNS = ("Metric", "n", "Missing", "Mean", "sd", "ρ", "Cap value", "Capped",
                  "Variance ×", "Plan row")
CHUNK_ROWS = 50_000  # short chunks keep the progress bar and Cancel lively
RESULT_LIMIT = 1 << 20
FILE_FILTER = "History files (*.csv *.parquet *.pq);;CSV (*.csv);;All files (*)"


class _Worker(QObject):
    """Runs :func:`read_history` on the worker thread and reports through signals."""

    progress = Signal(float, int)
    finished = Signal(object)
    failed = Signal(str)
    cancelled = Signal()

    def __init__(self, path: str, mapping: list[ColumnMap], stop: threading.Event) -> None:
        super().__init__()
        self.path, self.mapping, self.stop = path, mapping, stop

    @Slot()
    def run(self) -> None:
        try:
            summary = read_history(self.path, self.mapping, chunk_rows=CHUNK_ROWS,
                                   progress=self.progress.emit, cancel=self.stop.is_set)
        except HistoryCancelled:
            self.cancelled.emit()
        except FourfoldError as error:
            self.failed.emit(str(error))
        except (OSError, MemoryError) as error:
            self.failed.emit(f"{Path(self.path).name}: {error}")
        except Exception as error:  # a bug, but the thread must still end and say so
            self.failed.emit(f"internal error while reading {Path(self.path).name}: {error!r}")
        else:
            self.finished.emit(summary)


def _combo(items, current: str | None = None, editable: bool = False) -> QComboBox:
    box = QComboBox()
    box.addItems(list(items))
    box.setEditable(editable)
    if current is not None:
        box.setCurrentText(current)
    return box


def _display_name(name: str) -> str:
    return name.replace(":", " / ")


class HistoryDialog(QDialog):
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
        self.resize(1000, 780)
        self.columns: list[str] = []
        self.summary: HistorySummary | None = None
        self._thread: QThread | None = None
        self._worker: _Worker | None = None
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
            "Fill in baselines, standard deviations and the pre-period correlation ρ from one "
            "row per unit of a pre-period: read a file (CSV, or Parquet with pyarrow), or run "
            "the query written here in your warehouse and paste its result."
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

        layout.addWidget(QLabel("What the history says (check before applying):"))
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
        row.setContentsMargins(6, 6, 6, 6)
        return tab

    def _warehouse_tab(self) -> QFrame:
        tab = QFrame()
        tab.setFrameShape(QFrame.Shape.StyledPanel)
        grid = QGridLayout(tab)
        grid.addWidget(QLabel("Table:"), 0, 0)
        self.table_edit = QLineEdit()
        self.table_edit.setPlaceholderText("schema.table")
        grid.addWidget(self.table_edit, 0, 1)
        grid.addWidget(QLabel("One result row per (optional):"), 0, 2)
        self.partition_edit = QLineEdit()
        self.partition_edit.setPlaceholderText("a partition column, e.g. day")
        grid.addWidget(self.partition_edit, 0, 3)
        self.sql_button = QPushButton("Write SQL")
        self.sql_button.clicked.connect(self.write_sql)
        grid.addWidget(self.sql_button, 0, 4)
        self.copy_button = QPushButton("Copy SQL")
        self.copy_button.clicked.connect(
            lambda: QGuiApplication.clipboard().setText(self.sql_view.toPlainText()))
        grid.addWidget(self.copy_button, 0, 5)
        mono = QFontDatabase.systemFont(QFontDatabase.SystemFont.FixedFont)
        self.sql_view = QPlainTextEdit()
        self.sql_view.setReadOnly(True)
        self.sql_view.setFont(mono)
        self.sql_view.setPlaceholderText("the query for the columns below appears here")
        grid.addWidget(self.sql_view, 1, 0, 1, 6)
        self.result_edit = QPlainTextEdit()
        self.result_edit.setFont(mono)
        self.result_edit.setPlaceholderText(
            "paste the query's result here: the header line and one row per partition")
        grid.addWidget(self.result_edit, 2, 0, 1, 5)
        self.result_file_button = QPushButton("Load result…")
        self.result_file_button.clicked.connect(self.load_result_file)
        grid.addWidget(self.result_file_button, 2, 5, Qt.AlignmentFlag.AlignTop)
        for box in (self.sql_view, self.result_edit):
            box.setMaximumHeight(96)
            box.setLineWrapMode(QPlainTextEdit.LineWrapMode.NoWrap)
        self.result_edit.textChanged.connect(self._update_buttons)
        return tab

    def _source_changed(self, index: int) -> None:
        for page_index, page in enumerate(self.source_pages):
            page.setVisible(page_index == index)
        for widget in (self.progress, self.speed_label, self.cancel_button):
            widget.setVisible(index == 0)
        self._update_buttons()

    # -- warehouse -----------------------------------------------------------------------

    def write_sql(self) -> bool:
        """Show the query for the current mapping and table; False (and a message) if none."""
        try:
            sql = warehouse_sql(self.mapping(), self.table_edit.text().strip(),
                                group_by=self.partition_edit.text().strip() or None)
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return False
        self.sql_view.setPlainText(sql)
        self.show_status("Run the query in the warehouse, then paste its result below.")
        return True

    def load_result_file(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Choose a saved query result", "",
                                              "Query results (*.csv *.tsv *.txt);;All files (*)")
        if not path:
            return
        try:
            size = Path(path).stat().st_size
            if size > RESULT_LIMIT:
                raise HistoryError(f"{Path(path).name}: a query result should be a few lines")
            self.result_edit.setPlainText(Path(path).read_text(encoding="utf-8-sig"))
        except (OSError, UnicodeDecodeError) as error:
            self.show_status(f"{Path(path).name}: cannot be read ({error})", error=True)
        except FourfoldError as error:
            self.show_status(str(error), error=True)

    def read_result(self) -> None:
        """Read the pasted query result into the results table (instant: a few lines)."""
        self._clear_results()
        try:
            summary = read_warehouse_result(self.result_edit.toPlainText(), self.mapping())
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        self.summary = summary
        self._fill_results(summary)
        self.show_status(f"The result covers {summary.rows:,} rows. Choose a plan row for each "
                         "metric (or a new row) and apply; one Undo takes it back.")

    # -- file and mapping ----------------------------------------------------------------

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
        self.path_edit.setText(str(path))
        self.columns = columns
        self.map_table.setRowCount(0)
        for spec in mapping:
            self.add_mapping_row(spec)
        self._clear_results()
        self.show_status(f"{len(columns)} columns; {len(mapping)} mapped as a first guess. "
                         "Set a ratio's denominator, pre-period columns and caps as needed.")
        self._update_buttons()
        return True

    def add_mapping_row(self, spec: ColumnMap | None) -> None:
        row = self.map_table.rowCount()
        self.map_table.insertRow(row)
        choices = self.columns or [""]
        column = _combo(choices, spec.column if spec else None, editable=True)
        kind = _combo(HISTORY_KINDS, spec.kind if spec else "mean")
        denominator = _combo([NONE, *self.columns], spec.denominator if spec else NONE,
                             editable=True)
        pre = _combo([NONE, *self.columns], spec.pre if spec and spec.pre else NONE,
                     editable=True)
        cap = _combo(CAP_CHOICES, f"{spec.cap:g}" if spec and spec.cap else CAP_CHOICES[0],
                     editable=True)
        for index, widget in enumerate((column, kind, denominator, pre, cap)):
            self.map_table.setCellWidget(row, index, widget)
            if isinstance(widget, QComboBox):
                widget.currentTextChanged.connect(self._mapping_changed)
        self._mapping_changed()

    def remove_mapping_rows(self) -> None:
        rows = sorted({index.row() for index in self.map_table.selectedIndexes()}, reverse=True)
        if not rows and self.map_table.rowCount():
            rows = [self.map_table.rowCount() - 1]
        for row in rows:
            self.map_table.removeRow(row)
        self._mapping_changed()

    def _mapping_changed(self, *_args) -> None:
        for row in range(self.map_table.rowCount()):
            ratio = self._cell_text(row, 1) == "ratio"
            self.map_table.cellWidget(row, 2).setEnabled(ratio)
            self.map_table.cellWidget(row, 3).setEnabled(not ratio)
            self.map_table.cellWidget(row, 4).setEnabled(self._cell_text(row, 1) != "proportion")
        self._update_buttons()

    def _cell_text(self, row: int, column: int) -> str:
        widget = self.map_table.cellWidget(row, column)
        return widget.currentText().strip() if widget is not None else ""

    def mapping(self) -> list[ColumnMap]:
        """The mapping as the table shows it; HistoryError naming the line at fault."""
        specs = []
        for row in range(self.map_table.rowCount()):
            kind = self._cell_text(row, 1)
            denominator = self._cell_text(row, 2) if kind == "ratio" else NONE
            pre = self._cell_text(row, 3) if kind != "ratio" else NONE
            cap_text = self._cell_text(row, 4) if kind != "proportion" else CAP_CHOICES[0]
            cap = None
            if cap_text and cap_text != CAP_CHOICES[0]:
                try:
                    cap = float(cap_text.rstrip("%").replace(",", "."))
                except ValueError:
                    raise HistoryError(
                        f"metric line {row + 1}: the cap must be a percentile such as 99.9, "
                        f"not {cap_text!r}"
                    ) from None
            if kind == "ratio" and denominator == NONE:
                raise HistoryError(f"metric line {row + 1}: choose the ratio's denominator")
            specs.append(ColumnMap(
                kind, self._cell_text(row, 0),
                denominator=None if denominator == NONE else denominator,
                pre=None if pre == NONE else pre, cap=cap,
            ))
        return specs

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
        if self.reading:
            return
        try:
            mapping = self.mapping()
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        if not mapping:
            self.show_status("Map at least one column to a metric.", error=True)
            return
        self._clear_results()
        self._stop.clear()
        self._started = time.monotonic()
        self.progress.setValue(0)
        self.speed_label.setText("starting…")
        self.show_status("Reading the history file…")
        thread = QThread(self)
        worker = _Worker(self.path_edit.text(), mapping, self._stop)
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
        """Stop the import after the chunk being read; nothing is applied."""
        if self.reading:
            self._stop.set()
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
        self.speed_label.setText(f"{rows:,} rows read · {rate_text(rows, elapsed)}")

    @Slot(object)
    def _on_finished(self, summary: HistorySummary) -> None:
        self.summary = summary
        self.progress.setValue(1000)
        elapsed = max(time.monotonic() - self._started, 1e-6)
        self.speed_label.setText(f"{summary.rows:,} rows in {elapsed:.2f} s")
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
        self._thread = self._worker = None
        self._update_buttons()

    # -- results and applying ------------------------------------------------------------

    def _clear_results(self) -> None:
        self.summary = None
        self.result_table.setRowCount(0)
        self._update_buttons()

    def _fill_results(self, summary: HistorySummary) -> None:
        names = [metric.name for metric in self.document.plan.metrics]
        self.result_table.setRowCount(len(summary.metrics))
        for row, metric in enumerate(summary.metrics):
            cap = metric.cap
            cells = [
                f"{_display_name(metric.name)} ({metric.kind})",
                f"{metric.n:,}",
                f"{metric.missing:,}",
                number(metric.mean),
                "–" if metric.kind == "proportion" else number(metric.sd),
                number(metric.rho, 3),
                "–" if cap is None else number(cap.threshold) + ("" if cap.exact else " ≈"),
                "–" if cap is None else f"{cap.capped:,}",
                "–" if cap is None else number(cap.variance_ratio(metric.sd), 3),
            ]
            for column, text in enumerate(cells):
                item = QTableWidgetItem(text)
                if column:
                    item.setTextAlignment(Qt.AlignmentFlag.AlignRight
                                          | Qt.AlignmentFlag.AlignVCenter)
                if cap is not None and column >= 6:
                    item.setToolTip(
                        f"sd {number(cap.sd_uncapped)} → {number(metric.sd)}; mean "
                        f"{number(cap.mean_uncapped)} → {number(metric.mean)}"
                    )
                self.result_table.setItem(row, column, item)
            target = _combo([NEW_ROW, *names])
            target.currentTextChanged.connect(self._update_buttons)
            self.result_table.setCellWidget(row, len(RESULT_COLUMNS) - 1, target)
        self._update_buttons()

    def targets(self) -> list[int | None]:
        """The plan row each result goes to (None: a new row), in result order."""
        out: list[int | None] = []
        for row in range(self.result_table.rowCount()):
            box = self.result_table.cellWidget(row, len(RESULT_COLUMNS) - 1)
            index = box.currentIndex()
            out.append(None if index <= 0 else index - 1)
        return out

    def set_target(self, result_row: int, plan_row: int | None) -> None:
        """Send one result to a plan row (None: a new row)."""
        box = self.result_table.cellWidget(result_row, len(RESULT_COLUMNS) - 1)
        box.setCurrentIndex(0 if plan_row is None else plan_row + 1)

    def command(self):
        """The one command that applies the results; HistoryError when targets are mixed."""
        if self.summary is None:
            raise HistoryError("read the history file first")
        targets = self.targets()
        source = Path(self.summary.source).name
        if all(target is None for target in targets):
            metrics = []
            for metric in self.summary.metrics:
                fields = metric.plan_fields()
                metrics.append(Metric(name=_display_name(metric.name)[:200],
                                      notes=f"{metric.describe()} ({source})", **fields))
            command = InsertMetrics(len(self.document.plan.metrics), metrics)
            command.text = f"Import history into {len(metrics)} new rows"
            return command
        if any(target is None for target in targets):
            raise HistoryError(
                "send every metric to an existing row, or every metric to a new row, so that "
                "one Undo takes the import back"
            )
        if len(set(targets)) != len(targets):
            raise HistoryError("two metrics are sent to the same plan row")
        edits = [
            (target, field, value)
            for metric, target in zip(self.summary.metrics, targets, strict=True)
            for field, value in metric.plan_fields().items()
        ]
        return SetFields(edits, text=f"Import history into {len(targets)} rows")

    def apply_to_plan(self) -> None:
        try:
            command = self.command()
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        if self.document.apply(command):
            self.accept()
        else:
            self.show_status("The plan refused the values; nothing was changed.", error=True)

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
                       self.map_table):
            widget.setEnabled(not busy)
        self.read_button.setText("Read query result" if warehouse else "Read history file")
        self.read_button.setEnabled(not busy and ready and self.map_table.rowCount() > 0)
        self.cancel_button.setEnabled(busy)
        self.apply_button.setEnabled(not busy and self.summary is not None)

    def done(self, result: int) -> None:
        """Close (also Esc): a running import is stopped first; the plan is left as it was."""
        if self.reading:
            self._stop.set()
            self.wait()
        super().done(result)


def rate_text(rows: int, seconds: float) -> str:
    """Rows per second as shown under the progress bar.

    Examples
    --------
    >>> rate_text(1_000_000, 0.5)
    '2,000,000 rows/s'
    """
    if not seconds > 0 or not math.isfinite(seconds):
        return ""
    return f"{rows / seconds:,.0f} rows/s"
