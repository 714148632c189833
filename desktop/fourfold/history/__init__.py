"""Baselines, variances and ρ from per-unit history (no Qt).

Read a pre-period file of one row per unit — CSV, or Parquet when pyarrow is installed — in
chunks with numerically stable, mergeable moments (:mod:`~fourfold.history.moments`), with
optional capping of heavy tails (:mod:`~fourfold.history.tail`); or generate portable SQL for
a warehouse and read its result back (:mod:`~fourfold.history.warehouse`). Either way each
metric ends as a :class:`MetricSummary` whose :meth:`~MetricSummary.plan_fields` fill a metric
row.
"""

from fourfold.history.errors import HistoryCancelled, HistoryError
from fourfold.history.guess import guess_mapping
from fourfold.history.importer import read_history
from fourfold.history.moments import CoMoments, Moments
from fourfold.history.summary import (
    HISTORY_KINDS,
    CapSummary,
    ColumnMap,
    HistorySummary,
    MetricSummary,
    Tally,
)
from fourfold.history.tail import TailEstimate, TailSketch
from fourfold.history.warehouse import read_warehouse_file, read_warehouse_result, warehouse_sql

__all__ = [
    "HISTORY_KINDS",
    "CapSummary",
    "CoMoments",
    "ColumnMap",
    "HistoryCancelled",
    "HistoryError",
    "HistorySummary",
    "MetricSummary",
    "Moments",
    "Tally",
    "TailEstimate",
    "TailSketch",
    "guess_mapping",
    "read_history",
    "read_warehouse_file",
    "read_warehouse_result",
    "warehouse_sql",
]
