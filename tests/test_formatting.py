"""Numbers as the table shows and reads them (conventions of the trade, no single source)."""

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold.formatting import (
    ParseError,
    format_count,
    format_number,
    format_percent,
    parse_number,
)


@pytest.mark.parametrize(
    ("text", "percent", "expected"),
    [
        ("1,234", False, 1234.0),
        ("1,234,567.5", False, 1234567.5),
        ("1e6", False, 1e6),
        ("42k", False, 42000.0),
        ("1.5M", False, 1.5e6),
        ("3.1%", False, 0.031),
        ("3.1 %", False, 0.031),
        ("3.1", True, 0.031),
        ("+5.0 %", True, 0.05),
        ("\u22120.5", False, -0.5),
        ("-2 pp", False, -0.02),
        (" 0.05 ", False, 0.05),
    ],
)
def test_parse_accepts_what_people_type(text, percent, expected):
    assert parse_number(text, percent=percent) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text", ["", "abc", "1,2", "12,34", "1..2", "inf", "nan", "%", "5 kg"])
def test_parse_refuses_with_the_column_name(text):
    with pytest.raises(ParseError, match="Baseline"):
        parse_number(text, label="Baseline")


def test_display_texts():
    assert format_number(1234567.8) == "1,234,568"
    assert format_number(0.0123456) == "0.0123"
    assert format_number(-3.5, signed=True) == "\u22123.5"
    assert format_number(2.0, signed=True) == "+2"
    assert format_count(10.0) == "10"
    assert format_count(10.01) == "11"
    assert format_percent(0.05, signed=True) == "+5.0 %"
    assert format_percent(-0.0125, signed=True) == "\u22121.25 %"
    assert format_number(math.nan) == format_count(None) == format_percent(math.inf) == "—"


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=-1e9, max_value=1e9, allow_nan=False).filter(
    lambda x: x == 0 or abs(x) > 1e-6))
def test_shown_numbers_read_back_within_display_precision(value):
    shown = format_number(value, sig=4)
    assert parse_number(shown) == pytest.approx(value, rel=5e-4, abs=1e-9)


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=-5, max_value=5, allow_nan=False).filter(
    lambda x: x == 0 or abs(x) > 1e-5))
def test_shown_percentages_read_back_in_percent_cells(value):
    shown = format_percent(value, signed=True)
    assert parse_number(shown, percent=True) == pytest.approx(value, rel=5e-3, abs=1e-7)
