"""The window and impossible or incomplete plans, the way a user meets them.

Typed through the cell editor (key events, committed with Enter); the plan opened from a file
as a user would open it. What is impossible is a fact of the trade (a proportion lies in
(0, 1); a "less" guardrail with no true change needs a margin above 0; common practice, no
source); the numbers shown are the evaluation's, checked against outside sources in
tests/plan.
"""

from __future__ import annotations

import pytest
from cell_typing import type_in_cell
from PySide6.QtCore import Qt

from fourfold.plan import compute, dumps, load, loads, sample_path
from fourfold.plan.commands import SetField
from fourfold.ui import theme
from fourfold.ui.columns import column_index

pytestmark = pytest.mark.qt


@pytest.mark.parametrize(("row", "key", "text", "message"), [
    (0, "baseline", "150", "row 1 (Checkout conversion), Baseline: 150 % is impossible — a "
     "proportion's baseline must lie between 0 % and 100 %; allowed here: above 0 % and below "
     "95.24 %."),
    (5, "margin", "-0.02", "row 6 (Page load time (s)), Margin: −0.02 is impossible — a 'less' "
     "test needs its effect (0) below its margin (−0.02); allowed here: above 0."),
])
def test_an_impossible_value_typed_in_a_cell_is_refused_and_the_old_value_kept(
        make_window, qtbot, row, key, text, message):
    window = make_window()
    window.show()
    before = dumps(window.document.plan)
    type_in_cell(qtbot, window, row, key, text, refused=True)
    assert window.statusBar().currentMessage() == message
    assert dumps(window.document.plan) == before and not window.document.stack.can_undo
    assert window.summary.texts()[0] == "Duration 35 days (5 weeks)"


def test_an_incomplete_plan_says_so_in_the_warning_colour_naming_each_row(make_window, qtbot):
    text = dumps(load(sample_path())).replace('"baseline": 0.031', '"baseline": 1.5')
    text = text.replace('"margin": 0.02', '"margin": -0.02')
    window = make_window(loads(text))
    window.show()
    shown = window.summary.texts()
    assert shown[0] == (
        "Incomplete plan: no duration until these rows can be computed — row 1 (Checkout "
        "conversion): baseline must be between 0 and 1 (exclusive) for a proportion; row 6 "
        "(Page load time (s)): effect must be less than the margin for a 'less' test")
    assert shown[1:] == ("", "")
    assert theme.tints().problem.name() in window.summary.duration.text()
    type_in_cell(qtbot, window, 0, "baseline", "3.1")  # mend the first row
    type_in_cell(qtbot, window, 5, "margin", "0.02")  # and the second: a duration again
    qtbot.waitUntil(lambda: window.summary.texts()[0] == "Duration 35 days (5 weeks)")


def _bonferroni():
    """The sample plan with Bonferroni's correction (every row at α 0.025, as in
    tests/plan/test_plan_duration_power.py)."""
    plan = load(sample_path())
    plan.settings.correction = "bonferroni"
    return plan


def test_every_row_shows_its_power_at_the_plans_duration(make_window, qtbot):
    window = make_window(_bonferroni())
    model = window.model
    column = column_index("power_at_duration")
    powers = compute(window.document.plan).duration_powers
    shown = [model.data(model.index(row, column)) for row in range(7)]
    assert shown == ["0.874", "0.64", "0.968", "0.949", "0.999", "1", "1"]
    assert [round(p, 3) for p in powers[:4]] == [0.874, 0.64, 0.968, 0.949]
    window.document.apply(SetField(0, "effect", 0.06))  # the binding row: every power moves
    window.document.recompute_now()
    assert model.data(model.index(1, column)) != "0.64"


def test_a_power_row_without_n_uses_the_plans_duration(make_window):
    window = make_window(_bonferroni())
    model = window.model
    window.document.apply(SetField(1, "solve", "power"))
    window.document.recompute_now()
    assert model.data(model.index(1, column_index("power_out"))) == "0.64"
    assert model.data(model.index(1, column_index("days"))) == "35"


def test_with_a_runtime_solve_for_shows_what_each_row_solves_for(make_window):
    window = make_window()
    model = window.model
    from fourfold.plan.commands import SetSetting

    window.document.apply(SetSetting("runtime_days", 28.0))
    window.document.recompute_now()
    solve = column_index("solve")
    assert [model.data(model.index(row, solve)) for row in range(6)] == [
        "detectable effect"] * 4 + ["margin ruled out"] * 2
    tip = model.data(model.index(5, solve), Qt.ItemDataRole.ToolTipRole)
    assert "tightest margin it rules out" in tip and "chosen: sample size" in tip
    detectable = model.data(model.index(5, column_index("detectable")))
    margin = compute(window.document.plan).rows[5].margin_abs
    assert detectable == f"margin +{margin:.3g} s"  # the page-load row is in seconds


def test_a_guardrails_plots_and_slider_move_its_margin(make_window, qtbot):
    window = make_window()
    window.show()
    window.table.setCurrentIndex(window.model.index(5, 0))  # page load time, a "less" guardrail
    qtbot.waitUntil(lambda: window.plots.tradeoffs is not None
                    and window.plots.tradeoffs.index == 5, timeout=3000)
    data = window.plots.tradeoffs
    assert data.quantity == "margin" and data.effect.title == "Sample size against the margin"
    assert data.runtime.title == "What each week can rule out"
    assert window.plots.slider_label.text() == "Margin"
    margin, effect = window.document.plan.metrics[5].margin, window.document.plan.metrics[5].effect
    window.plots.slider.setFocus()
    qtbot.keyClick(window.plots.slider, Qt.Key.Key_Right)
    qtbot.waitUntil(lambda: window.document.plan.metrics[5].margin != margin, timeout=3000)
    after = window.document.plan.metrics[5]
    assert after.margin == pytest.approx(0.0205) and after.effect == effect


def test_the_window_exports_an_incomplete_plan_saying_so(make_window, tmp_path, monkeypatch):
    from PySide6.QtWidgets import QFileDialog

    window = make_window()
    window.document.apply(SetField(0, "kind", "mean"))  # the primary row has no SD yet
    window.document.recompute_now()
    monkeypatch.setattr(QFileDialog, "getSaveFileName",
                        lambda *args, **kwargs: (str(tmp_path / "plan.csv"), ""))
    window.csv_action.trigger()
    assert window.statusBar().currentMessage() == (
        f"Wrote {tmp_path / 'plan.csv'}: an incomplete plan, so it says \"incomplete\" and gives "
        "no duration (row 1 (Checkout conversion): sd is required for a mean (the per-unit "
        "standard deviation))")
    text = (tmp_path / "plan-settings.csv").read_text(encoding="utf-8-sig")
    assert "status,incomplete,text" in text
