"""Monte Carlo and bootstrap checks of a plan's closed-form power.

:func:`simulate_power` simulates an experiment many times and runs its actual final test;
:func:`fourfold.simulation.check.check_metric` does it for a metric row of a plan and returns
the dict stored in ``Metric.simulation``. No Qt here; the window runs these in a worker.
"""

from fourfold.simulation.intervals import wilson_interval
from fourfold.simulation.power import HISTORY_EFFECTS, SimulationResult, simulate_power
from fourfold.simulation.streams import BLOCK, SimulationCancelled

__all__ = [
    "BLOCK",
    "HISTORY_EFFECTS",
    "SimulationCancelled",
    "SimulationResult",
    "simulate_power",
    "wilson_interval",
]
