"""The computation engine: sample size, power, detectable effect and α for A/B tests.

Pure numpy and ``scipy.special`` (``scipy.stats`` is never imported here), vectorised over
arrays.  See :mod:`fourfold.engine.solve` for the conventions.

Examples
--------
>>> from fourfold import engine
>>> round(float(engine.sample_size("mean", 0.0, 1.0, sd=1.0)), 2)
15.7
"""

from . import dunnett, quantile, ratio
from .catalog import ALTERNATIVES, KINDS, METHODS
from .design import (
    adjusted_alpha,
    allocation_ratio,
    duration_days,
    total_units,
    variance_factor,
)
from .solve import (
    detectable_effect,
    detectable_margin,
    power,
    problems,
    sample_size,
    significance_level,
    values_and_reasons,
)

__all__ = [
    "ALTERNATIVES",
    "KINDS",
    "METHODS",
    "adjusted_alpha",
    "allocation_ratio",
    "detectable_effect",
    "detectable_margin",
    "dunnett",
    "duration_days",
    "power",
    "problems",
    "quantile",
    "ratio",
    "sample_size",
    "significance_level",
    "total_units",
    "values_and_reasons",
    "variance_factor",
]
