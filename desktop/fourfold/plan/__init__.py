"""The plan document: settings and metric rows, their rules, files, evaluation and undo.

A plan is its base and any number of scenarios (:mod:`fourfold.plan.scenarios`);
:func:`evaluate` evaluates the base or one scenario, :func:`compare` sets them side by side.
Qt-free (the window and the exports build on it); pandas is imported only by
:func:`evaluate` and :func:`compare`.
"""

from fourfold.plan.comparison import compare, evaluate
from fourfold.plan.evaluation import PlanResult, RowResult, compute
from fourfold.plan.fields import (
    CHOICES,
    METRIC_FIELDS,
    SETTINGS_FIELDS,
    PlanError,
    validate_field,
    validate_metric,
    validate_settings,
)
from fourfold.plan.model import Metric, Plan, Scenario, Settings
from fourfold.plan.scenarios import effective
from fourfold.plan.storage import dumps, load, loads, sample_path, save

__all__ = [
    "CHOICES",
    "METRIC_FIELDS",
    "SETTINGS_FIELDS",
    "Metric",
    "Plan",
    "PlanError",
    "PlanResult",
    "RowResult",
    "Scenario",
    "Settings",
    "compare",
    "compute",
    "dumps",
    "effective",
    "evaluate",
    "load",
    "loads",
    "sample_path",
    "save",
    "validate_field",
    "validate_metric",
    "validate_settings",
]
