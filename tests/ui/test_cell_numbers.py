"""What the cell editor reads as a number, typed with key events into the real table.

The rules (README, "Typing numbers"): digits of any script and full-width forms read as their
ASCII digits and signs; an underscore never groups digits; a number a double cannot hold in
full precision (below about 2.23e-308, IEEE 754 binary64's smallest normal number, common
practice, no source) is refused with a message instead of becoming 0. A refused text leaves
the old value and says why in the status line.
"""

from __future__ import annotations

import math

import pytest
from cell_typing import type_in_cell
from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold.formatting import ParseError, parse_number


@pytest.mark.parametrize("text, key, row, expected", [
    ("１２３", "sd", 1, 123.0),            # full-width digits
    ("١٢٫٥", "sd", 1, 12.5),              # Arabic-Indic digits and decimal separator
    ("１,２３４.５", "sd", 1, 1234.5),     # full-width digits, ASCII grouping
    ("３．１％", "baseline", 0, 0.031),     # full-width point and percent, a percent cell
    ("－4", "effect", 1, -0.04),           # full-width minus, a relative effect in percent
    ("4.4", "baseline", 0, 0.044),
])
def test_digits_of_any_script_are_read_as_those_digits(make_window, qtbot, text, key, row,
                                                       expected):
    window = make_window()
    window.show()
    type_in_cell(qtbot, window, row, key, text)
    assert getattr(window.document.plan.metrics[row], key) == pytest.approx(expected,
                                                                           rel=1e-15)


@pytest.mark.parametrize("text, key, words", [
    ("1_000", "sd", "an underscore does not group digits"),
    ("1e-320", "baseline", "too close to 0 to be held"),    # a percent cell: 1e-322
    ("1e-320", "effect", "too close to 0 to be held"),
    ("1e-320", "sd", "too close to 0 to be held"),
    ("1e400", "sd", "not a finite number"),
    ("10²", "sd", "is not a number"),
])
def test_a_refused_number_keeps_the_old_value_and_says_why(make_window, qtbot, text, key,
                                                            words):
    window = make_window()
    window.show()
    row = 1
    before = getattr(window.document.plan.metrics[row], key)
    type_in_cell(qtbot, window, row, key, text, refused=True)
    assert getattr(window.document.plan.metrics[row], key) == before
    assert words in window.statusBar().currentMessage()


@settings(deadline=5000)
@given(st.text(st.sampled_from(list("0123456789١٢٣１２３.,٫٬_eE+-−%kpm ＋－％．，\u00a0\u2009²"))
               | st.characters(), max_size=14), st.booleans())
def test_typed_text_gives_a_normal_finite_number_or_a_one_line_message(text, percent):
    try:
        value = parse_number(text, percent=percent, label="Cell")
    except ParseError as error:
        message = str(error)
        assert message.startswith("Cell: ") and "\n" not in message and len(message) < 300
        return
    assert math.isfinite(value)
    assert value == 0 or abs(value) >= 2.2250738585072014e-308
