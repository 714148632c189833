"""The comparison of scenarios as text: one column per scenario, signed differences against the
base; the same lines for the window's comparison view, the PDF and ``fourfold compare``
(no Qt). The CSV of the comparison (``plan-scenarios.csv``) is written here too.

Lines: status, duration in days and weeks, total units, binding metric, then for every row
that is primary or guardrail in some scenario its units per arm (the control arm; each
treatment arm gets allocation × that), its detectable effect (given, or solved under a fixed
runtime) and its power. A difference from the base is signed with a true minus ("−14 d"); an
incomplete scenario shows "incomplete" where its duration would be, and no differences.

Examples
--------
>>> from fourfold.plan import load, sample_path
>>> from fourfold.plan.comparison import outcomes
>>> lines = comparison_lines(outcomes(load(sample_path())))
>>> duration = lines[1]
>>> duration.label, duration.cells[:2], duration.deltas[:2]
('Duration', ('35 days', '21 days'), ('', '−14 d'))
"""

from __future__ import annotations

import math
import operator
import os
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from fourfold.export import report
from fourfold.export.csv import cell, encoded
from fourfold.export.files import write_parts
from fourfold.plan import traffic
from fourfold.plan.comparison import Outcome, deciding_rows
from fourfold.plan.rules import is_margin_row

MINUS = "\u2212"


@dataclass(frozen=True)
class Line:
    """One line of the comparison.

    Attributes
    ----------
    label : str
        What the line shows ("Duration", "Units per arm", …).
    cells : tuple of str
        One per scenario, base first.
    deltas : tuple of str
        The signed difference from the base per scenario (``""`` for the base, for no
        difference and where there is none to give).
    row : str
        The metric row the line belongs to (``""`` for plan-level lines).
    heading : bool
        A line naming a metric row (its cells are empty).
    """

    label: str
    cells: tuple[str, ...]
    deltas: tuple[str, ...]
    row: str = ""
    heading: bool = False


def signed_delta(value: float, text: Callable[[float], str], unit: str = "") -> str:
    """A signed difference: ``+7 d``, ``−14 d`` (a true minus), ``""`` for none.

    Examples
    --------
    >>> signed_delta(-14.0, report.days, " d"), signed_delta(0.0, report.days, " d")
    ('−14 d', '')
    """
    if not math.isfinite(value) or value == 0:
        return ""
    sign = "+" if value > 0 else MINUS
    return f"{sign}{text(abs(value))}{unit}"


def _deltas(found: list[Outcome], values: list[float], text, unit="") -> tuple[str, ...]:
    base = values[0]
    return ("", *(signed_delta(value - base, text, unit) if each.complete and found[0].complete
                  else "" for each, value in zip(found[1:], values[1:], strict=True)))


def _plan_lines(found: list[Outcome]) -> list[Line]:
    complete = [each.complete for each in found]
    days = [each.duration_days for each in found]
    weeks = [value / 7.0 for value in days]
    totals = [each.total_units for each in found]
    incomplete = "incomplete"
    return [
        Line("Status", tuple("complete" if ok else incomplete for ok in complete),
             ("",) * len(found)),
        Line("Duration", tuple(report.duration_text(each.result) if each.complete
                               else incomplete for each in found),
             _deltas(found, days, report.days, " d")),
        Line("Weeks", tuple(report.number(value, 3) if ok else report.DASH
                            for value, ok in zip(weeks, complete, strict=True)),
             _deltas(found, weeks, lambda v: report.number(v, 3), " w")),
        Line("Total units", tuple(report.units(value) for value in totals),
             _deltas(found, totals, report.units)),
        Line("Binding metric", tuple(each.binding_name or report.DASH for each in found),
             ("",) * len(found)),
        *_traffic_line(found),
    ]


def _traffic_line(found: list[Outcome]) -> list[Line]:
    """The traffic model of each scenario, when one of them uses more than constant daily
    units; a duration past a reach curve says "extrapolated" with its stated error."""
    if not any(traffic.uses_model(each.plan.settings) for each in found):
        return []
    cells = []
    for each in found:
        settings = each.plan.settings
        text = traffic.short_text(settings)
        days = each.duration_days
        if each.complete and traffic.extrapolated(settings, days):
            error = float(traffic.model(settings).fit.error(days))
            text += f" (extrapolated ±{error * 100:.2g} %)"
        cells.append(text)
    return [Line("Traffic", tuple(cells), ("",) * len(found))]


def _effect(metric, row) -> tuple[str, float]:
    """The detectable effect as the row shows it, and the number its difference uses; for a
    margin row (a guardrail, non-inferiority) the margin it tests or the tightest it rules out,
    as "margin +10 %"."""
    if is_margin_row(metric):
        prefix, relative, absolute = "margin ", row.margin_rel, row.margin_abs
    else:
        prefix, relative, absolute = "", row.effect_rel, row.effect_abs
    if metric.relative:
        return prefix + report.percent(relative, signed=True), 100 * relative
    return prefix + report.effect_text(metric, absolute, relative=False), absolute


def _row_lines(found: list[Outcome], positions: list[dict[str, int]], row_id: str,
               label: str) -> list[Line]:
    cells: dict[str, list] = {"units": [], "effect": [], "power": []}
    numbers: dict[str, list] = {"units": [], "effect": [], "power": []}
    relative = []
    for each, position in zip(found, positions, strict=True):
        index = position.get(row_id)
        if index is None:
            for key in cells:
                cells[key].append("left out")
                numbers[key].append(math.nan)
            continue
        metric, row = each.plan.metrics[index], each.result.rows[index]
        relative.append(metric.relative)
        effect_text, effect_value = _effect(metric, row)
        for key, text, value in (("units", report.units(row.units_control), row.units_control),
                                 ("effect", effect_text, effect_value),
                                 ("power", report.probability(row.power), row.power)):
            cells[key].append(text)
            numbers[key].append(value)
    effect_unit = " pp" if relative and all(relative) else ""
    same_scale = len(set(relative)) <= 1
    return [
        Line(label, ("",) * len(found), ("",) * len(found), label, heading=True),
        Line("Units per arm", tuple(cells["units"]),
             _deltas(found, numbers["units"], report.units), label),
        Line("Detectable effect", tuple(cells["effect"]),
             _deltas(found, numbers["effect"], lambda v: report.number(v, 3), effect_unit)
             if same_scale else ("",) * len(found), label),
        Line("Power", tuple(cells["power"]),
             _deltas(found, numbers["power"], report.probability), label),
    ]


def comparison_lines(found: list[Outcome], kept: dict | None = None) -> list[Line]:
    """The comparison's lines for evaluated scenarios (base first, as
    :func:`fourfold.plan.comparison.outcomes` gives them).

    ``kept``: a dictionary the caller keeps between calls (the window's comparison view): a
    metric row's lines are made again only when its label, or in some scenario its row, the
    row's stamp, its result or the scenario's completeness, is not what it was; otherwise the
    same :class:`Line` objects come back.

    Examples
    --------
    >>> from fourfold.plan import load, sample_path
    >>> from fourfold.plan.comparison import outcomes
    >>> found, kept = outcomes(load(sample_path())), {}
    >>> first = comparison_lines(found, kept)
    >>> again = comparison_lines(found, kept)
    >>> again == first, again[-1] is first[-1]
    (True, True)
    """
    lines = _plan_lines(found)
    positions = [each.positions for each in found]
    made: dict = {}
    for row_id, label in deciding_rows(found):
        parts: list = [found[0].complete]
        for each, position in zip(found, positions, strict=True):
            index = position.get(row_id)
            parts += ((None, None, each.complete) if index is None else
                      (each.plan.metrics[index], each.result.rows[index], each.complete))
        made_of = (label, [part.stamp for part in parts[1::3] if part is not None], parts)
        earlier = None if kept is None else kept.get(row_id)
        if (earlier is not None and earlier[0][:2] == made_of[:2]
                and len(earlier[0][2]) == len(parts)
                and all(map(operator.is_, earlier[0][2], parts))):
            row_lines = earlier[1]
        else:
            row_lines = _row_lines(found, positions, row_id, label)
        made[row_id] = (made_of, row_lines)
        lines += row_lines
    if kept is not None:
        kept.clear()
        kept.update(made)
    return lines


def text_table(found: list[Outcome]) -> str:
    """The comparison as aligned text (``fourfold compare`` on a terminal).

    Examples
    --------
    >>> from fourfold.plan import load, sample_path
    >>> from fourfold.plan.comparison import outcomes
    >>> duration = text_table(outcomes(load(sample_path()))).splitlines()[2]
    >>> " ".join(duration.split())
    'Duration 35 days 21 days (−14 d) 21 days (−14 d) 21 days (−14 d) 21 days (−14 d)'
    """
    header = ["", *(each.label for each in found)]
    rows = [header]
    for line in comparison_lines(found):
        label = line.label if line.heading or not line.row else f"  {line.label}"
        rows.append([label, *(f"{text} ({delta})" if delta else text
                              for text, delta in zip(line.cells, line.deltas, strict=True))])
    widths = [max(len(row[column]) for row in rows) for column in range(len(header))]
    return "\n".join("   ".join(text.ljust(width) for text, width in
                               zip(row, widths, strict=True)).rstrip() for row in rows) + "\n"


def scenarios_path(path: os.PathLike | str) -> Path:
    """The comparison file written beside a plan CSV: ``plan.csv`` → ``plan-scenarios.csv``.

    Examples
    --------
    >>> scenarios_path("out/checkout.csv").as_posix()
    'out/checkout-scenarios.csv'
    """
    path = Path(path)
    return path.with_name(f"{path.stem}-scenarios{path.suffix or '.csv'}")


def scenario_rows(plan) -> list[list[str]]:
    """:func:`fourfold.plan.compare` as CSV cells, header first (full precision, no pandas)."""
    from fourfold.plan.comparison import outcomes, records

    found = records(outcomes(plan), plan)
    lines = [[cell(name) for name in found[0]]]
    lines += [[cell(value) for value in record.values()] for record in found]
    return lines


def write_comparison(plan, path: os.PathLike | str) -> Path:
    """Write the comparison of ``plan``'s scenarios to ``path`` (all or nothing).

    One row per scenario, base first, with the columns of :func:`fourfold.plan.compare`:
    ``scenario, status, duration_days, duration_weeks, total_units, binding_metric, changes,
    notes`` and per deciding row ``NAME: units_control``, ``NAME: units_treatment_per_arm``,
    ``NAME: effect_abs``, ``NAME: effect_rel_frac``, ``NAME: power_frac``.

    Raises
    ------
    fourfold.export.files.ExportError
        When the file cannot be written; it is then left as it was.
    """
    path = Path(path)
    write_parts({path: encoded(path, scenario_rows(plan))})
    return path
