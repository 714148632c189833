"""The simulation's marks in the window: the table cell texts and the point on the power plot.

The reference for every number is the stored check (fourfold.simulation.check_metric, tested
against statsmodels 0.15.0 and published tables in tests/simulation); the invented Quillmoss
demo plan provides the rows.
"""

from __future__ import annotations

import math

import pytest

from fourfold.figures.simulation_marks import show_simulation
from fourfold.plan import load, sample_path
from fourfold.plan.evaluation import compute
from fourfold.plan.tradeoffs import tradeoffs
from fourfold.simulation import check_metric
from fourfold.ui import simulation_cells, theme
from fourfold.ui.figure_grid import FigureGrid


@pytest.fixture
def checked():
    plan = load(sample_path())
    plan.metrics[1].simulation = check_metric(plan, 1, reps=400, seed=2)
    return plan


def _cell(plan, index, result):
    return plan.metrics[index], plan.settings, None if result is None else result.rows[index]


def test_cell_text_tooltip_and_sort_value(checked):
    result = compute(checked)
    check = checked.metrics[1].simulation
    shown = simulation_cells.text(*_cell(checked, 1, result))
    assert shown.startswith(f"{100 * check['power']:.1f} %")
    assert shown.endswith(simulation_cells.MARKS[check["verdict"]])
    assert simulation_cells.text(*_cell(checked, 0, result)) == ""
    assert "Check by simulation" in simulation_cells.tooltip(*_cell(checked, 0, result))
    tip = simulation_cells.tooltip(*_cell(checked, 1, result))
    assert "400 replicates, seed 2" in tip and check["message"] in tip
    assert simulation_cells.number(checked.metrics[1]) == check["power"]
    assert math.isnan(simulation_cells.number(checked.metrics[0]))
    assert simulation_cells.colour(theme.tints(False), *_cell(checked, 1, result)) is None


def test_cell_marks_a_changed_row_stale(checked):
    checked.metrics[1].baseline = 2.6
    result = compute(checked)
    assert simulation_cells.text(*_cell(checked, 1, result)).endswith("(stale)")
    assert "run it again" in simulation_cells.tooltip(*_cell(checked, 1, result))
    tints = theme.tints(False)
    assert simulation_cells.colour(tints, *_cell(checked, 1, result)) == tints.muted


def test_flagged_check_is_flagged(checked):
    checked.metrics[1].simulation = dict(checked.metrics[1].simulation, verdict="below")
    result = compute(checked)
    tints = theme.tints(False)
    assert simulation_cells.colour(tints, *_cell(checked, 1, result)) == tints.problem
    assert simulation_cells.text(*_cell(checked, 1, None)).endswith("⚠")


def test_power_plot_shows_the_point_with_its_interval(qtbot, checked):
    result = compute(checked)
    grid = FigureGrid()
    qtbot.addWidget(grid)
    grid.set_tradeoffs(tradeoffs(checked, 1, result))
    show_simulation(grid, checked, result, 1)
    mark = grid.simulation_mark
    check = checked.metrics[1].simulation
    x, y = mark.dot.getData()
    figure = grid.shown.power
    units = figure.point[1]
    assert x[0] == pytest.approx(100 * check["power"])
    assert y[0] == pytest.approx(math.log10(units) if figure.y_log else units)
    assert mark.bar.opts["left"][0] == pytest.approx(100 * (check["power"] - check["low"]))
    assert mark.bar.opts["right"][0] == pytest.approx(100 * (check["high"] - check["power"]))
    assert mark.label.isVisible() and "simulated" in mark.label.toPlainText()
    grid.set_tradeoffs(tradeoffs(checked, 0, result))
    show_simulation(grid, checked, result, 0)
    assert len(mark.dot.getData()[0]) == 0 and not mark.label.isVisible()
