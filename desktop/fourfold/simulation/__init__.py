"""Monte Carlo and bootstrap checks of a plan's closed-form power.

:func:`simulate_power` simulates an experiment many times and runs its actual final test;
:func:`check_metric` and :func:`check_plan` do it for the metric rows of a plan and return the
dicts stored in ``Metric.simulation``. No Qt here; the window runs these in a worker thread.
"""

from fourfold.simulation.check import (
    PlanCheck,
    check_metric,
    check_plan,
    is_stale,
    message,
    row_is_stale,
    verdict,
)
from fourfold.simulation.intervals import wilson_interval
from fourfold.simulation.power import HISTORY_EFFECTS, SimulationResult, simulate_power
from fourfold.simulation.streams import BLOCK, SimulationCancelled

__all__ = [
    "BLOCK",
    "HISTORY_EFFECTS",
    "PlanCheck",
    "SimulationCancelled",
    "SimulationResult",
    "check_metric",
    "check_plan",
    "is_stale",
    "message",
    "row_is_stale",
    "simulate_power",
    "verdict",
    "wilson_interval",
]
