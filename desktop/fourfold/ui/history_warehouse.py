"""The history dialog's warehouse page: the SQL to run there, in its dialect; running it over a
connection; and reading a pasted result.

For a history too large to export, the query written here (:func:`fourfold.history.warehouse
.warehouse_sql`, a sqlglot tree in the chosen dialect) computes the moments in the warehouse;
its few result lines are pasted back or loaded from a file and read like a history file's
summary. With a connection URL (SQLAlchemy, optional extra ``warehouse``) the dialog runs it
itself, read-only, on the worker thread (:class:`fourfold.history.connect.WarehouseQuery`). The
URL is masked when not being edited and is never saved: not in the plan, the settings nor the
recent files; the results name the source without user, password or parameters.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QFontDatabase, QGuiApplication
from PySide6.QtWidgets import (
    QComboBox,
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
from fourfold.history.sql import DIALECTS
from fourfold.history.warehouse import read_warehouse_result, warehouse_sql
from fourfold.ui.history_worker import QueryJob

RESULT_LIMIT = 1 << 20
DIALECT_NAMES = {"ansi": "ANSI (portable)", "postgres": "PostgreSQL", "snowflake": "Snowflake",
                 "bigquery": "BigQuery", "spark": "Spark", "databricks": "Databricks",
                 "redshift": "Redshift", "trino": "Trino / Presto", "duckdb": "DuckDB",
                 "mysql": "MySQL"}


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
        grid.addWidget(QLabel("Dialect:"), 0, 2)
        self.dialect_box = QComboBox()
        for name in DIALECTS:
            self.dialect_box.addItem(DIALECT_NAMES[name], name)
        self.dialect_box.setToolTip("The warehouse's SQL: names are quoted and types spelt "
                                    "its way")
        grid.addWidget(self.dialect_box, 0, 3)
        grid.addWidget(QLabel("One result row per:"), 0, 4)
        self.partition_edit = QLineEdit()
        self.partition_edit.setPlaceholderText("optional, e.g. day")
        grid.addWidget(self.partition_edit, 0, 5)
        self.sql_button = QPushButton("Write SQL")
        self.sql_button.clicked.connect(self.write_sql)
        grid.addWidget(self.sql_button, 0, 6)
        self.copy_button = QPushButton("Copy SQL")
        self.copy_button.clicked.connect(
            lambda: QGuiApplication.clipboard().setText(self.sql_view.toPlainText()))
        grid.addWidget(self.copy_button, 0, 7)
        mono = QFontDatabase.systemFont(QFontDatabase.SystemFont.FixedFont)
        self.sql_view = QPlainTextEdit()
        self.sql_view.setReadOnly(True)
        self.sql_view.setFont(mono)
        self.sql_view.setPlaceholderText("the query for the columns below appears here")
        grid.addWidget(self.sql_view, 1, 0, 1, 8)
        grid.addWidget(QLabel("Connection:"), 2, 0)
        self.url_edit = QLineEdit()
        self.url_edit.setEchoMode(QLineEdit.EchoMode.PasswordEchoOnEdit)
        self.url_edit.setPlaceholderText("a SQLAlchemy URL, e.g. postgresql://user@host/db — "
                                         "never saved")
        self.url_edit.setToolTip("Runs the query read-only over this connection (optional "
                                 "extra 'warehouse' and the database's driver). The URL is "
                                 "not saved anywhere; the dialect comes from it.")
        self.url_edit.textChanged.connect(self._update_buttons)
        grid.addWidget(self.url_edit, 2, 1, 1, 6)
        self.run_button = QPushButton("Run in warehouse")
        self.run_button.clicked.connect(self.run_in_warehouse)
        grid.addWidget(self.run_button, 2, 7)
        self.result_edit = QPlainTextEdit()
        self.result_edit.setFont(mono)
        self.result_edit.setPlaceholderText(
            "…or paste the query's result here: the header line and its rows")
        grid.addWidget(self.result_edit, 3, 0, 1, 7)
        self.result_file_button = QPushButton("Load result…")
        self.result_file_button.clicked.connect(self.load_result_file)
        grid.addWidget(self.result_file_button, 3, 7, Qt.AlignmentFlag.AlignTop)
        for box in (self.sql_view, self.result_edit):
            box.setMaximumHeight(96)
            box.setLineWrapMode(QPlainTextEdit.LineWrapMode.NoWrap)
        self.result_edit.textChanged.connect(self._update_buttons)
        return tab

    def _query_options(self) -> dict:
        unit, time = self.units()
        return {"group_by": self.partition_edit.text().strip() or None, "unit": unit,
                "time": time}

    def write_sql(self) -> bool:
        """Show the query for the current mapping, table and dialect; False (and a message)
        if none."""
        try:
            sql = warehouse_sql(self.mapping(), self.table_edit.text().strip(),
                                dialect=self.dialect_box.currentData(), **self._query_options())
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return False
        self.sql_view.setPlainText(sql + ";")
        self.show_status("Run the query in the warehouse, then paste its result below.")
        return True

    def run_in_warehouse(self) -> None:
        """Run the query over the connection on the worker thread (read-only, cancellable)."""
        from fourfold.history.connect import WarehouseQuery

        try:
            query = WarehouseQuery(self.url_edit.text().strip(), self.mapping(),
                                   self.table_edit.text().strip(), **self._query_options())
        except FourfoldError as error:
            self.show_status(str(error), error=True)
            return
        index = self.dialect_box.findData(query.dialect)
        self.dialect_box.setCurrentIndex(index)
        self.sql_view.setPlainText(query.sql + ";")
        self.progress.setRange(0, 0)  # a warehouse does not say how far it is
        self.start_job(QueryJob(query), f"Running the query in {query.source}…")

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
        self._fill_windows(summary)
        self._fill_results(summary)
        self.show_status(f"The result covers {summary.rows:,} rows. Choose a plan row for each "
                         "metric (or a new row) and apply; one Undo takes it back.")
