"""Impossible rows are refused where they are typed: the rules between a row's fields.

What is impossible is a fact of the trade (a proportion lies in (0, 1), a count is not
negative, a one-sided test needs its effect beyond its margin; common practice, no source).
The rules are checked against the engine's own domain checks (``fourfold.engine.problems``),
and every refusal is checked to change nothing and to name the row, the column and the range.
"""

import dataclasses

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold import engine
from fourfold.engine import solve as engine_solve
from fourfold.plan import Metric, Plan, PlanError, Settings, dumps, load, loads, sample_path
from fourfold.plan.commands import CommandStack, SetField, SetFields, SetSetting
from fourfold.plan.evaluation import compute
from fourfold.plan.rules import LABELS, broken, is_margin_row


def _stack() -> CommandStack:
    return CommandStack(load(sample_path()))


def _refused(stack, command) -> str:
    before, undo = dumps(stack.plan), stack.undo_text
    with pytest.raises(PlanError) as caught:
        stack.do(command)
    assert dumps(stack.plan) == before and stack.undo_text == undo
    return str(caught.value)


@pytest.mark.parametrize(
    ("row", "field", "value", "expected"),
    [
        # 1/(1 + 5 %) = 95.24 %: above it the treatment proportion (+5 % relative) passes 1.
        (0, "baseline", 1.5, "row 1 (Checkout conversion), Baseline: 150 % is impossible — a "
         "proportion's baseline must lie between 0 % and 100 %; allowed here: above 0 % and "
         "below 95.24 %."),
        # (1 − 0.031)/0.031 = 31.258…: the largest relative effect a 3.1 % baseline allows.
        (0, "effect", 40.0, "row 1 (Checkout conversion), Effect: +4000 % is impossible — the "
         "treatment proportion (baseline 3.1 % + effect +4000 %) must lie between 0 % and "
         "100 %; allowed here: above −100 % and below +3126 % and not 0 %."),
        (4, "baseline", -0.1, "row 5 (Support contacts per visitor), Baseline: −0.1 is "
         "impossible — a rate's baseline must be above 0; allowed here: above 0."),
        # A "less" guardrail with no true change (effect 0) must have a margin above 0.
        (5, "margin", -0.02, "row 6 (Page load time (s)), Margin: −0.02 is impossible — a "
         "'less' test needs its effect (0) below its margin (−0.02); allowed here: above 0."),
        (4, "margin", -0.05, "row 5 (Support contacts per visitor), Margin: −5 % is "
         "impossible — a 'less' test needs its effect (0 %) below its margin (−5 %); allowed "
         "here: above 0 %."),
        (5, "effect", 0.03, "row 6 (Page load time (s)), Effect: +0.03 is impossible — a "
         "'less' test needs its effect (+0.03) below its margin (+0.02); allowed here: below "
         "+0.02."),
        (1, "sd", None, "row 2 (Revenue per visitor), SD: empty is impossible — a mean needs "
         "an SD (the per-unit standard deviation); change Kind first."),
        (0, "effect", None, "row 1 (Checkout conversion), Effect: empty is impossible — a row "
         "that solves for sample size needs an effect; change Solve for or Direction first."),
        (0, "power", 0.04, "row 1 (Checkout conversion), Power: 0.04 is impossible — the power "
         "(0.04) must be above α (0.05); allowed here: above 0.05."),
        (2, "effect", 0.0, "row 3 (Add-to-cart rate), Effect: 0 % is impossible — a two-sided "
         "test needs its effect (0 %) to differ from its margin (0 %); allowed here: above "
         "−100 % and below +777.2 % and not 0 %."),
    ],
)
def test_an_impossible_number_is_refused_naming_row_column_and_range(row, field, value,
                                                                     expected):
    assert _refused(_stack(), SetField(row, field, value)) == expected


def test_a_proportion_margin_beyond_the_scale_is_refused():
    stack = _stack()
    stack.do(SetField(0, "alternative", "greater"))
    message = _refused(stack, SetField(0, "margin", -1.2))  # −120 % of the baseline
    assert message.startswith("row 1 (Checkout conversion), Margin: −120 % is impossible — "
                              "baseline 3.1 % + margin −120 % must lie between 0 % and 100 %")
    assert message.endswith("allowed here: above −100 % and below +5 %.")
    stack.do(SetField(0, "margin", -0.1))  # −10 %: a non-inferiority margin
    assert stack.plan.metrics[0].margin == -0.1


def test_the_t_method_needs_units_in_each_arm():
    stack = CommandStack(Plan(Settings(), [Metric(name="Spend", kind="mean", method="t",
                                                  baseline=5.0, sd=2.0, solve="power",
                                                  n=100.0)]))
    assert _refused(stack, SetField(0, "n", 1.0)) == (
        "row 1 (Spend), n (control): 1 is impossible — the t method needs more than one unit "
        "in each arm and three in all (n 1); allowed here: above 1.5.")


def test_a_setting_that_makes_a_row_impossible_is_refused_naming_the_row():
    stack = _stack()
    stack.do(SetField(2, "power", 0.3))
    assert _refused(stack, SetSetting("alpha", 0.4)) == (
        "alpha: 0.4 would make row 3 (Add-to-cart rate) impossible — the power (0.3) must be "
        "above α (0.4).")


def test_a_paste_that_makes_a_row_impossible_changes_nothing_and_names_the_row():
    stack = _stack()
    message = _refused(stack, SetFields([(1, "name", "Spend"), (3, "baseline", 0.5),
                                         (4, "baseline", -1.0)], text="Paste 3 cells"))
    assert message.startswith("row 5 (Support contacts per visitor), Baseline: −1 is impossible")
    end = len(stack.plan.metrics)
    message = _refused(stack, SetFields([(end, "name", "Refunds"), (end, "baseline", 2.0)],
                                        append=[Metric()]))
    assert message.startswith(f"row {end + 1} (Refunds), Baseline: 200 % is impossible")


def test_choices_are_never_refused_and_leave_the_row_uncomputed_until_completed():
    stack = _stack()
    stack.do(SetField(0, "kind", "mean"))  # a proportion row becomes a mean: no SD yet
    stack.do(SetField(4, "alternative", "greater"))  # the guardrail's margin is now wrong
    result = compute(stack.plan)
    assert result.rows[0].reason == "sd is required for a mean (the per-unit standard deviation)"
    assert result.rows[4].reason == "effect must be greater than the margin for a 'greater' test"
    stack.do(SetField(0, "sd", 0.2))
    stack.do(SetField(0, "baseline", 0.05))  # still a rule the row breaks: others may change
    stack.do(SetField(4, "name", "Contacts"))
    assert not compute(stack.plan).rows[0].reason


def test_a_row_loaded_impossible_can_still_be_edited():
    text = dumps(load(sample_path())).replace('"baseline": 0.031', '"baseline": 1.5')
    stack = CommandStack(loads(text))
    assert [rule.key for rule in broken(stack.plan.metrics[0], stack.plan.settings)] == [
        "proportion-baseline", "proportion-treatment", "proportion-margin"]
    stack.do(SetField(0, "effect", 0.1))
    stack.do(SetField(0, "baseline", 0.2))
    assert not compute(stack.plan).rows[0].reason


def test_every_metric_field_has_a_column_label():
    assert set(LABELS) == {f.name for f in dataclasses.fields(Metric)} - {"simulation", "id"}
    from fourfold.ui.columns import COLUMNS  # the table's own headers, on one line

    shown = {column.key: column.label for column in COLUMNS if not column.computed}
    assert {key: LABELS[key] for key in shown} == shown


_SOLVER_REASONS = {text for reasons in engine_solve._REASONS.values() for text in reasons.values()}
_SOLVER_REASONS |= {engine_solve._NO_FINITE, engine_solve._T_TOO_SMALL}

_rows = st.builds(
    Metric,
    kind=st.sampled_from(("mean", "proportion", "rate")),  # the kinds whose sd is the row's own
    baseline=st.sampled_from([-0.5, 0.0, 0.02, 0.5, 0.97, 1.0, 1.3, 40.0]),
    sd=st.sampled_from([None, 0.5, 3.0]),
    effect=st.sampled_from([-1.5, -0.6, -0.02, 0.0, 0.02, 0.1, 0.6, 2.0]),
    margin=st.sampled_from([-1.5, -0.6, -0.02, 0.0, 0.02, 0.6]),
    relative=st.booleans(),
    alternative=st.sampled_from(engine.ALTERNATIVES),
    power=st.sampled_from([None, 0.03, 0.9]),
    solve=st.sampled_from(["sample_size", "power", "significance_level"]),
)


@settings(max_examples=400, deadline=None)
@given(_rows)
def test_the_rules_agree_with_the_engine_domain_checks(metric):
    plan_settings = Settings()
    power = plan_settings.power if metric.power is None else metric.power
    reason = engine.problems(
        metric.solve, metric.kind, metric.baseline, effect=metric.effect, n=10_000.0,
        sd=None if metric.kind == "proportion" else metric.sd, alpha=plan_settings.alpha,
        power=power, alternative=metric.alternative, relative=metric.relative,
        margin=metric.margin).item()
    impossible = bool(reason) and reason not in _SOLVER_REASONS
    assert bool(broken(metric, plan_settings)) == impossible, (reason, broken(metric,
                                                                              plan_settings))


def test_a_margin_row_is_a_one_sided_test_with_a_margin():
    rows = load(sample_path()).metrics
    assert [metric.name for metric in rows if is_margin_row(metric)] == [
        "Support contacts per visitor", "Page load time (s)", "Page load time, p95"]


def test_a_guardrails_automatic_direction_is_never_refused():
    """Making a row a guardrail sets its one-sided test by its direction (a change the user did
    not type): the row may then break a rule, and says so, but the choice stands."""
    stack = _stack()
    stack.do(SetField(2, "better", "lower"))  # add-to-cart rate, effect +3 %
    stack.do(SetField(2, "role", "guardrail"))
    metric = stack.plan.metrics[2]
    assert (metric.role, metric.alternative) == ("guardrail", "less")
    assert compute(stack.plan).rows[2].reason == ("effect must be less than the margin for a "
                                                  "'less' test")
    stack.do(SetField(2, "margin", 0.05))  # typed: must not rise by 5 % or more
    assert compute(stack.plan).rows[2].reason == ""
    message = _refused(stack, SetField(2, "margin", 0.01))  # now a rule the row keeps
    assert message.endswith("allowed here: above +3 % and below +777.2 %.")


class _Watched:
    """Settings that note each field a rule reads."""

    def __init__(self, settings: Settings, read: set) -> None:
        object.__setattr__(self, "_settings", settings)
        object.__setattr__(self, "_read", read)

    def __getattr__(self, name):
        self._read.add(name)
        return getattr(self._settings, name)


_t_rows = st.builds(Metric, kind=st.just("mean"), method=st.just("t"), sd=st.just(2.0),
                   n=st.sampled_from([None, 1.0, 50.0]),
                   solve=st.sampled_from(["sample_size", "power", "detectable_effect"]))


@settings(max_examples=200, deadline=None)
@given(_rows | _t_rows, st.sampled_from(["fixed", "sqrt-k"]), st.sampled_from([1, 3]))
def test_rules_read_no_setting_beyond_those_a_setting_change_is_checked_for(metric, allocation,
                                                                             arms):
    # check_setting skips the rows for any other setting (interim looks, traffic, …): that is
    # right only while no rule reads one.
    from fourfold.plan.rules import RULE_SETTINGS, RULES

    read: set = set()
    watched = _Watched(Settings(allocation=allocation, arms=arms), read)
    for rule in RULES:
        rule.holds(metric, watched)
    assert read <= RULE_SETTINGS, read - RULE_SETTINGS
