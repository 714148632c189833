"""The boundaries figure: it shows what the plan computes, for one row, and paints anywhere.

Reference values: the Pocock constant C_P(3, 0.05) = 2.289, Jennison & Turnbull (2000)
Table 2.1 — from memory.
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QColor, QImage, QPainter
from PySide6.QtTest import QTest

from fourfold.figures.boundaries import FIXED_TEXT, BoundaryStyle, paint_boundaries
from fourfold.plan.evaluation import compute
from fourfold.plan.model import Metric, Plan, Settings
from fourfold.plan.sequential import row_looks
from fourfold.ui.boundaries_plot import BoundariesView, looks_text
from fourfold.ui.columns import COLUMNS

pytestmark = pytest.mark.qt


def _plan(**settings) -> Plan:
    metric = Metric(name="Checkout conversion", role="primary", kind="proportion",
                    baseline=0.031, effect=0.05, relative=True)
    return Plan(Settings(daily_units=20_000, **settings), [metric])


def _ink(image: QImage, colour: QColor) -> int:
    """Pixels close to ``colour`` (the curve and its markers)."""
    count = 0
    for y in range(0, image.height(), 2):
        for x in range(0, image.width(), 2):
            pixel = image.pixelColor(x, y)
            if (abs(pixel.red() - colour.red()) + abs(pixel.green() - colour.green())
                    + abs(pixel.blue() - colour.blue())) < 30:
                count += 1
    return count


def test_fixed_design_shows_a_hint(qtbot):
    view = BoundariesView()
    qtbot.addWidget(view)
    plan = _plan()
    view.show_row(plan, compute(plan), 0)
    assert view.looks == ()
    assert view.toolTip() == "" and view.caption == ""
    assert FIXED_TEXT.startswith("One look")


def test_three_pocock_looks_in_the_tooltip(qtbot):
    view = BoundariesView()
    qtbot.addWidget(view)
    plan = _plan(looks=3, spending="pocock", whole_weeks=False)  # equally spaced looks
    view.show_row(plan, compute(plan), 0)
    lines = view.toolTip().splitlines()
    assert len(lines) == 3
    assert all("|z| ≥ 2.29" in line for line in lines)  # C_P(3, 0.05) = 2.289, J&T Table 2.1
    assert view.looks[-1].day == compute(plan).rows[0].days
    # Armitage, McPherson & Rowe (1969): three looks at 0.05 give 0.107 — from memory.
    assert view.caption.startswith("Checking 3 times at p < 0.05 unadjusted gives a "
                                   "false-positive rate of 11 %")


def test_futility_appears_in_words_and_one_sided_uses_z():
    plan = _plan(looks=4, futility=True)
    plan.metrics[0].alternative = "greater"
    text = looks_text(row_looks(plan, compute(plan), 0), two_sided=False)
    assert text.count("or z <") == 4
    assert "|z|" not in text


def test_paint_draws_the_curves(qtbot):
    plan = _plan(looks=5, futility=True)
    looks = row_looks(plan, compute(plan), 0)
    style = BoundaryStyle(QColor("#000000"), QColor("#777777"), QColor("#dddddd"),
                          QColor("#0000ff"), QColor("#ff0000"))
    drawn = {}
    for name, content in (("empty", ()), ("looks", looks)):
        image = QImage(600, 300, QImage.Format.Format_RGB32)
        image.fill(QColor("#ffffff"))
        painter = QPainter(image)
        paint_boundaries(painter, QRectF(0, 0, 600, 300), content, style, "Boundaries")
        painter.end()
        drawn[name] = (_ink(image, style.efficacy), _ink(image, style.futility))
    assert drawn["empty"] == (0, 0)
    assert drawn["looks"][0] > 50 and drawn["looks"][1] > 50


def test_widget_renders_offscreen(qtbot):
    view = BoundariesView()
    qtbot.addWidget(view)
    view.resize(500, 260)
    plan = _plan(looks=6)
    view.show_row(plan, compute(plan), 0)
    image = view.grab().toImage()
    assert image.width() == 500
    view.show_row(plan, None, None)
    assert view.looks == ()


def test_window_shows_the_figure_only_with_interim_looks(make_window):
    from fourfold.plan.commands import SetSetting

    window = make_window(_plan())
    window.show()
    assert not window.boundaries.isVisible()
    window.document.apply(SetSetting("looks", 3))
    window.document.recompute_now()
    assert window.boundaries.isVisible()
    assert len(window.boundaries.looks) == 3
    expected = window.document.result.rows[0].days_expected_h1
    assert window.summary.texts()[0].endswith(f"at most, {expected:.2g} days expected")
    assert not window.table.isColumnHidden(
        next(i for i, c in enumerate(COLUMNS) if c.key == "look_days"))
    window.document.undo()
    window.document.recompute_now()
    assert not window.boundaries.isVisible()
    assert "at most" not in window.summary.texts()[0]
    assert window.table.isColumnHidden(
        next(i for i, c in enumerate(COLUMNS) if c.key == "look_days"))


def test_the_caption_follows_the_looks_and_alpha_typed(make_window):
    """The caption's price of peeking is worked out again when the looks or α typed in the
    settings change, and only then: the false-positive rate of each pair once (Armitage,
    McPherson & Rowe (1969): 3 looks at 0.05 give 0.107, 4 looks 0.126 — from memory)."""
    from unittest import mock

    from fourfold.plan import sequential

    window = make_window(_plan())
    window.show()
    fields = window.settings_panel.fields

    def typed(field: str, text: str) -> None:
        fields[field].setFocus()
        fields[field].selectAll() if field == "alpha" else fields[field].lineEdit().selectAll()
        QTest.keyClicks(fields[field], text)
        QTest.keyClick(fields[field], Qt.Key.Key_Return)
        window.document.recompute_now()

    sequential.peeking_text.cache_clear()
    with mock.patch.object(sequential.sequential, "peeking_alpha",
                           wraps=sequential.sequential.peeking_alpha) as asked:
        typed("looks", "3")
        assert window.boundaries.caption.startswith("Checking 3 times at p < 0.05 unadjusted "
                                                    "gives a false-positive rate of 11 %")
        typed("alpha", "0.01")
        assert window.boundaries.caption.startswith("Checking 3 times at p < 0.01")
        typed("looks", "4")
        assert window.boundaries.caption.startswith("Checking 4 times at p < 0.01")
        typed("alpha", "0.05")
        assert window.boundaries.caption.startswith("Checking 4 times at p < 0.05 unadjusted "
                                                    "gives a false-positive rate of 13 %")
        calls = asked.call_count
        window.document.recompute_now()
        window.table.setCurrentIndex(window.model.index(0, 1))
        assert asked.call_count == calls == 4


def test_a_boundary_above_the_axes_is_marked_beyond_them_with_its_z(qtbot):
    # 12 equally spaced O'Brien–Fleming-type looks: the first boundaries lie above z 6, the
    # top of the axes. A dot at the top would read as z 6; each such look gets the upward
    # marker, and its label (z, not p) sits beside it.
    plan = _plan(looks=12, whole_weeks=False)
    looks = row_looks(plan, compute(plan), 0)
    high = [k for k, look in enumerate(looks) if look.z_efficacy > 6.0]
    assert high and high == list(range(len(high)))  # the earliest looks, not the last
    style = BoundaryStyle(QColor("#000000"), QColor("#777777"), QColor("#dddddd"),
                          QColor("#0000ff"), QColor("#ff0000"))
    image = QImage(700, 320, QImage.Format.Format_RGB32)
    image.fill(QColor("#ffffff"))
    painter = QPainter(image)
    drawn = paint_boundaries(painter, QRectF(0, 0, 700, 320), looks, style, "Boundaries")
    painter.end()
    markers = [box for kind, box in drawn if kind == "beyond"]
    labels = [box for kind, box in drawn if kind == "label"]
    assert len(markers) == len(high)
    for marker in markers:
        near = marker.adjusted(-12, -22, 12, 22)
        assert any(near.intersects(label) for label in labels)
