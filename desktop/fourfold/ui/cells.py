"""What one cell of the plan table says: its text, its raw number and how typed text is read.

Qt-free helpers of :mod:`fourfold.ui.table_model`. A cell's unit depends on its row: a
proportion's baseline is shown in percent, an effect or margin of a relative row in percent of the
baseline, a proportion's absolute effect in percentage points; everything else in the metric's
own unit.
"""

from __future__ import annotations

import math

from fourfold.formatting import (
    DASH,
    format_count,
    format_days,
    format_number,
    format_percent,
    parse_number,
)
from fourfold.plan import Metric, Settings
from fourfold.plan.rules import is_margin_row

LABELS = {
    "sample_size": "sample size",
    "detectable_effect": "detectable effect",
    "power": "power",
    "significance_level": "α",
    "detectable_margin": "margin ruled out",
    "two-sided": "two-sided",
    "greater": "greater",
    "less": "less",
}

EFFECT_KEYS = ("effect", "margin", "detectable")
LEVEL_KEYS = ("quantile_level", "second_level")
OWN_UNIT_KEYS = ("baseline", "sd", "effect", "margin", "detectable", "second_value")
"""Cells in the metric's own unit: its unit text follows their number on screen."""

def label(value: str) -> str:
    """A choice as the table shows it (``"sample_size"`` → ``"sample size"``)."""
    return LABELS.get(value, value)


def unit(metric: Metric, key: str) -> str | None:
    """The percent unit of a cell: ``"%"``, ``"pp"`` or ``None`` (the metric's own unit).

    Examples
    --------
    >>> unit(Metric(kind="proportion", relative=False), "effect")
    'pp'
    >>> unit(Metric(kind="mean", relative=True), "margin")
    '%'
    >>> unit(Metric(kind="mean", relative=False), "baseline") is None
    True
    """
    if key == "baseline":
        return "%" if metric.kind == "proportion" else None
    if key in LEVEL_KEYS:
        return "%"
    if key in EFFECT_KEYS:
        if metric.relative:
            return "%"
        return "pp" if metric.kind == "proportion" else None
    return None


def show_value(metric: Metric, key: str, value: float | None, with_unit: bool = False) -> str:
    """Text of a number in a cell of ``metric``'s row (inputs and the detectable effect).

    With ``with_unit`` a number in the metric's own unit is followed by the row's unit text
    (what the table shows; an editor and the clipboard get the bare number).

    Examples
    --------
    >>> show_value(Metric(kind="proportion", relative=True), "effect", 0.05)
    '+5.0 %'
    >>> show_value(Metric(kind="mean"), "baseline", 1234.6)
    '1,235'
    >>> show_value(Metric(kind="mean", unit="ms", relative=False), "margin", 20.0, True)
    '+20 ms'
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "" if key not in ("detectable",) else DASH
    suffix = unit(metric, key)
    signed = key in EFFECT_KEYS
    own = f" {metric.unit}" if with_unit and metric.unit and key in OWN_UNIT_KEYS else ""
    if value == 0 and key in EFFECT_KEYS:
        return "0" + (own if suffix is None else "")
    if suffix is not None:
        return format_percent(value, signed=signed and value != 0, suffix=suffix)
    if key in ("n",):
        return format_count(value)
    return format_number(value, sig=4 if key in ("baseline", "sd") else 3,
                         signed=signed and value != 0) + own


def read_value(metric: Metric, key: str, text: str, header: str) -> float:
    """Read typed text for a number cell of ``metric``'s row (percent cells take percent).

    Raises
    ------
    fourfold.formatting.ParseError
        With a message naming the column.

    Examples
    --------
    >>> read_value(Metric(kind="proportion"), "baseline", "3.1", "Baseline")
    0.031
    >>> read_value(Metric(kind="mean"), "baseline", "3.1%", "Baseline")
    0.031
    """
    return parse_number(text, percent=unit(metric, key) is not None, label=header)


def _margin(metric: Metric, row) -> float:
    """The margin a row was computed with (its own, or the tightest it rules out)."""
    return row.margin_rel if metric.relative else row.margin_abs


def output_text(metric: Metric, settings: Settings, row, key: str) -> str:
    """Text of a computed cell from the row's result (``row`` is a ``RowResult`` or None)."""
    if row is None:
        return DASH
    if key in ("units_control", "units_treatment", "units_total"):
        return format_count(getattr(row, key))
    if key == "days":
        return format_days(row.days)
    if key == "detectable":
        if is_margin_row(metric):
            return "margin " + show_value(metric, "detectable", _margin(metric, row),
                                          with_unit=True)
        value = row.effect_rel if metric.relative else row.effect_abs
        return show_value(metric, "detectable", value, with_unit=True)
    if key == "power_out":
        return format_number(row.power, sig=3)
    if key == "alpha_out":
        return format_number(row.alpha, sig=3)
    if key == "units_expected_h1":
        return format_count(row.units_expected_h1)
    if key == "days_expected_h1":
        return format_days(row.days_expected_h1)
    if key == "look_days":
        if not row.look_days:
            return DASH
        return ", ".join(format_days(day) for day in row.look_days)
    raise KeyError(key)


def output_number(metric: Metric, row, key: str) -> float:
    """Raw number of a computed cell for sorting (nan when missing)."""
    if row is None:
        return math.nan
    if key == "look_days":
        return float(row.look_days[0]) if row.look_days else math.nan
    if key == "detectable" and is_margin_row(metric):
        return _margin(metric, row)
    attribute = {
        "power_out": "power",
        "alpha_out": "alpha",
        "detectable": "effect_rel" if metric.relative else "effect_abs",
    }.get(key, key)
    value = getattr(row, attribute)
    return math.nan if value is None else float(value)
