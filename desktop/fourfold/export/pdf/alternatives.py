"""The report's scenario sections: the alternatives considered, and what moves the duration.

"Alternatives considered" sets the base and every scenario side by side (the lines of
:func:`fourfold.export.comparison.comparison_lines`, at most :data:`PER_TABLE` scenarios beside
the base per table, the reported one in bold) and says in one plain sentence per scenario what
it changes. "What moves the duration" draws
:func:`fourfold.figures.sensitivity.paint_sensitivity` for the plan reported.
"""

from __future__ import annotations

from PySide6.QtGui import QColor

from fourfold.export import report
from fourfold.export.comparison import comparison_lines
from fourfold.export.pdf.flow import ACCENT, INK, MUTED, RULE, Flow, font
from fourfold.plan import scenarios
from fourfold.plan.comparison import Outcome, outcomes
from fourfold.plan.sensitivity import sensitivity

PER_TABLE = 4
"""Scenarios beside the base in one table (more continue in another table below)."""

LOWER, HIGHER = ACCENT, QColor("#b0532c")


def alternatives(flow: Flow, whole, reported: str | None) -> None:
    """The "Alternatives considered" section, for a plan with scenarios."""
    found = outcomes(whole)
    flow.heading("Alternatives considered")
    label = scenarios.BASE if reported is None else reported
    flow.paragraph(f"This report documents {label}. The base is the plan as entered; each "
                   "scenario changes only what is said below it, and a difference from the "
                   "base is given beside each value (− fewer, + more). A scenario that cannot "
                   "compute a primary or guardrail row is incomplete and shows no duration.",
                   font(8), MUTED, spacing=1.25)
    for start in range(1, len(found), PER_TABLE):
        chunk = [found[0], *found[start:start + PER_TABLE]]
        flow.table(_table(chunk, reported))
        flow.space(6)
    for each in found[1:]:
        text = scenarios.describe(whole, each.name)
        extra = list(each.problems)
        if not each.complete:
            extra.append("Incomplete: a primary or guardrail row cannot be computed.")
        parts = [(each.name, font(8.5, bold=True), INK, 0, 1),
                 (" ".join([text, *extra]), font(8.5), INK, 10, 5)]
        flow.keep(sum(flow.measure(t, f, indent=i, spacing=1.25, after=a)
                      for t, f, _, i, a in parts))
        for t, f, colour, indent, after in parts:
            flow.paragraph(t, f, colour, indent=indent, spacing=1.25, after=after)


def _table(found: list[Outcome], reported: str | None) -> report.Table:
    lines = comparison_lines(found)
    rows, bold = [], set()
    column = next((k for k, each in enumerate(found) if each.name == reported), None)
    for index, line in enumerate(lines):
        label = line.label if line.heading or not line.row else f"   {line.label}"
        cells = [f"{text} ({delta})" if delta else text
                 for text, delta in zip(line.cells, line.deltas, strict=True)]
        rows.append((label, *cells))
        if line.heading:
            bold.add((index, 0))
        elif column is not None:
            bold.add((index, column + 1))
    header = ("", *(each.label for each in found))
    return report.Table(header=header, rows=tuple(rows), align=("l",) * len(header),
                        bold=frozenset(bold))


def what_moves(flow: Flow, plan, result, label: str) -> None:
    """The "What moves the duration" section: the sensitivity bars of the reported plan."""
    from fourfold.figures.sensitivity import SensitivityStyle, paint_sensitivity

    found = sensitivity(plan, result=result)
    height = flow.width * (0.16 + 0.075 * max(len(found.swings), 1))
    flow.keep(height + flow.pt(80))  # the heading and its words stay with the figure
    flow.heading("What moves the duration")
    volume = ("the reach curve (every point alike)" if plan.settings.traffic == "reach"
              else "the daily units")
    flow.paragraph(f"Days the test needs ({label}) when one assumption is "
                   f"{report.number(100 * found.amount, 3)} % lower or higher than planned and "
                   "everything else stays: the binding row's baseline, sd, effect (or margin) "
                   f"and CUPED ρ, and {volume} and traffic share. The plan is most "
                   "fragile to the assumptions at the top.", font(8), MUTED, spacing=1.25)
    style = SensitivityStyle(INK, MUTED, RULE, LOWER, HIGHER, points=8.0)
    binding = f"binding: {found.binding}" if found.binding else ""
    flow.figure(height, lambda p, rect: paint_sensitivity(p, rect, found, style, binding))
