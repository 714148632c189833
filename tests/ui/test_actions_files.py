"""File menu through the user's path: New, Open, Open recent, Save, Save as, the exports and
Quit, from the menu (``QAction.trigger()``) and from their shortcuts on the focused table; the
file dialogs are answered with a path.

The exports are compared with the writers' own output for the plan on show (the CSV) and with
the text the PDF carries (read back with pypdf); no outside source is involved.
"""

from __future__ import annotations

import pytest
from pypdf import PdfReader
from PySide6.QtWidgets import QMessageBox
from user_steps import answer_file_dialogs, press, press_each_shortcut, show

from fourfold.export.csv import write_csv
from fourfold.plan import Plan, dumps, load, sample_path, save
from fourfold.plan.commands import SetField

TITLE = "Quillmoss Garden Supply — checkout redesign"


@pytest.mark.triggers("new_action")
@pytest.mark.presses("new_action")
def test_new_plan_starts_an_empty_plan(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    window.new_action.trigger()
    assert dumps(window.document.plan) == dumps(Plan.empty())
    window.document.apply(SetField(0, "baseline", 0.2))
    press_each_shortcut(qtbot, window.new_action)  # unsaved changes: the fixture discards
    assert dumps(window.document.plan) == dumps(Plan.empty())
    assert window.windowTitle() == "Untitled plan[*] — Fourfold"


@pytest.mark.triggers("open_action")
@pytest.mark.presses("open_action")
def test_open_reads_the_chosen_file(make_window, qtbot, monkeypatch, tmp_path):
    path = tmp_path / "other.json"
    other = load(sample_path())
    other.metrics = other.metrics[:2]
    save(other, path)
    window = make_window(Plan.empty())
    show(qtbot, window)
    answer_file_dialogs(monkeypatch, open_path=path)
    window.open_action.trigger()
    assert dumps(window.document.plan) == dumps(other)
    assert window.windowTitle() == "other.json[*] — Fourfold"
    window.new_action.trigger()
    press_each_shortcut(qtbot, window.open_action)
    assert window.model.rowCount() == 2 and window.document.path == path


@pytest.mark.triggers("save_action", "save_as_action")
def test_save_of_the_sample_proposes_its_title_and_writes_the_plan(make_window, qtbot,
                                                                      monkeypatch, tmp_path):
    window = make_window()  # the bundled sample, opened without a path
    show(qtbot, window)
    assert window.windowTitle() == f"{TITLE}[*] — Fourfold"
    first, second = tmp_path / "plan.json", tmp_path / "copy"
    proposed = answer_file_dialogs(monkeypatch, save_paths=[first, second])
    window.document.apply(SetField(0, "baseline", 0.032))
    window.save_action.trigger()
    assert proposed[0].endswith(f"{TITLE}.json")
    assert dumps(load(first)) == dumps(window.document.plan)
    assert load(first).metrics[0].baseline == 0.032 and not window.isWindowModified()
    window.save_as_action.trigger()
    assert proposed[1] == str(first)
    assert dumps(load(tmp_path / "copy.json")) == dumps(window.document.plan)
    assert window.windowTitle() == "copy.json[*] — Fourfold"


@pytest.mark.presses("save_action", "save_as_action")
def test_ctrl_s_saves_and_ctrl_shift_s_saves_under_a_new_name(make_window, qtbot, monkeypatch,
                                                               tmp_path):
    path = tmp_path / "plan.json"
    save(load(sample_path()), path)
    window = make_window(load(path), path)
    show(qtbot, window)
    answer_file_dialogs(monkeypatch, save_paths=[tmp_path / "renamed.json"])
    window.document.apply(SetField(1, "sd", 15.0))
    press_each_shortcut(qtbot, window.save_action)
    assert load(path).metrics[1].sd == 15.0
    press_each_shortcut(qtbot, window.save_as_action)
    assert load(tmp_path / "renamed.json").metrics[1].sd == 15.0
    assert window.document.path == tmp_path / "renamed.json"


@pytest.mark.triggers("csv_action", "pdf_action")
@pytest.mark.presses("csv_action", "pdf_action")
def test_exports_write_the_plan_on_show(make_window, qtbot, monkeypatch, tmp_path):
    window = make_window()
    show(qtbot, window)
    window.document.apply(SetField(0, "effect", 0.06))
    targets = [tmp_path / "menu.csv", tmp_path / "menu.pdf", tmp_path / "keys", tmp_path / "keys"]
    proposed = answer_file_dialogs(monkeypatch, save_paths=targets)
    window.csv_action.trigger()
    window.pdf_action.trigger()
    press_each_shortcut(qtbot, window.csv_action)
    press_each_shortcut(qtbot, window.pdf_action)
    assert proposed[0].endswith(f"{TITLE}.csv") and proposed[1].endswith(f"{TITLE}.pdf")
    write_csv(window.document.plan, tmp_path / "expected.csv")
    for written in (tmp_path / "menu.csv", tmp_path / "keys.csv"):
        assert written.read_bytes() == (tmp_path / "expected.csv").read_bytes()
    for written in (tmp_path / "menu.pdf", tmp_path / "keys.pdf"):
        text = " ".join(" ".join(page.extract_text().split())
                        for page in PdfReader(written).pages)
        assert "Quillmoss Garden Supply" in text and "Checkout conversion" in text


@pytest.mark.triggers("quit_action")
@pytest.mark.presses("quit_action")
def test_quit_closes_the_window_unless_the_user_cancels(make_window, qtbot):
    window = make_window()
    show(qtbot, window)
    window.document.apply(SetField(0, "baseline", 0.032))
    window.ask_to_save = lambda: QMessageBox.StandardButton.Cancel
    window.quit_action.trigger()
    assert window.isVisible() and window.document.plan.metrics[0].baseline == 0.032
    window.ask_to_save = lambda: QMessageBox.StandardButton.Discard
    press_each_shortcut(qtbot, window.quit_action)
    assert not window.isVisible()


@pytest.mark.triggers("recent_file_action", "no_recent_action")
def test_open_recent_opens_the_file_chosen(make_window, qtbot, tmp_path):
    window = make_window(Plan.empty())
    show(qtbot, window)
    window.recent_menu.aboutToShow.emit()
    (placeholder,) = window.recent_menu.actions()
    assert placeholder.objectName() == "no_recent_action" and not placeholder.isEnabled()
    placeholder.trigger()
    assert dumps(window.document.plan) == dumps(Plan.empty())
    path = tmp_path / "sample.json"
    save(load(sample_path()), path)
    window.remember_recent(path)
    window.recent_menu.aboutToShow.emit()
    (entry,) = window.recent_menu.actions()
    assert entry.text() == "&1 sample.json"
    entry.trigger()
    assert dumps(window.document.plan) == dumps(load(path))


def test_a_title_with_characters_files_refuse_still_gives_a_file_name(make_window, qtbot,
                                                                       monkeypatch, tmp_path):
    plan = Plan.empty()
    plan.settings.title = 'Q3: "price" test / EU'
    window = make_window(plan)
    show(qtbot, window)
    proposed = answer_file_dialogs(monkeypatch, save_paths=[tmp_path / "q3.json"])
    press(qtbot, "Ctrl+S")
    assert proposed[0].endswith("Q3 price test EU.json")
