"""Plain-text rendering of a history summary (the command line's readable output)."""

from __future__ import annotations

import math
from pathlib import Path

from fourfold.history.summary import HistorySummary, MetricSummary


def number(value: float | None, digits: int = 5) -> str:
    """A figure with ``digits`` significant digits, or "–" when there is none.

    Examples
    --------
    >>> number(2.287412), number(20000.0), number(float("nan"))
    ('2.2874', '20000', '–')
    """
    if value is None or not math.isfinite(value):
        return "–"
    return f"{value:.{digits}g}"


def cap_line(metric: MetricSummary) -> str:
    """What the cap did, in words ("" when the metric is not capped)."""
    cap = metric.cap
    if cap is None:
        return ""
    how = "exact" if cap.exact else "estimated from a sample"
    return (
        f"capped at the {cap.percentile:g}th percentile ({number(cap.threshold)}, {how}): "
        f"{cap.capped:,} values lowered; variance × {number(cap.variance_ratio(metric.sd), 3)} "
        f"(sd {number(cap.sd_uncapped)} → {number(metric.sd)}, "
        f"mean {number(cap.mean_uncapped)} → {number(metric.mean)})"
    )


def summary_table(summary: HistorySummary) -> str:
    """The summary as an aligned table with one line per metric, caps spelt out below.

    Examples
    --------
    >>> from fourfold.history.summary import HistorySummary, MetricSummary
    >>> row = MetricSummary("spend", "mean", 1000, 3, 2.5, 9.25, rho=0.41, pairs=1000)
    >>> print(summary_table(HistorySummary("h.csv", 1003, (row,))))
    h.csv: 1,003 rows
    metric  kind  plan row      n  missing  baseline  sd    ρ
    spend   mean  mean      1,000        3  2.5       9.25  0.41
    """
    header = ("metric", "kind", "plan row", "n", "missing", "baseline", "sd", "ρ")
    rows = [
        (m.name, m.kind, m.plan_kind, f"{m.n:,}", f"{m.missing:,}", number(m.mean),
         number(m.sd), number(m.rho, 3))
        for m in summary.metrics
    ]
    lines = [f"{Path(summary.source).name}: {summary.rows:,} rows"]
    table = _aligned(header, rows, right={3, 4})
    lines.append(table[0])
    for metric, row in zip(summary.metrics, table[1:], strict=True):
        lines.append(row)
        if metric.cap is not None:
            lines.append(f"  {metric.name}: {cap_line(metric)}")
    if summary.reach is not None:
        lines += ["", *traffic_lines(summary)]
    return "\n".join(lines)


def _aligned(header, rows, right) -> list[str]:
    widths = [max(len(str(r[i])) for r in [header, *rows]) for i in range(len(header))]

    def line(cells) -> str:
        parts = [
            str(c).rjust(widths[i]) if i in right else str(c).ljust(widths[i])
            for i, c in enumerate(cells)
        ]
        return "  ".join(parts).rstrip()

    return [line(header), *(line(row) for row in rows)]


def reach_line(summary: HistorySummary) -> str:
    """The reach curve in one line: units after a week, two, … and the whole history."""
    reach = summary.reach
    how = "exact" if reach.exact else (
        f"HyperLogLog estimate, ±{100 * reach.relative_error:.2g} % (one standard error)")
    marks = sorted({d for d in (1, 7, 14, 21, 28) if d <= reach.days} | {reach.days})
    points = " · ".join(f"day {d}: {reach.units[d - 1]:,}" for d in marks)
    return f"Reach from {reach.start} ({how}): {points}"


def traffic_lines(summary: HistorySummary) -> list[str]:
    """The reach curve and the windowed metrics as text (after the whole-history table)."""
    lines = [reach_line(summary)]
    share = summary.windows[0].share if summary.windows else 1.0
    sample = "" if share == 1.0 else f"; from a hashed sample of 1 in {round(1 / share):,} units"
    lines.append("each unit's first d days (units whose whole window is in the history"
                 f"{sample}):")
    header = ("metric", "days", "units", "n", "missing", "mean", "sd", "ρ")
    rows, problems = [], {}
    for metric in summary.metrics:
        for window in summary.windows:
            m = window.get(metric.name)
            if m is None:
                why = window.problems.get(metric.name, "no figures")
                problems.setdefault((metric.name, why), []).append(str(window.days))
                continue
            rows.append((metric.name, window.days, f"{window.units:,}", f"{m.n:,}",
                         f"{m.missing:,}", number(m.mean), number(m.sd), number(m.rho, 3)))
    lines += _aligned(header, rows, right={1, 2, 3, 4})
    return lines + [f"  {name}, {', '.join(days)} days: {why}"
                    for (name, why), days in problems.items()]
