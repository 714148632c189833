"""Check by simulation in the window: worker thread, progress, cancel, one undo step.

Numbers are checked in tests/simulation against statsmodels 0.15.0 and published tables;
here the reference is ``fourfold.simulation.check_metric`` called directly on the same plan
(the window must store exactly what the Qt-free layer computes).
"""

from __future__ import annotations

from fourfold.plan import dumps, load, sample_path
from fourfold.simulation import check_metric
from fourfold.ui.document import PlanDocument
from fourfold.ui.simulation_dialog import SimulationDialog


def _dialog(qtbot, rows, plan=None):
    document = PlanDocument(plan if plan is not None else load(sample_path()))
    dialog = SimulationDialog(document, rows)
    qtbot.addWidget(dialog)
    return document, dialog


def _run(qtbot, dialog, reps, timeout=20_000):
    dialog.reps_box.setValue(reps)
    with qtbot.waitSignal(dialog.ended, timeout=timeout) as blocker:
        dialog.run_button.click()
    assert dialog.wait()
    return blocker.args[0]


def test_row_check_is_stored_as_one_undo_step(qtbot):
    document, dialog = _dialog(qtbot, [0])
    dialog.seed_box.setValue(7)
    seen = []
    dialog.progress.valueChanged.connect(seen.append)
    assert _run(qtbot, dialog, 500) == "finished"
    stored = document.plan.metrics[0].simulation
    assert stored == check_metric(load(sample_path()), 0, reps=500, seed=7)
    assert all(metric.simulation is None for metric in document.plan.metrics[1:])
    assert document.stack.undo_text == "Check by simulation"
    assert seen and seen[-1] == dialog.progress.maximum() == 1000
    assert "Checkout conversion" in dialog.results.toPlainText()
    document.undo()
    assert document.plan.metrics[0].simulation is None


def test_whole_plan_check_fills_every_row(qtbot):
    document, dialog = _dialog(qtbot, None)
    assert _run(qtbot, dialog, 200) == "finished"
    assert all(metric.simulation for metric in document.plan.metrics)
    assert document.stack.undo_text == "Check whole plan by simulation"
    document.undo()
    assert not any(metric.simulation for metric in document.plan.metrics)
    assert not document.stack.can_undo


def test_cancel_stores_nothing(qtbot):
    document, dialog = _dialog(qtbot, None)
    before = dumps(document.plan)
    dialog.reps_box.setValue(200_000)
    with qtbot.waitSignal(dialog.ended, timeout=20_000) as blocker:
        dialog.run_button.click()
        assert dialog.running and dialog.cancel_button.isEnabled()
        dialog.cancel_button.click()
    assert blocker.args == ["cancelled"]
    assert dialog.wait()
    qtbot.waitUntil(lambda: not dialog.running)
    assert dumps(document.plan) == before
    assert not document.stack.can_undo
    assert "nothing was stored" in dialog.time_label.text()
    assert dialog.run_button.isEnabled()


def test_closing_while_running_stores_nothing(qtbot):
    document, dialog = _dialog(qtbot, None)
    before = dumps(document.plan)
    dialog.reps_box.setValue(200_000)
    dialog.run_button.click()
    dialog.reject()
    qtbot.wait(50)
    assert dumps(document.plan) == before
    assert not document.stack.can_undo


def test_bootstrap_from_the_sample_history_file(qtbot):
    # The invented, seeded Quillmoss history (samples/quillmoss-history.csv, synthetic).
    document, dialog = _dialog(qtbot, [1])
    assert dialog.history_check.isVisibleTo(dialog)
    dialog.history_check.setChecked(True)
    dialog.history_path.setText(str(sample_path().parent / "quillmoss-history.csv"))
    dialog._fill_columns()
    dialog.column_box.setCurrentText("revenue")
    assert _run(qtbot, dialog, 300) == "finished"
    stored = document.plan.metrics[1].simulation
    assert stored["model"].startswith("bootstrap")
    assert stored["test"] == "Welch t"


def test_a_bad_history_column_is_reported_and_stores_nothing(qtbot):
    document, dialog = _dialog(qtbot, [1])
    dialog.history_check.setChecked(True)
    dialog.history_path.setText(str(sample_path().parent / "quillmoss-history.csv"))
    dialog._fill_columns()
    dialog.column_box.setCurrentText("visitor")
    assert _run(qtbot, dialog, 300) == "failed"
    assert "not a number" in dialog.time_label.text()
    assert document.plan.metrics[1].simulation is None


def test_proportion_rows_offer_no_bootstrap(qtbot):
    _, dialog = _dialog(qtbot, [0])
    assert not dialog.history_check.isVisibleTo(dialog)


def test_plan_menu_has_both_checks(make_window):
    window = make_window()
    texts = [action.text() for action in window.plan_menu.actions()]
    assert "Check by &simulation…" in texts
    assert "Check whole plan by si&mulation…" in texts
    assert window.simulate_action in window.table.actions()  # the table's context menu
