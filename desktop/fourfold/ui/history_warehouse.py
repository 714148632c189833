"""The history dialog's warehouse page: the SQL to run there, and reading its pasted result.

For a history too large to export, the query written here (:func:`fourfold.history.warehouse
.warehouse_sql`) computes the moments in the warehouse; its few result lines are pasted back
or loaded from a file and read like a history file's summary.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QFontDatabase, QGuiApplication
from PySide6.QtWidgets import (
    QFileDialog,
    QFrame,
    QGridLayout,
    QLabel,
    QLineEdit,
    QPlainTextEdit,
    QPushButton,
)

from fourfold.errors import FourfoldError
from fourfold.history import HistoryError
from fourfold.history.warehouse import read_warehouse_result, warehouse_sql

RESULT_LIMIT = 1 << 20


class HistoryWarehouse:
    """The warehouse page of :class:`fourfold.ui.history_dialog.HistoryDialog`."""

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
