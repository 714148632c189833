"""Field rules of the plan: choices, ranges, normalisation (rules of the trade, no outside source).

The ranges are Fourfold's own choices, checked here at their edges; the engine's names are the
other half of the contract, checked against ``fourfold.engine`` itself.
"""

import math

import numpy as np
import pytest
from stored_checks import STORED_CHECK

from fourfold import engine
from fourfold.engine import sequential
from fourfold.errors import FourfoldError
from fourfold.plan import (
    CHOICES,
    METRIC_FIELDS,
    SETTINGS_FIELDS,
    Metric,
    Plan,
    PlanError,
    Settings,
    validate_field,
    validate_metric,
    validate_settings,
)


def test_choices_match_the_engine():
    assert CHOICES["kind"] == engine.KINDS
    assert CHOICES["method"] == engine.METHODS
    assert CHOICES["alternative"] == engine.ALTERNATIVES
    assert CHOICES["spending"] == sequential.SPENDING


def test_every_field_has_a_rule():
    for name in METRIC_FIELDS:
        validate_field(name, getattr(Metric(), name))
    for name in SETTINGS_FIELDS:
        validate_field(name, getattr(Settings(), name), settings=True)


def test_plan_error_is_a_user_error_and_a_value_error():
    with pytest.raises(FourfoldError) as caught:
        validate_field("power", 1.0)
    assert isinstance(caught.value, ValueError)
    assert caught.value.field == "power"


@pytest.mark.parametrize(
    ("field", "value", "settings"),
    [
        ("alpha", 0.0, True), ("alpha", 0.5, True), ("alpha", None, True),
        ("alpha", -0.01, False), ("power", 1.0, False), ("power", 0.0, True),
        ("arms", 0, True), ("arms", 21, True), ("arms", 1.5, True), ("looks", 0, True),
        ("ratio", 0.0, True), ("share", 0.0, True), ("share", 1.01, True),
        ("daily_units", 0.0, True), ("runtime_days", -7.0, True),
        ("runtime_days", 10.5, True), ("runtime_days", 0.0, True), ("runtime_days", 3651, True),
        ("sd", 0.0, False), ("rho", 1.0, False), ("rho", -1.0, False),
        ("cluster_size", 0.5, False), ("icc", 1.5, False), ("icc", -0.1, False),
        ("cluster_cv", -0.1, False), ("n", 0.0, False),
        ("baseline", math.nan, False), ("effect", math.inf, False),
        ("baseline", "0.031", False), ("baseline", True, False),
        ("relative", 1, False), ("whole_weeks", "yes", True),
        ("name", "   ", False), ("name", "x" * 201, False), ("notes", 3, False),
        ("role", "tertiary", False), ("kind", "share", False), ("solve", "days", False),
        ("alternative", "two_sided", False), ("correction", "holm", True),
        ("spending", "linear", True), ("method", "welch", False),
        ("simulation", [1, 2], False), ("simulation", {"p": math.nan}, False),
    ],
)
def test_bad_values_are_rejected_naming_the_field(field, value, settings):
    with pytest.raises(PlanError) as caught:
        validate_field(field, value, settings=settings)
    assert caught.value.field == field
    assert field in str(caught.value)


def test_range_message_states_the_allowed_range():
    with pytest.raises(PlanError, match=r"0 < share ≤ 1"):
        validate_field("share", 2.0)
    with pytest.raises(PlanError, match=r"from 1 to 20"):
        validate_field("arms", 0)


@pytest.mark.parametrize(
    ("field", "value", "expected", "settings"),
    [
        ("alpha", 0.01, 0.01, True), ("alpha", None, None, False), ("arms", 2.0, 2, True),
        ("arms", np.int64(3), 3, True), ("baseline", np.float32(0.5), 0.5, False),
        ("share", 1, 1.0, True), ("icc", 0, 0.0, False), ("rho", -0.99, -0.99, False),
        ("name", "  Conversion  ", "Conversion", False), ("notes", "", "", False),
        ("runtime_days", None, None, True), ("effect", -0.02, -0.02, False),
    ],
)
def test_good_values_are_normalised(field, value, expected, settings):
    checked = validate_field(field, value, settings=settings)
    assert checked == expected
    assert type(checked) is type(expected)


def test_method_is_checked_against_the_kind():
    assert validate_field("method", "t", kind="mean") == "t"
    assert validate_field("method", None, kind="rate") is None
    with pytest.raises(PlanError, match="pooled, unpooled, arcsine, pooled-cc"):
        validate_field("method", "t", kind="proportion")
    with pytest.raises(PlanError):
        validate_metric(Metric(kind="rate", method="arcsine"))


def test_a_stored_simulation_check_is_checked_and_copied():
    checked = validate_field("simulation", STORED_CHECK)
    assert checked == STORED_CHECK
    assert checked is not STORED_CHECK


def test_validate_metric_and_settings_return_normalised_copies():
    metric = Metric(name=" Spend ", kind="mean", baseline=3, sd=2, effect=1)
    checked = validate_metric(metric)
    assert checked.name == "Spend" and type(checked.baseline) is float
    assert metric.name == " Spend "
    assert validate_settings(Settings(looks=2.0)).looks == 2
    with pytest.raises(PlanError):
        validate_settings(Settings(correction="holm"))


def test_unknown_field_is_rejected():
    with pytest.raises(PlanError, match="unknown field"):
        validate_field("colour", "green")


def test_empty_plan_has_one_valid_primary_row():
    plan = Plan.empty()
    assert [metric.role for metric in plan.metrics] == ["primary"]
    assert validate_metric(plan.metrics[0]) == plan.metrics[0]
    assert validate_settings(plan.settings) == plan.settings
