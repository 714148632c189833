"""Plan → Check by simulation: the dialog that runs the check and stores its result.

One row (optionally bootstrapped from a column of a history file) or the whole plan is
simulated in a worker thread, with a progress bar, the time left and Cancel. When the run
ends the checks are stored in the rows' ``simulation`` field as one undoable edit; a
cancelled or failed run stores nothing. The statistics live in :mod:`fourfold.simulation`.
"""

from __future__ import annotations

import html
import time

import numpy as np
from PySide6.QtCore import QThread, Signal, Slot
from PySide6.QtWidgets import (
    QCheckBox,
    QComboBox,
    QDialog,
    QFileDialog,
    QFormLayout,
    QFrame,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QProgressBar,
    QPushButton,
    QSpinBox,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from fourfold.errors import FourfoldError
from fourfold.plan import dumps
from fourfold.plan.commands import SetFields
from fourfold.ui import theme
from fourfold.ui.simulation_worker import SimulationJob, remaining_text, start_in_thread

REPS_RANGE = (100, 200_000)
HISTORY_FILTER = "History files (*.csv *.parquet *.pq);;All files (*)"
EFFECT_CHOICES = (("Shift every value by the effect", "shift"),
                  ("Scale every value (a lift)", "lift"))


def read_history_column(path, column):
    """The numbers of one column of a history file (missing cells dropped).

    Raises
    ------
    FourfoldError
        When the file cannot be read, a cell is not a number, or fewer than 2 numbers remain.
    """
    from fourfold.history.reader import iter_chunks, numbers

    parts = []
    for chunk in iter_chunks(path, [column], 250_000):
        values = numbers(chunk.columns[column], column, proportion=False, path=path,
                         start=chunk.start)
        parts.append(values[~np.isnan(values)])
    values = np.concatenate(parts) if parts else np.empty(0)
    if values.size < 2:
        raise FourfoldError(f"column {column!r} has fewer than 2 numbers to bootstrap from")
    return values


class SimulationDialog(QDialog):
    """Check rows of the open plan by simulation.

    Parameters
    ----------
    document : fourfold.ui.document.PlanDocument
        The open plan; results are applied with ``document.apply`` (one undo step).
    rows : list of int or None
        The rows to check; None checks the whole plan.

    Signals
    -------
    ended(str)
        ``"finished"``, ``"cancelled"`` or ``"failed"`` when a run is over.
    """

    ended = Signal(str)

    def __init__(self, document, rows=None, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.rows = None if rows is None else sorted(rows)
        self.outcome = None
        self._thread: QThread | None = None
        self._job: SimulationJob | None = None
        self._snapshot = ""
        self._started = 0.0
        self._columns_of = ""
        self.setObjectName("simulationDialog")
        self.setWindowTitle("Check by simulation")
        self.resize(640, 420)
        self._build()
        self._update_buttons()

    # -- layout --------------------------------------------------------------------------

    def _names(self) -> list[str]:
        metrics = self.document.plan.metrics
        rows = range(len(metrics)) if self.rows is None else self.rows
        return [metrics[row].name for row in rows if 0 <= row < len(metrics)]

    def _build(self) -> None:
        layout = QVBoxLayout(self)
        names = self._names()
        if self.rows is None:
            what = f"all {len(names)} rows of the plan"
        else:
            what = ", ".join(f"“{name}”" for name in names) or "the selected row"
        intro = QLabel(
            f"Simulate the experiment for {html.escape(what)} many times and run its final "
            "test on every replicate (Welch's t for means, the two-sample z-test for "
            "proportions and rates, the group-sequential boundaries with interim looks). The "
            "share of replicates that reject H0 is the simulated power, shown with its 95 % "
            "interval beside the closed form; the same run under H0 gives the false-positive "
            "rate.")
        intro.setWordWrap(True)
        layout.addWidget(intro)

        form = QFormLayout()
        self.reps_box = QSpinBox()
        self.reps_box.setRange(*REPS_RANGE)
        self.reps_box.setSingleStep(1000)
        self.reps_box.setValue(2000)
        self.reps_box.setGroupSeparatorShown(True)
        self.reps_box.setToolTip("Replicates per scenario; the interval narrows like "
                                 "1/√replicates.")
        form.addRow("Replicates:", self.reps_box)
        self.seed_box = QSpinBox()
        self.seed_box.setRange(0, 2**31 - 1)
        self.seed_box.setToolTip("The same seed and replicates give the same result.")
        form.addRow("Seed:", self.seed_box)
        layout.addLayout(form)

        self.history_check = QCheckBox("Bootstrap from a history file instead of the "
                                       "normal model")
        self.history_check.setToolTip("Resample the metric's historical per-unit values, so "
                                      "skew and heavy tails are simulated as they are.")
        self.history_path = QLineEdit()
        self.history_path.setPlaceholderText("CSV or Parquet file, one row per unit")
        self.history_path.editingFinished.connect(self._fill_columns)
        self.browse_button = QPushButton("Browse…")
        self.browse_button.clicked.connect(self._browse)
        self.column_box = QComboBox()
        self.effect_box = QComboBox()
        for label, value in EFFECT_CHOICES:
            self.effect_box.addItem(label, value)
        self.history_widgets = QWidget()
        history_layout = QFormLayout(self.history_widgets)
        history_layout.setContentsMargins(18, 0, 0, 0)
        file_row = QHBoxLayout()
        file_row.addWidget(self.history_path, 1)
        file_row.addWidget(self.browse_button)
        history_layout.addRow("File:", file_row)
        history_layout.addRow("Column:", self.column_box)
        history_layout.addRow("Effect:", self.effect_box)
        self.history_check.toggled.connect(self._update_buttons)
        can_bootstrap = self.rows is not None and len(self.rows) == 1 and any(
            self.document.plan.metrics[row].kind in ("mean", "rate", "quantile")
            for row in self.rows
            if 0 <= row < len(self.document.plan.metrics))
        self.history_check.setVisible(can_bootstrap)
        self.history_widgets.setVisible(can_bootstrap)
        layout.addWidget(self.history_check)
        layout.addWidget(self.history_widgets)

        self.progress = QProgressBar()
        self.progress.setRange(0, 1)
        self.progress.setValue(0)
        layout.addWidget(self.progress)
        self.time_label = QLabel("")
        layout.addWidget(self.time_label)
        self.results = QTextBrowser()
        self.results.setOpenLinks(False)
        self.results.setFrameShape(QFrame.Shape.NoFrame)
        layout.addWidget(self.results, 1)

        buttons = QHBoxLayout()
        buttons.addStretch(1)
        self.run_button = QPushButton("Run")
        self.run_button.setDefault(True)
        self.run_button.clicked.connect(self.start)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.clicked.connect(self.cancel)
        self.close_button = QPushButton("Close")
        self.close_button.clicked.connect(self.reject)
        for button in (self.run_button, self.cancel_button, self.close_button):
            buttons.addWidget(button)
        layout.addLayout(buttons)

    def _browse(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "History file", self.history_path.text(),
                                              HISTORY_FILTER)
        if path:
            self.history_path.setText(path)
            self._fill_columns()

    def _fill_columns(self) -> None:
        from fourfold.history.reader import read_columns

        path = self.history_path.text().strip()
        if path == self._columns_of:
            return
        self._columns_of = path
        self.column_box.clear()
        if not path:
            return
        try:
            columns = read_columns(path)
        except (FourfoldError, OSError) as error:
            self.show_status(str(error), error=True)
            return
        self.column_box.addItems(columns)
        self.show_status(f"{len(columns)} columns; choose the one holding this metric.")

    # -- running -------------------------------------------------------------------------

    @property
    def running(self) -> bool:
        """Whether a simulation is in progress."""
        return self._thread is not None

    def _update_buttons(self) -> None:
        busy = self.running
        self.run_button.setEnabled(not busy)
        self.cancel_button.setEnabled(busy)
        self.close_button.setEnabled(not busy)
        for widget in (self.reps_box, self.seed_box, self.history_check):
            widget.setEnabled(not busy)
        self.history_widgets.setEnabled(not busy and self.history_check.isChecked())

    def show_status(self, text: str, error: bool = False) -> None:
        """Show a line under the progress bar (in the problem colour for an error)."""
        colour = theme.tints().problem.name() if error else ""
        style = f"color: {colour};" if colour else ""
        self.time_label.setStyleSheet(style)
        self.time_label.setText(text)

    def _history_loader(self):
        if not self.history_check.isChecked():
            return None
        path = self.history_path.text().strip()
        column = self.column_box.currentText()
        if not path or not column:
            raise FourfoldError("choose a history file and the column holding this metric")
        return lambda: read_history_column(path, column)

    def start(self) -> None:
        """Start the simulation with the chosen replicates and seed."""
        if self.running:
            return
        try:
            loader = self._history_loader()
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        self.outcome = None
        self.results.clear()
        self._snapshot = dumps(self.document.plan)
        self._started = time.monotonic()
        self.progress.setRange(0, 1)
        self.progress.setValue(0)
        self.show_status(remaining_text(0.0, 0, 1))
        job = SimulationJob(self.document.plan, self.rows, reps=self.reps_box.value(),
                            seed=self.seed_box.value(), load_history=loader,
                            history_effect=self.effect_box.currentData())
        job.progressed.connect(self._on_progress)
        job.finished.connect(self._on_finished)
        job.failed.connect(self._on_failed)
        job.cancelled.connect(self._on_cancelled)
        self._job = job
        self._thread = start_in_thread(job, self)
        self._thread.finished.connect(self._on_thread_done)
        self._update_buttons()

    def cancel(self) -> None:
        """Stop the run after the current chunk of replicates; nothing is stored."""
        if self._job is not None:
            self._job.cancel()
            self.show_status("Cancelling…")

    def wait(self, timeout_ms: int = 30_000) -> bool:
        """Wait for the worker thread to end (closing and tests); True when it ended."""
        if self._thread is None:
            return True
        return self._thread.wait(timeout_ms)

    @Slot(int, int)
    def _on_progress(self, done: int, total: int) -> None:
        self.progress.setRange(0, max(total, 1))
        self.progress.setValue(done)
        self.show_status(remaining_text(time.monotonic() - self._started, done, total))

    @Slot(object)
    def _on_finished(self, outcome) -> None:
        elapsed = time.monotonic() - self._started
        if self._job is None or self._job.stopping:
            self._on_cancelled()
            return
        self.progress.setValue(self.progress.maximum())
        if dumps(self.document.plan) != self._snapshot:
            self.show_status("The plan changed while the simulation ran; nothing was stored. "
                             "Run the check again.", error=True)
            self.ended.emit("failed")
            return
        self.outcome = outcome
        self._show_outcome(outcome)
        edits = outcome.edits()
        if edits:
            text = ("Check whole plan by simulation" if self.rows is None
                    else "Check by simulation")
            self.document.apply(SetFields(edits, text=text))
        flagged = sum(check["verdict"] in ("below", "above") for _, check in outcome.checks)
        summary = (f"Checked {len(outcome.checks)} row(s) by simulation in {elapsed:.1f} s"
                   + (f"; {flagged} disagree with the closed form" if flagged else "")
                   + (f"; {len(outcome.skipped)} skipped" if outcome.skipped else "")
                   + ". Undo removes the check.")
        self.show_status(summary)
        self.document.message.emit(summary)
        self.ended.emit("finished")

    def _show_outcome(self, outcome) -> None:
        tints = theme.tints()
        names = [metric.name for metric in self.document.plan.metrics]
        parts = []
        for row, check in outcome.checks:
            colour = tints.problem.name() if check["verdict"] in ("below", "above") else ""
            style = f' style="color:{colour}"' if colour else ""
            parts.append(f"<p{style}><b>{html.escape(names[row])}</b> · "
                         f"{html.escape(check['model'])}, {html.escape(check['test'])}: "
                         f"{html.escape(check['message'])}</p>")
        for _row, reason in outcome.skipped:
            parts.append(f'<p style="color:{tints.muted.name()}">Skipped: '
                         f"{html.escape(reason)}</p>")
        self.results.setHtml("".join(parts))

    @Slot(str)
    def _on_failed(self, message: str) -> None:
        self.progress.setValue(0)
        self.show_status(f"Not simulated: {message}", error=True)
        self.ended.emit("failed")

    @Slot()
    def _on_cancelled(self) -> None:
        self.progress.setValue(0)
        self.show_status("Cancelled: nothing was stored in the plan.")
        self.ended.emit("cancelled")

    @Slot()
    def _on_thread_done(self) -> None:
        if self._thread is not None:
            self._thread.deleteLater()
        if self._job is not None:
            self._job.deleteLater()
        self._thread = self._job = None
        self._update_buttons()

    def done(self, result: int) -> None:
        """Close (also Esc): a running simulation is cancelled first and stores nothing."""
        if self.running:
            self._job.cancel()
            self.wait()
        super().done(result)
