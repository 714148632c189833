"""The plots' view ranges: steady under small edits of the row on show, re-fitted when the data
leave them, shrink well inside them, or another row is shown (offscreen Qt).

The checks compare the view boxes with the curve data on show (the panel's own geometry); no
outside source is involved.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from fourfold.plan.evaluation import compute
from fourfold.plan.model import Metric, Plan, Settings
from fourfold.ui.plots import PlotPanel

pytestmark = pytest.mark.qt

FIGURES = ("effect", "power", "alpha")  # units on y; the runtime figure clips its steep start


def _plan(sd: float) -> Plan:
    return Plan(Settings(daily_units=42_000),
                [Metric(name="Spend", kind="mean", baseline=2.35, sd=sd, effect=0.04,
                        relative=True),
                 Metric(name="Orders", kind="proportion", baseline=0.031, effect=0.05,
                        relative=True)])


def _show(qtbot, panel, plan, index):
    before = panel.tradeoffs
    panel.show_row(plan, compute(plan), index)
    qtbot.waitUntil(lambda: panel.tradeoffs is not before, timeout=2000)


def _ranges(panel):
    return {name: tuple(map(tuple, panel.grid.plots[name].item.vb.viewRange()))
            for name in panel.grid.plots}


def _y_view(panel, name):
    """The solid and dashed curves' y values in view coordinates (log10 on log axes)."""
    plot = panel.grid.plots[name]
    values = []
    for name in ("curve", "neighbour"):
        _, y = plot.view_points(name)
        values.append(np.asarray(y, dtype=float))
    y = np.concatenate(values)
    return y[np.isfinite(y)]


def _holds(panel, name) -> bool:
    low, high = panel.grid.plots[name].item.vb.viewRange()[1]
    y = _y_view(panel, name)
    return bool(low <= y.min() and y.max() <= high)


def test_a_small_edit_keeps_every_range(qtbot, panel):
    _show(qtbot, panel, _plan(14.8), 0)
    before = _ranges(panel)
    _show(qtbot, panel, _plan(14.9), 0)  # units grow by 1.4 %
    assert _ranges(panel) == before
    for name in FIGURES:
        assert _holds(panel, name), name


def test_data_leaving_the_range_refit_it(qtbot, panel):
    _show(qtbot, panel, _plan(14.8), 0)
    before = _ranges(panel)
    _show(qtbot, panel, _plan(44.4), 0)  # units × 9: the curves leave the old range
    after = _ranges(panel)
    for name in FIGURES:
        assert after[name][1] != before[name][1], name
        assert _holds(panel, name), name


def test_data_shrinking_well_inside_the_range_refit_it(qtbot, panel):
    _show(qtbot, panel, _plan(14.8), 0)
    low, high = panel.grid.plots["power"].item.vb.viewRange()[1]
    # the same curves drawn on an 11-fold taller range: they fill under half of it
    plot = panel.grid.plots["power"]
    plot._set_range((plot._range[0], (low - 5.0 * (high - low), high + 5.0 * (high - low))))
    _show(qtbot, panel, _plan(14.81), 0)
    new_low, new_high = plot.item.vb.viewRange()[1]
    assert new_high - new_low < (high - low) * 1.1
    assert _holds(panel, "power")


def test_another_row_is_fitted_afresh(qtbot, panel):
    plan = _plan(14.8)
    _show(qtbot, panel, plan, 0)
    _show(qtbot, panel, plan, 1)
    fresh = PlotPanel()
    qtbot.addWidget(fresh)
    fresh.resize(720, 640)
    fresh.show()
    _show(qtbot, fresh, dataclasses.replace(plan), 1)
    assert _ranges(panel) == _ranges(fresh)


def test_data_growing_step_by_step_re_range_only_now_and_then(qtbot, panel):
    # An effect typed or dragged step by step: the units grow 3 % a step. Each re-range
    # leaves room to grow on, so eight steps re-range each figure at most three times.
    sd = 14.8
    _show(qtbot, panel, _plan(sd), 0)
    changes = dict.fromkeys(FIGURES, 0)
    before = _ranges(panel)
    for _ in range(8):
        sd *= 1.015  # units ∝ sd²: about 3 % a step
        _show(qtbot, panel, _plan(sd), 0)
        after = _ranges(panel)
        for name in FIGURES:
            changes[name] += after[name][1] != before[name][1]
            assert _holds(panel, name), name
        before = after
    assert max(changes.values()) <= 3, changes
