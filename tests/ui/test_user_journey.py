"""One session with the real window, driven as a user drives it, from a new plan to its files.

File → New, the plan's title and traffic typed into the settings, rows added and values typed
through the cell editors, a kind chosen from its drop-down, two blocks pasted from the
clipboard (Ctrl+V, then Edit → Paste), the effect marker dragged with the mouse, Undo and
Redo, Save through its file dialog, the file opened again, and the CSV and PDF exports. The
saved file and the exports are compared with the plan these steps describe, built here
directly from the plan's own classes; the numbers in the exports come from
``fourfold.plan.compute`` of that plan (checked against published tables in tests/engine).
"""

from __future__ import annotations

import dataclasses

from pypdf import PdfReader
from PySide6.QtCore import Qt
from PySide6.QtGui import QGuiApplication
from user_steps import (
    answer_file_dialogs,
    cell_editor,
    choose_in_cell,
    click_cell,
    drag_effect_marker,
    press,
    show,
    type_into_cell,
)

from fourfold.export.csv import write_csv
from fourfold.plan import Metric, Plan, Settings, load, sample_path
from fourfold.plan.evaluation import compute
from fourfold.ui.plots import slider_step


def _type_setting(qtbot, edit, text: str) -> None:
    """Click a settings field, select its text, type over it and press Enter."""
    qtbot.mouseClick(edit, Qt.MouseButton.LeftButton)
    press(qtbot, "Ctrl+A", edit)
    qtbot.keyClicks(edit, text)
    press(qtbot, "Return", edit)


def _expected(dragged: float) -> Plan:
    """The plan the steps below describe."""
    settings = Settings(title="Seed packet checkout", daily_units=20_000.0)
    return Plan(settings, [
        Metric(name="Checkout conversion", role="primary", baseline=0.04, effect=dragged),
        Metric(name="Revenue per visitor", kind="mean", baseline=2.5, sd=12.0, effect=0.03),
        Metric(name="Add-to-cart rate", role="secondary", kind="proportion", baseline=0.11),
        Metric(name="Support contacts", role="guardrail", kind="rate", baseline=0.02,
               effect=0.0, alternative="less", margin=0.1),
    ])


def _same_plan(found: Plan, expected: Plan) -> None:
    assert found.settings == expected.settings
    assert found.metrics == expected.metrics  # every field but the row's id


def test_a_plan_from_scratch_to_its_files(make_window, qtbot, monkeypatch, tmp_path):
    window = make_window(load(sample_path()))
    show(qtbot, window)
    table = window.table

    press(qtbot, "Ctrl+N")
    assert window.model.rowCount() == 1
    _type_setting(qtbot, window.settings_panel.title, "Seed packet checkout")
    _type_setting(qtbot, window.settings_panel.fields["daily_units"], "20,000")
    table.setFocus()

    type_into_cell(qtbot, window, 0, "name", "Checkout conversion")
    type_into_cell(qtbot, window, 0, "baseline", "4")  # a proportion's baseline, in percent

    press(qtbot, "Ctrl+Shift+N")  # the new row's name is being edited
    editor = cell_editor(table)
    qtbot.keyClicks(editor, "Revenue per visitor")
    press(qtbot, "Return", editor)
    choose_in_cell(qtbot, window, 1, "kind", "mean")
    type_into_cell(qtbot, window, 1, "baseline", "2.5")
    type_into_cell(qtbot, window, 1, "sd", "12")
    type_into_cell(qtbot, window, 1, "effect", "3")

    clipboard = QGuiApplication.clipboard()
    add_to_cart = "Add-to-cart rate\tsecondary\tproportion\t11\n"
    press(qtbot, "Ctrl+Shift+N")
    press(qtbot, "Escape")  # a new row 2, its name cell current
    clipboard.setText(add_to_cart)
    press(qtbot, "Ctrl+V")
    # two rows from a spreadsheet over the table's end: the second becomes a new row
    clipboard.setText(add_to_cart
                      + "Support contacts\tguardrail\trate\t0.02\t\t0\tyes\tless\t+10 %\n")
    click_cell(qtbot, window, 2, "name")
    window.paste_action.trigger()
    assert window.model.rowCount() == 4

    click_cell(qtbot, window, 0, "effect")
    qtbot.waitUntil(lambda: window.plots.tradeoffs is not None
                    and window.plots.tradeoffs.index == 0
                    and window.plots.grid.handle.isVisible())
    step = slider_step(*window.plots.tradeoffs.effect_span)
    drag_effect_marker(qtbot, window, 4.0)  # from +5 % towards +4 %
    qtbot.waitUntil(lambda: window.document.plan.metrics[0].effect != 0.05)
    dragged = window.document.plan.metrics[0].effect
    assert abs(dragged - 0.04) <= step and round(dragged / step, 9).is_integer()

    click_cell(qtbot, window, 0, "name")
    press(qtbot, "Ctrl+Z")
    assert window.document.plan.metrics[0].effect == 0.05
    press(qtbot, "Ctrl+Y")
    assert window.document.plan.metrics[0].effect == dragged
    expected = _expected(dragged)
    _same_plan(window.document.plan, expected)

    saved = tmp_path / "saved.json"
    proposed = answer_file_dialogs(monkeypatch, open_path=saved,
                                   save_paths=[saved, tmp_path / "plan.csv",
                                               tmp_path / "plan.pdf"])
    press(qtbot, "Ctrl+S")
    assert proposed[0].endswith("Seed packet checkout.json")
    _same_plan(load(saved), expected)
    assert window.windowTitle() == "saved.json[*] — Fourfold"

    press(qtbot, "Ctrl+N")
    press(qtbot, "Ctrl+O")
    _same_plan(window.document.plan, expected)
    assert window.document.path == saved and not window.isWindowModified()

    window.csv_action.trigger()
    press(qtbot, "Ctrl+Shift+E")
    write_csv(expected, tmp_path / "expected.csv")
    for name in ("plan.csv", "plan-settings.csv"):
        assert (tmp_path / name).read_bytes() == (tmp_path / name.replace(
            "plan", "expected")).read_bytes()
    result = compute(expected)
    text = " ".join(" ".join(page.extract_text().split())
                    for page in PdfReader(tmp_path / "plan.pdf").pages)
    assert "Seed packet checkout" in text
    assert all(metric.name in text for metric in expected.metrics)
    assert f"{result.duration_days:.0f} days" in text
    assert f"{round(result.rows[0].units_control):,d}" in text
    assert dataclasses.replace(expected.settings) == load(saved).settings
