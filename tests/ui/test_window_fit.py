"""The window fits what the user adds and says what it shows: the table grows with its rows,
columns widen for typed names, the plots name their row, empty plots say why, and the
recovery prompt and data folder read as the platform's.

The behaviour checked is the project's own rule (README, "The window"); the short date of a
German locale ("dd.MM.yy HH:mm") is CLDR's, as shipped with Qt 6.11. No other source.
"""

from __future__ import annotations

import shutil

from PySide6.QtCore import QCoreApplication, QDate, QDateTime, QLocale, QTime
from PySide6.QtWidgets import QMessageBox
from user_steps import click_cell, press, show, type_into_cell

from fourfold.plan import Plan, dumps, load, loads, sample_path
from fourfold.plan.commands import SetField
from fourfold.ui.columns import column_index
from fourfold.ui.plots import EMPTY_TEXT
from fourfold.ui.window_recovery import data_directory, when_text


def _row_shown_whole(table, row: int) -> bool:
    top = table.rowViewportPosition(row)
    return top >= 0 and top + table.rowHeight(row) <= table.viewport().height()


def test_the_table_grows_as_rows_are_added(make_window, qtbot):
    window = make_window(Plan.empty())
    show(qtbot, window)
    for _ in range(6):
        press(qtbot, "Ctrl+Shift+N")
        press(qtbot, "Escape")
    table = window.table
    assert window.model.rowCount() == 7
    assert all(_row_shown_whole(table, row) for row in range(7))
    assert table.verticalScrollBar().value() == 0


def test_the_name_column_widens_for_a_typed_name(make_window, qtbot):
    window = make_window(Plan.empty())
    show(qtbot, window)
    name = "Checkouts of returning"  # shorter than the 30 characters a name column may take
    type_into_cell(qtbot, window, 0, "name", name)
    table = window.table
    width = table.fontMetrics().horizontalAdvance(name)
    qtbot.waitUntil(lambda: table.columnWidth(column_index("name")) >= width)


def test_the_plots_name_their_row_and_stay_on_it_after_enter(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    type_into_cell(qtbot, window, 1, "baseline", "2.5")
    qtbot.waitUntil(lambda: window.plots.tradeoffs is not None
                    and window.plots.tradeoffs.index == 1)
    assert window.plots.heading.text() == "Revenue per visitor — row 2, secondary"
    assert window.table.currentIndex().row() == 1


def test_no_row_shows_a_sentence_instead_of_empty_axes(make_window, qtbot):
    window = make_window(Plan.empty())
    show(qtbot, window)
    assert window.plots.grid.isVisible() and not window.plots.empty.isVisible()
    click_cell(qtbot, window, 0, "name")
    press(qtbot, "Ctrl+Del")
    qtbot.waitUntil(lambda: window.plots.empty.isVisible())
    assert not window.plots.grid.isVisible() and window.plots.empty.text() == EMPTY_TEXT
    assert window.plots.heading.text() == ""
    press(qtbot, "Ctrl+Z")
    qtbot.waitUntil(lambda: window.plots.grid.isVisible())


def test_a_row_that_cannot_be_computed_shows_its_reason_without_axes(make_window, qtbot):
    # a plan file whose first row has a proportion's baseline of 150 %: it opens, incomplete
    text = dumps(load(sample_path())).replace('"baseline": 0.031', '"baseline": 1.5')
    window = make_window(loads(text))
    show(qtbot, window)
    click_cell(qtbot, window, 0, "baseline")
    reason = window.document.result.rows[0].reason
    assert reason
    for plot in window.plots.grid.plots.values():
        qtbot.waitUntil(lambda plot=plot: plot.message.isVisible())
        assert plot.message.textItem.toPlainText() == reason
        assert not any(plot.item.getAxis(side).isVisible() for side in ("left", "bottom"))
    type_into_cell(qtbot, window, 0, "baseline", "3.1")  # mended: the axes come back
    qtbot.waitUntil(lambda: window.plots.grid.plots["effect"].item.getAxis("left").isVisible())


def test_dates_read_as_the_locale_writes_them():
    moment = QDateTime(QDate(2026, 12, 4), QTime(15, 20)).toSecsSinceEpoch()
    assert when_text(moment, QLocale("de_DE")) == "04.12.26 15:20"
    assert when_text(moment, QLocale.c()) == "2026-12-04 15:20"


def test_the_recovery_prompt_dates_its_copy_in_the_system_locale(make_window, tmp_path,
                                                                   monkeypatch):
    data = tmp_path / "recovery"
    window = make_window(data_dir=data)
    window.document.apply(SetField(0, "baseline", 0.034))
    window.autosave()
    shutil.copy2(window.recovery.path, data / "recovery-crashed.json")
    window.document.stack.mark_clean()
    texts = []

    def answer(box):
        texts.append(box.text())
        return 0

    monkeypatch.setattr(QMessageBox, "exec", answer)
    reopened = make_window(data_dir=data)
    assert not reopened.offer_recovery()  # "Keep for later"
    (found,) = reopened.recovery.leftovers()
    assert texts == [
        "A Fourfold window closed without saving changes to the unsaved plan "
        f"“Quillmoss Garden Supply — checkout redesign” (last copy {when_text(found.saved_at)})"
        ". Restore them here?"]


def test_the_data_folder_is_not_doubled(monkeypatch, tmp_path):
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path))
    names = QCoreApplication.organizationName(), QCoreApplication.applicationName()
    QCoreApplication.setOrganizationName("Fourfold")  # as fourfold.ui.app names the app
    QCoreApplication.setApplicationName("Fourfold")
    try:
        assert data_directory() == tmp_path / "Fourfold"
    finally:
        QCoreApplication.setOrganizationName(names[0])
        QCoreApplication.setApplicationName(names[1])
