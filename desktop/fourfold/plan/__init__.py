"""The plan document: settings and metric rows, their rules, files, evaluation and undo.

Qt-free (the window and the exports build on it); pandas is imported only by
:func:`evaluate`.
"""

from fourfold.plan.evaluation import PlanResult, RowResult, compute, evaluate
from fourfold.plan.fields import (
    CHOICES,
    METRIC_FIELDS,
    SETTINGS_FIELDS,
    PlanError,
    validate_field,
    validate_metric,
    validate_settings,
)
from fourfold.plan.model import Metric, Plan, Settings
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
    "Settings",
    "compute",
    "dumps",
    "evaluate",
    "load",
    "loads",
    "sample_path",
    "save",
    "validate_field",
    "validate_metric",
    "validate_settings",
]
