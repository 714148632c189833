"""Plan → Import history… in the main window: the dialog opens on the window's document, and
what it applies shows up in the window's table and undoes with the window's Undo."""

from pathlib import Path

from fourfold.ui.history_dialog import HistoryDialog

SAMPLE = Path(__file__).resolve().parents[2] / "samples" / "quillmoss-history.csv"


def test_menu_action_opens_the_dialog_on_the_document(make_window, monkeypatch):
    window = make_window()
    assert window.history_action in window.plan_menu.actions()
    opened = []
    monkeypatch.setattr(HistoryDialog, "exec", lambda self: opened.append(self) or 0)
    window.history_action.trigger()
    assert len(opened) == 1 and opened[0].document is window.document
    opened[0].deleteLater()


def test_an_import_lands_in_the_table_and_undoes_from_the_window(make_window, qtbot):
    window = make_window()
    rows = window.model.rowCount()
    dialog = HistoryDialog(window.document, window, path=str(SAMPLE))
    qtbot.addWidget(dialog)
    for row in reversed(range(dialog.map_table.rowCount())):
        if dialog._cell_text(row, 0) != "converted":
            dialog.map_table.removeRow(row)
    dialog.start_reading()
    qtbot.waitUntil(lambda: not dialog.reading, timeout=20_000)
    dialog.apply_to_plan()
    assert window.model.rowCount() == rows + 1
    assert window.undo_action.isEnabled()
    window.undo_action.trigger()
    assert window.model.rowCount() == rows
