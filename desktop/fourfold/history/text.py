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
    widths = [max(len(str(r[i])) for r in [header, *rows]) for i in range(len(header))]
    right = {3, 4}

    def line(cells) -> str:
        parts = [
            str(c).rjust(widths[i]) if i in right else str(c).ljust(widths[i])
            for i, c in enumerate(cells)
        ]
        return "  ".join(parts).rstrip()

    lines = [f"{Path(summary.source).name}: {summary.rows:,} rows", line(header)]
    for metric, row in zip(summary.metrics, rows, strict=True):
        lines.append(line(row))
        if metric.cap is not None:
            lines.append(f"  {metric.name}: {cap_line(metric)}")
    return "\n".join(lines)
