"""Baselines, variances and ρ from history, and the traffic a test will see (no Qt).

Read a pre-period file — CSV, or Parquet when pyarrow is installed — in chunks with
numerically stable, mergeable moments (:mod:`~fourfold.history.moments`), with optional
capping of heavy tails (:mod:`~fourfold.history.tail`); or build the same query for a warehouse
in its SQL dialect (:mod:`~fourfold.history.sql`), run it there
(:mod:`~fourfold.history.connect`, SQLAlchemy) or over local files with DuckDB
(:mod:`~fourfold.history.duckdb_files`), and read its result back
(:mod:`~fourfold.history.warehouse`). Either way each metric ends as a :class:`MetricSummary`
whose :meth:`~MetricSummary.plan_fields` fill a metric row.

Reach curve and windowed moments
--------------------------------
When rows are visits (or days) of units, name the unit and time columns and the same pass also
follows each unit from its first day (:mod:`~fourfold.history.exposure`):

>>> import tempfile, pathlib
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> rows = ["visitor,time,spend", "a,2026-03-01 09:00,2.0", "b,2026-03-01 10:00,0.0",
...         "a,2026-03-02 11:00,3.0", "c,2026-03-03 12:00,1.0", "b,2026-03-03 20:00,4.0"]
>>> _ = (folder / "visits.csv").write_text("\\n".join(rows) + "\\n")
>>> summary = read_history(folder / "visits.csv", [ColumnMap("mean", "spend")],
...                        unit="visitor", time="time")
>>> summary.reach.units, summary.reach.start, summary.reach.exact
((2, 2, 3), '2026-03-01', True)
>>> [(w.days, w.units) for w in summary.windows]
[(3, 2)]
>>> summary.window("spend", 3).mean    # a: 2 + 3, b: 0 + 4, over their first 3 days
4.5

* ``summary.reach`` — :class:`ReachCurve`: ``units[k]`` distinct units first seen on days
  1…k+1 (day 1 = the first day in the data), ``days``, ``start``, ``exact`` and, for a
  HyperLogLog estimate, its ``relative_error``; ``to_list()`` gives the JSON form.
* ``summary.windows`` — one :class:`WindowSummary` per window (7, 14, 21, 28 days that fit,
  and the history's length), each with ``days``, ``units`` (units whose whole window is in the
  history), per-metric :class:`MetricSummary` (``window.get(name)``, None where the figures
  cannot size a test, ``window.problems[name]`` says why) and ``share`` (1, or the hashed
  sample's share past the memory budget); ``summary.window(name, days)`` picks one.
* :func:`~fourfold.history.sources.summarise` chooses the engine (streaming or DuckDB);
  :func:`~fourfold.history.warehouse.read_warehouse_rows` reads a warehouse's result with the
  same fields. The traffic model (units → days) builds on these.
"""

from fourfold.history.errors import HistoryCancelled, HistoryError
from fourfold.history.exposure import ReachCurve, WindowSummary, window_days
from fourfold.history.guess import guess_mapping
from fourfold.history.importer import read_history
from fourfold.history.moments import CoMoments, Moments
from fourfold.history.sources import summarise
from fourfold.history.summary import (
    HISTORY_KINDS,
    CapSummary,
    ColumnMap,
    HistorySummary,
    MetricSummary,
    Tally,
)
from fourfold.history.tail import TailEstimate, TailSketch
from fourfold.history.warehouse import (
    read_warehouse_file,
    read_warehouse_result,
    read_warehouse_rows,
    warehouse_sql,
)

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
    "ReachCurve",
    "Tally",
    "TailEstimate",
    "TailSketch",
    "WindowSummary",
    "guess_mapping",
    "read_history",
    "read_warehouse_file",
    "read_warehouse_result",
    "read_warehouse_rows",
    "summarise",
    "warehouse_sql",
    "window_days",
]
