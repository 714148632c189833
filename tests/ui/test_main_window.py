"""The main window: files, recovery, settings, undo menu, text size, the shot command.

Reference values come from :mod:`fourfold.plan.compute` and :mod:`fourfold.engine` called
directly; nothing here is a hard-coded result.
"""

from __future__ import annotations

import dataclasses
import os
import shutil

import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QImage

from fourfold.errors import FourfoldError
from fourfold.plan import Plan, dumps, load, sample_path
from fourfold.plan.commands import SetField
from fourfold.plan.evaluation import compute
from fourfold.ui.app import run_shot, run_window
from fourfold.ui.columns import column_index
from fourfold.ui.recovery import Recovery
from fourfold.ui.table_model import SORT_ROLE


def test_title_and_unsaved_marker(make_window, tmp_path):
    path = tmp_path / "checkout.json"
    path.write_text(dumps(load(sample_path())), encoding="utf-8")
    window = make_window(load(path), path)
    assert window.windowTitle() == "checkout.json[*] — Fourfold"
    assert not window.isWindowModified()
    window.model.setData(window.model.index(0, column_index("baseline")), "3.2")
    assert window.isWindowModified()
    assert window.undo_action.isEnabled() and "baseline" in window.undo_action.text()
    window.undo_action.trigger()
    assert not window.isWindowModified()
    assert window.redo_action.isEnabled() and not window.undo_action.isEnabled()


def test_save_then_open_round_trip(make_window, tmp_path):
    window = make_window()
    window.model.setData(window.model.index(1, column_index("sd")), "15.5")
    path = tmp_path / "plan.json"
    assert window.save_to(path)
    assert not window.isWindowModified()
    assert window.windowTitle().startswith("plan.json")
    other = make_window(Plan.empty())
    assert other.open_path(path)
    assert dumps(other.document.plan) == dumps(window.document.plan)
    assert other.document.plan.metrics[1].sd == 15.5
    assert str(path.resolve()) == other.recent_files()[0]


@pytest.mark.parametrize("content", ["{not json", '{"format": "someone-else", "rows": []}', ""])
def test_a_corrupt_or_foreign_file_leaves_the_current_plan_intact(make_window, tmp_path,
                                                                 content):
    window = make_window()
    window.model.setData(window.model.index(0, column_index("name")), "Edited name")
    before, path_before = dumps(window.document.plan), window.document.path
    bad = tmp_path / "bad.json"
    bad.write_text(content, encoding="utf-8")
    assert not window.open_path(bad)
    assert window.errors and "bad.json" in window.errors[0][1]
    assert dumps(window.document.plan) == before
    assert window.document.path == path_before
    assert window.document.stack.can_undo  # the undo history survives too


def test_a_failed_save_keeps_the_users_file(make_window, tmp_path):
    path = tmp_path / "plan.json"
    path.write_text("precious", encoding="utf-8")
    window = make_window()
    folder_as_file = tmp_path / "folder.json"
    folder_as_file.mkdir()
    assert not window.save_to(folder_as_file)
    assert window.errors
    assert path.read_text(encoding="utf-8") == "precious"
    assert window.document.path is None


def test_autosave_is_offered_back_after_a_crash(make_window, tmp_path):
    data = tmp_path / "recovery"
    window = make_window(data_dir=data)
    window.model.setData(window.model.index(0, column_index("baseline")), "3.4")
    window.autosave()
    assert window.recovery.path.exists()
    edited = dumps(window.document.plan)
    window.document.stack.mark_clean()
    # what a crashed window leaves: its copy without a live lock (this window still holds
    # its own, so only the crashed one may be offered)
    crashed = shutil.copy2(window.recovery.path, data / "recovery-crashed.json")

    reopened = make_window(data_dir=data)
    offered = []
    assert reopened.offer_recovery(ask=lambda found: offered.append(found) or True)
    assert [found.path.name for found in offered] == ["recovery-crashed.json"]
    assert offered[0].source is None
    assert dumps(reopened.document.plan) == edited
    assert reopened.isWindowModified()  # restored work is not saved yet
    assert not os.path.exists(crashed) and reopened.recovery.path.exists()  # now its own copy
    assert reopened.save_to(tmp_path / "kept.json")
    assert not reopened.recovery.path.exists()


def test_recovery_older_than_the_saved_file_is_not_offered(make_window, tmp_path):
    path = tmp_path / "plan.json"
    window = make_window(data_dir=tmp_path / "recovery")
    window.save_to(path)
    window.model.setData(window.model.index(0, column_index("baseline")), "3.4")
    window.autosave()
    crashed = shutil.copy2(window.recovery.path, tmp_path / "recovery" / "recovery-old.json")
    stamp = window.recovery.path.stat().st_mtime
    os.utime(path, (stamp + 10, stamp + 10))  # the file was saved again later
    assert Recovery(tmp_path / "recovery").leftovers() == []
    assert not os.path.exists(crashed)  # nothing to offer: the copy is deleted


def test_autosave_writes_nothing_without_changes(make_window, tmp_path):
    window = make_window(data_dir=tmp_path / "recovery")
    window.autosave()
    assert not window.recovery.path.exists()


def test_a_settings_change_recomputes_every_row(make_window, qtbot):
    window = make_window()
    document = window.document
    before = [row.alpha for row in document.result.rows]
    edit = window.settings_panel.fields["alpha"]
    edit.setText("0.01")
    with qtbot.waitSignal(window.model.dataChanged) as blocker:
        edit.editingFinished.emit()
    first, last = blocker.args[0], blocker.args[1]
    assert (first.row(), last.row()) == (0, window.model.rowCount() - 1)
    assert document.plan.settings.alpha == 0.01
    reference = compute(document.plan)
    assert [row.alpha for row in document.result.rows] == [row.alpha for row in reference.rows]
    after = [r.alpha for r in reference.rows]
    assert all(new < old for new, old in zip(after, before, strict=True))
    units = column_index("units_control")
    for row, expected in enumerate(reference.rows):
        assert window.model.data(window.model.index(row, units), SORT_ROLE) == pytest.approx(
            expected.units_control, nan_ok=True)


def test_a_refused_setting_keeps_the_old_value(make_window):
    window = make_window()
    edit = window.settings_panel.fields["share"]
    edit.setText("140 %")
    edit.editingFinished.emit()
    assert window.document.plan.settings.share == 0.6
    assert edit.text() == "60.0 %"
    assert "share" in window.statusBar().currentMessage()


def test_summary_line_names_the_binding_metric(make_window):
    window = make_window()
    result = window.document.result
    duration, units, binding = window.summary.texts()
    assert result.binding_name in binding
    assert f"{round(result.total_units):,d}" in units
    assert "days" in duration


def test_row_actions_and_their_undo(make_window):
    window = make_window()
    count = window.model.rowCount()
    window.table.setCurrentIndex(window.model.index(1, 0))
    window.duplicate_action.trigger()
    assert window.model.rowCount() == count + 1
    assert window.document.plan.metrics[2].name.endswith("(copy)")
    window.up_action.trigger()
    assert window.document.plan.metrics[1].name.endswith("(copy)")
    window.delete_action.trigger()
    assert window.model.rowCount() == count
    for _ in range(3):
        window.undo_action.trigger()
    assert dumps(window.document.plan) == dumps(load(sample_path()))


def test_dragging_the_effect_is_one_undo_step(make_window):
    window = make_window()
    for effect in (0.06, 0.07, 0.08):
        window.plots.effect_dragged.emit(0, effect)
    assert window.document.plan.metrics[0].effect == 0.08
    window.undo_action.trigger()
    assert window.document.plan.metrics[0].effect == 0.05


def test_text_scale_is_remembered(make_window, qsettings):
    window = make_window()
    size = window.table.font().pointSizeF()
    window.bigger_action.trigger()
    window.bigger_action.trigger()
    assert window.table.font().pointSizeF() > size
    assert float(qsettings.value("view/text_scale")) == pytest.approx(1.2)
    again = make_window(settings=qsettings)
    assert again.table.font().pointSizeF() == pytest.approx(window.table.font().pointSizeF())
    again.reset_text_action.trigger()
    assert again.table.font().pointSizeF() == pytest.approx(size)


def test_new_plan_asks_before_losing_changes(make_window):
    window = make_window()
    window.model.setData(window.model.index(0, column_index("baseline")), "3.2")
    from PySide6.QtWidgets import QMessageBox

    window.ask_to_save = lambda: QMessageBox.StandardButton.Cancel
    window.new_action.trigger()
    assert window.document.plan.metrics[0].baseline == pytest.approx(0.032)
    window.ask_to_save = lambda: QMessageBox.StandardButton.Discard
    window.new_action.trigger()
    assert dumps(window.document.plan) == dumps(Plan.empty())
    assert window.windowTitle().startswith("Untitled plan")


def test_an_invalid_plan_file_raises_before_any_window(tmp_path):
    bad = tmp_path / "bad.json"
    bad.write_text("[]", encoding="utf-8")
    with pytest.raises(FourfoldError):
        run_window(str(bad))


def test_shot_renders_the_window_to_a_png(qtbot, tmp_path):
    output = tmp_path / "window.png"
    assert run_shot(None, str(output), size=(900, 600), row=2) == 0
    image = QImage(str(output))
    assert (image.width(), image.height()) == (900, 600)
    with pytest.raises(FourfoldError, match="row"):
        run_shot(None, str(tmp_path / "x.png"), row=99)


def test_edits_of_a_plan_without_traffic_still_show_units(make_window):
    plan = load(sample_path())
    plan = Plan(dataclasses.replace(plan.settings, daily_units=None), plan.metrics)
    window = make_window(plan)
    assert "set daily units" in window.summary.texts()[0]
    window.document.apply(SetField(0, "effect", 0.1))
    window.document.recompute_now()
    units = window.model.data(window.model.index(0, column_index("units_control")), SORT_ROLE)
    assert units == compute(window.document.plan).rows[0].units_control


def test_export_actions_write_csv_and_pdf(make_window, tmp_path, monkeypatch):
    from PySide6.QtWidgets import QFileDialog

    window = make_window()
    targets = iter([str(tmp_path / "plan"), str(tmp_path / "report.pdf")])
    monkeypatch.setattr(QFileDialog, "getSaveFileName",
                        lambda *args, **kwargs: (next(targets), ""))
    window.csv_action.trigger()
    window.pdf_action.trigger()
    assert window.errors == []
    assert (tmp_path / "plan.csv").stat().st_size > 0
    assert (tmp_path / "report.pdf").read_bytes().startswith(b"%PDF")


def test_the_dark_palette_follows_the_scheme(make_window):
    from fourfold.ui import theme

    window = make_window()
    light = window.model.data(window.model.index(0, column_index("power_out")),
                              Qt.ItemDataRole.BackgroundRole)
    window.model.set_dark(True)
    dark = window.model.data(window.model.index(0, column_index("power_out")),
                             Qt.ItemDataRole.BackgroundRole)
    assert dark == theme.tints(True).computed and light == theme.tints(False).computed
    for scheme in (False, True):
        palette = theme.palette(scheme)
        assert _contrast(palette.text().color(), palette.base().color()) >= 7.0
        assert _contrast(palette.text().color(), theme.tints(scheme).computed) >= 7.0
        assert _contrast(theme.tints(scheme).solved_text, theme.tints(scheme).solved) >= 7.0


def test_a_live_scheme_change_restyles_the_headers_and_panels(make_window, monkeypatch):
    from fourfold.ui import theme

    window = make_window()
    for dark in (True, False):
        monkeypatch.setattr(theme, "system_is_dark", lambda dark=dark: dark)
        window._follow_scheme()
        button = theme.palette(dark).button().color().name()
        assert window.dark is dark
        assert button in window.table.horizontalHeader().styleSheet()
        assert theme.palette(dark).base().color().name() in window.settings_panel.styleSheet()


def _contrast(first, second) -> float:
    """Contrast ratio of two colours: W3C (2018) WCAG 2.1, relative luminance definition."""
    def luminance(colour):
        channels = []
        for value in (colour.redF(), colour.greenF(), colour.blueF()):
            channels.append(value / 12.92 if value <= 0.04045 else ((value + 0.055) / 1.055) ** 2.4)
        red, green, blue = channels
        return 0.2126 * red + 0.7152 * green + 0.0722 * blue

    light, dark = sorted((luminance(first), luminance(second)), reverse=True)
    return (light + 0.05) / (dark + 0.05)


def test_summary_notes_list_the_plans_remarks(make_window):
    window = make_window()
    notes = window.document.result.notes
    assert notes and window.summary.notes.text().startswith(f"{len(notes)} note")
    assert all(note in window.summary.notes.toolTip() for note in notes)


def test_removing_every_row_and_undoing_shows_a_row_again(make_window):
    window = make_window()
    window.table.selectAll()
    window.delete_action.trigger()
    window.document.recompute_now()
    assert window.model.rowCount() == 0
    assert "Binding" not in window.summary.texts()[2]
    window.undo_action.trigger()
    window.document.recompute_now()
    assert window.model.rowCount() == len(load(sample_path()).metrics)
    assert window.current_row() == 0


def test_the_sample_plans_rows_all_show_without_scrolling(make_window, qtbot):
    # The table is fitted to its rows on show and keeps that height while the header above it
    # settles (the description wraps to three lines after the first layout).
    window = make_window()
    window.resize(1400, 900)
    window.show()
    qtbot.waitExposed(window)
    qtbot.wait(50)
    row_height = window.table.verticalHeader().defaultSectionSize()
    assert window.table.verticalScrollBar().maximum() == 0
    assert window.table.viewport().height() >= window.model.rowCount() * row_height
