"""The rules between the fields of one metric row: which combinations are impossible.

:mod:`fourfold.plan.fields` checks each field on its own (α in (0, 0.5), an sd above 0, …).
Whether a baseline, an effect or a margin is possible depends on the row's other fields: a
proportion's baseline lies in (0, 1), so does the treatment proportion baseline + effect, a
"less" test needs its effect below its margin. These rules are listed here, each with the
fields it involves, and :func:`refusal` turns a rule that an edit would break into the
message the window shows: the row, the column, the value and the range the column allows
while the row's other fields stay as they are.

The command stack (:mod:`fourfold.plan.commands`) refuses every edit that breaks a rule the
row kept before the edit; a row that already broke a rule (a plan file written by hand, say)
may still be edited, and the evaluation reports it as not computed. The rules agree with the
engine's own domain checks (:func:`fourfold.engine.problems`), which a test verifies.

Rules
-----
- a proportion's baseline lies strictly between 0 and 1; a rate's is above 0; a row of another
  kind with a relative effect or margin needs a baseline other than 0;
- a mean row needs an SD (a ratio's or quantile's comes from its own inputs, which
  :mod:`fourfold.plan.kinds` checks);
- a row that uses its effect (every row except those solving for the detectable effect; a
  margin row keeps its effect as the assumed true difference, see :func:`is_margin_row`) needs
  one, and baseline + effect must be a possible proportion (in (0, 1)) or rate (above 0);
- baseline + margin must be a possible proportion or rate;
- a row solving for sample size or α needs its effect on the alternative's side of the margin:
  above it for "greater", below it for "less", different from it for two-sided;
- a row solving for sample size or the detectable effect needs its power above its α (the
  row's own values or the plan's defaults);
- the t method needs more than one unit in each arm and three in all from a given ``n``.

Examples
--------
>>> from fourfold.plan.model import Metric, Settings
>>> metric = Metric(name="Conversion", kind="proportion", baseline=1.5)
>>> [rule.key for rule in broken(metric, Settings())]
['proportion-baseline', 'proportion-treatment', 'proportion-margin']
>>> print(refusal(0, Metric(name="Conversion", baseline=0.03), metric, "baseline", Settings()))
row 1 (Conversion), Baseline: 150 % is impossible — a proportion's baseline must lie between \
0 % and 100 %; allowed here: above 0 % and below 95.24 %.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from fourfold.plan.arms import treatment_ratio
from fourfold.plan.fields import PlanError
from fourfold.plan.model import Metric, Settings

LABELS = {
    "name": "Metric", "role": "Role", "kind": "Kind", "baseline": "Baseline", "sd": "SD",
    "effect": "Effect", "relative": "Relative", "alternative": "Direction", "margin": "Margin",
    "solve": "Solve for", "method": "Method", "alpha": "α", "power": "Power",
    "rho": "ρ (CUPED)", "cluster_size": "Cluster size", "icc": "ICC",
    "cluster_cv": "Cluster CV", "n": "n (control)", "notes": "Notes", "unit": "Unit",
    "better": "Better when", "denominator": "Denom. mean", "numerator_sd": "Numer. SD",
    "denominator_sd": "Denom. SD", "correlation": "Corr.", "quantile_level": "Quantile",
    "density": "Density", "second_level": "2nd quantile", "second_value": "2nd value",
    "windowed": "By window", "windows": "History windows",
}
"""How the table names each metric field (its column header on one line)."""

NUMERIC = ("baseline", "sd", "effect", "margin", "alpha", "power", "n")
"""The fields a rule may bound: every rule is affine in each of them."""


def is_margin_row(metric: Metric) -> bool:
    """Whether a row tests against a margin: a one-sided test whose H0 margin is not 0.

    Such a row (a guardrail or non-inferiority row, or superiority by a margin) is about its
    margin: its effect is the true difference assumed (usually 0), and what it can detect is
    the tightest margin it rules out — the margin closest to that effect.

    Examples
    --------
    >>> is_margin_row(Metric(alternative="less", margin=0.1, effect=0.0))
    True
    >>> is_margin_row(Metric(alternative="two-sided", margin=0.1))
    False
    """
    return metric.margin != 0 and metric.alternative != "two-sided"


def uses_effect(metric: Metric) -> bool:
    """Whether the row's effect enters its computation (all but detectable-effect rows;
    margin rows always, as the assumed true difference)."""
    return metric.solve != "detectable_effect" or is_margin_row(metric)


def _absolute(metric: Metric, value: float) -> float:
    return value * metric.baseline if metric.relative else value


RULE_SETTINGS = frozenset({"alpha", "power", "ratio", "allocation", "arms"})
"""The settings a rule reads (α, power and the treatment ratio); a change of any other
setting breaks no rule, so :func:`check_setting` does not look at the rows for it."""


def _power(metric: Metric, settings: Settings) -> float:
    return settings.power if metric.power is None else metric.power


def _alpha(metric: Metric, settings: Settings) -> float:
    return settings.alpha if metric.alpha is None else metric.alpha


def _t_floor(settings: Settings) -> float:
    ratio = treatment_ratio(settings)
    return max(1.0, 1.0 / ratio, 3.0 / (1.0 + ratio))


@dataclass(frozen=True)
class Rule:
    """One rule between fields of a row.

    Attributes
    ----------
    key : str
        A short name of the rule.
    fields : tuple of str
        The fields the rule involves (the numeric ones it bounds first).
    text : str
        The rule in words, with ``{baseline}``, ``{effect}``, ``{margin}``, ``{sd}``, ``{n}``,
        ``{power}`` and ``{alpha}`` standing for the row's values as the table shows them.
    applies : callable
        ``applies(metric, settings)``: whether the rule concerns the row.
    value : callable, optional
        ``value(metric, settings)``: the quantity the rule bounds, affine in each numeric
        field; ``None`` for a rule that a missing value breaks (``missing`` then says when).
    low, high : float, optional
        Open bounds of ``value`` (``None``: unbounded on that side).
    low_closed : bool
        Whether ``low`` itself is allowed.
    not_equal : float, optional
        A value ``value`` must differ from (instead of bounds).
    missing : callable, optional
        ``missing(metric)``: whether the row lacks a value the rule needs.
    """

    key: str
    fields: tuple[str, ...]
    text: str
    applies: Callable[[Metric, Settings], bool]
    value: Callable[[Metric, Settings], float] | None = None
    low: float | None = None
    high: float | None = None
    low_closed: bool = False
    not_equal: float | None = None
    missing: Callable[[Metric], bool] | None = None

    def holds(self, metric: Metric, settings: Settings) -> bool:
        """Whether the row keeps the rule (always, where the rule does not apply)."""
        if not self.applies(metric, settings):
            return True
        if self.missing is not None:
            return not self.missing(metric)
        number = self.value(metric, settings)
        if self.not_equal is not None:
            return number != self.not_equal
        if self.low is not None and (number < self.low if self.low_closed
                                     else number <= self.low):
            return False
        return self.high is None or number < self.high


def _kind(*kinds: str) -> Callable[[Metric, Settings], bool]:
    return lambda metric, settings: metric.kind in kinds


def _effect_in(*kinds: str) -> Callable[[Metric, Settings], bool]:
    return lambda metric, settings: (metric.kind in kinds and metric.effect is not None
                                     and uses_effect(metric))


def _direction(alternative: str) -> Callable[[Metric, Settings], bool]:
    return lambda metric, settings: (
        metric.alternative == alternative and metric.effect is not None
        and metric.solve in ("sample_size", "significance_level"))


def _distance(metric: Metric, settings: Settings) -> float:
    return _absolute(metric, metric.effect) - _absolute(metric, metric.margin)


RULES: tuple[Rule, ...] = (
    Rule("proportion-baseline", ("baseline", "kind"),
         "a proportion's baseline must lie between 0 % and 100 %",
         _kind("proportion"), lambda m, s: m.baseline, low=0.0, high=1.0),
    Rule("rate-baseline", ("baseline", "kind"), "a rate's baseline must be above 0",
         _kind("rate"), lambda m, s: m.baseline, low=0.0),
    Rule("relative-baseline", ("baseline", "relative", "kind"),
         "an effect or margin relative to the baseline needs a baseline other than 0",
         lambda m, s: m.kind not in ("proportion", "rate") and m.relative,
         lambda m, s: m.baseline, not_equal=0.0),
    Rule("mean-sd", ("sd", "kind"), "a mean needs an SD (the per-unit standard deviation)",
         _kind("mean"), missing=lambda m: m.sd is None),
    Rule("effect-needed", ("effect", "solve", "alternative", "margin"),
         "a row that solves for {solve} needs an effect",
         lambda m, s: uses_effect(m), missing=lambda m: m.effect is None),
    Rule("proportion-treatment", ("effect", "baseline", "relative", "kind", "solve"),
         "the treatment proportion (baseline {baseline} + effect {effect}) must lie between "
         "0 % and 100 %",
         _effect_in("proportion"), lambda m, s: m.baseline + _absolute(m, m.effect),
         low=0.0, high=1.0),
    Rule("rate-treatment", ("effect", "baseline", "relative", "kind", "solve"),
         "the treatment rate (baseline {baseline} + effect {effect}) must be above 0",
         _effect_in("rate"), lambda m, s: m.baseline + _absolute(m, m.effect), low=0.0),
    Rule("proportion-margin", ("margin", "baseline", "relative", "kind"),
         "baseline {baseline} + margin {margin} must lie between 0 % and 100 %",
         _kind("proportion"), lambda m, s: m.baseline + _absolute(m, m.margin),
         low=0.0, high=1.0),
    Rule("rate-margin", ("margin", "baseline", "relative", "kind"),
         "baseline {baseline} + margin {margin} must be above 0",
         _kind("rate"), lambda m, s: m.baseline + _absolute(m, m.margin), low=0.0),
    Rule("greater", ("margin", "effect", "alternative", "relative", "solve"),
         "a 'greater' test needs its effect ({effect}) above its margin ({margin})",
         _direction("greater"), _distance, low=0.0),
    Rule("less", ("margin", "effect", "alternative", "relative", "solve"),
         "a 'less' test needs its effect ({effect}) below its margin ({margin})",
         _direction("less"), lambda m, s: -_distance(m, s), low=0.0),
    Rule("two-sided", ("margin", "effect", "alternative", "relative", "solve"),
         "a two-sided test needs its effect ({effect}) to differ from its margin ({margin})",
         _direction("two-sided"), _distance, not_equal=0.0),
    Rule("power-above-alpha", ("power", "alpha", "solve"),
         "the power ({power}) must be above α ({alpha})",
         lambda m, s: m.solve in ("sample_size", "detectable_effect"),
         lambda m, s: _power(m, s) - _alpha(m, s), low=0.0),
    Rule("t-units", ("n", "method", "solve"),
         "the t method needs more than one unit in each arm and three in all (n {n})",
         lambda m, s: m.method == "t" and m.n is not None and m.solve != "sample_size",
         lambda m, s: m.n - _t_floor(s), low=0.0),
)
"""Every rule, in the order their messages are given."""


def broken(metric: Metric, settings: Settings) -> tuple[Rule, ...]:
    """The rules the row breaks (empty for a possible row).

    Examples
    --------
    >>> broken(Metric(), Settings())
    ()
    """
    return tuple(rule for rule in RULES if not rule.holds(metric, settings))


def shown(metric: Metric, field: str, value) -> str:
    """A value of the row's field as the table shows it (percent, points or plain).

    Examples
    --------
    >>> shown(Metric(kind="proportion"), "baseline", 0.031)
    '3.1 %'
    >>> shown(Metric(kind="proportion", relative=False), "margin", -0.005)
    '−0.5 pp'
    >>> shown(Metric(kind="mean", relative=False), "effect", 0.02)
    '+0.02'
    """
    if value is None:
        return "empty"
    if isinstance(value, bool):
        return "on" if value else "off"
    if isinstance(value, str):
        return value.replace("_", " ")
    effect = field in ("effect", "margin")
    if field == "baseline" and metric.kind == "proportion":
        text = f"{100 * value:.4g} %"
    elif effect and metric.relative:
        text = f"{100 * value:.4g} %"
    elif effect and metric.kind == "proportion":
        text = f"{100 * value:.4g} pp"
    else:
        text = f"{value:.4g}"
    if effect and value > 0:
        text = "+" + text
    return text.replace("-", "−")


def _affine(rule: Rule, metric: Metric, settings: Settings, field: str) -> tuple[float, float]:
    """``(slope, offset)`` of the rule's value as a function of ``field`` alone."""
    at = [rule.value(dataclasses.replace(metric, **{field: x}), settings) for x in (0.0, 1.0)]
    return at[1] - at[0], at[0]


def allowed(metric: Metric, field: str, settings: Settings) -> str:
    """The values ``field`` may take while the row's other fields stay, in words.

    Examples
    --------
    >>> allowed(Metric(kind="rate", baseline=0.02, relative=False, effect=0.001), "margin",
    ...         Settings())
    'above −0.02 and not +0.001'
    """
    low, high, low_closed, high_closed, excluded = -math.inf, math.inf, False, False, []
    for rule in RULES:
        if rule.value is None or field not in rule.fields:
            continue
        if not rule.applies(metric, settings):
            continue
        slope, offset = _affine(rule, metric, settings, field)
        if slope == 0:
            continue
        if rule.not_equal is not None:
            excluded.append((rule.not_equal - offset) / slope)
            continue
        ends = [None if bound is None else (bound - offset) / slope
                for bound in (rule.low, rule.high)]
        closed = [rule.low_closed, False]
        if slope < 0:
            ends, closed = ends[::-1], closed[::-1]
        if ends[0] is not None and (ends[0] > low or (ends[0] == low and not closed[0])):
            low, low_closed = ends[0], closed[0]
        if ends[1] is not None and (ends[1] < high or (ends[1] == high and not closed[1])):
            high, high_closed = ends[1], closed[1]
    if low > high or (low == high and not (low_closed and high_closed)):
        return "no value, until the row's other fields change"
    parts = []
    if math.isfinite(low):
        parts.append(f"{'at least' if low_closed else 'above'} {shown(metric, field, low)}")
    if math.isfinite(high):
        parts.append(f"{'at most' if high_closed else 'below'} {shown(metric, field, high)}")
    parts += [f"not {shown(metric, field, value)}" for value in excluded if low < value < high]
    return " and ".join(parts) if parts else "any number"


def describe(rule: Rule, metric: Metric, settings: Settings) -> str:
    """The rule's text with the row's values filled in."""
    values = {name: shown(metric, name, getattr(metric, name))
              for name in ("baseline", "effect", "margin", "sd", "n", "solve")}
    values["power"] = f"{_power(metric, settings):g}"
    values["alpha"] = f"{_alpha(metric, settings):g}"
    return rule.text.format(**values)


def refusal(row: int, before: Metric | None, after: Metric, fields: str | tuple[str, ...],
            settings: Settings, before_settings: Settings | None = None) -> str | None:
    """Why an edit of ``fields`` must be refused, or ``None`` when it breaks no new rule.

    Parameters
    ----------
    row : int
        The row's index, from 0 (the message counts from 1).
    before, after : Metric
        The row before and after the edit (``before`` ``None`` for a new row).
    fields : str or tuple of str
        The field or fields edited (a settings field when ``before_settings`` is given); the
        message names the first of them that the broken rule involves.
    settings : Settings
        The plan's settings after the edit.
    before_settings : Settings, optional
        The settings before the edit, for an edit of the settings.

    Returns
    -------
    str or None
        ``"row N (name), Column: value is impossible — rule; allowed here: range."`` for a
        number the rule bounds; ``"row N (name), Column: value is impossible — rule; change
        Other first."`` otherwise. ``None`` when the edit breaks no rule the row kept.
    """
    kept = {rule.key for rule in RULES
            if before is None or rule.holds(before, before_settings or settings)}
    fields = (fields,) if isinstance(fields, str) else fields
    new = [rule for rule in broken(after, settings) if rule.key in kept and (
        before_settings is not None or any(name in rule.fields for name in fields
                                           if name in NUMERIC))]
    if not new:
        return None
    rule = new[0]
    field = next((name for name in fields if name in rule.fields), fields[0])
    where = f"row {row + 1} ({after.name})"
    if before_settings is not None:
        return (f"{field}: {shown(after, field, getattr(settings, field))} would make {where} "
                f"impossible — {describe(rule, after, settings)}.")
    head = f"{where}, {LABELS.get(field, field)}: {shown(after, field, getattr(after, field))}"
    text = f"{head} is impossible — {describe(rule, after, settings)}"
    if field in NUMERIC and getattr(after, field) is not None and rule.value is not None:
        return f"{text}; allowed here: {allowed(after, field, settings)}."
    others = [LABELS[name] for name in rule.fields if name != field][:2]
    return f"{text}; change {' or '.join(others)} first."


def check_edits(plan, added: list[Metric], new: dict[tuple[int, str], Any],
                typed: set[tuple[int, str]]) -> None:
    """Refuse metric edits that make a row break a rule it kept.

    ``new`` maps ``(row, field)`` to the validated value, the edits' own and those they bring
    (a guardrail's test follows its direction); ``typed`` holds the ``(row, field)`` the edits
    themselves set: only those can be refused (:func:`refusal`). Rows past the plan's end are
    the ``added`` ones (a paste running past the last row). Raises
    :class:`~fourfold.plan.fields.PlanError` with :func:`refusal`'s message.
    """
    count = len(plan.metrics)
    changes: dict[int, dict[str, Any]] = {}
    for (row, name), value in new.items():
        changes.setdefault(row, {})[name] = value
    for row, fields in changes.items():
        before = plan.metrics[row] if row < count else None
        after = dataclasses.replace(before or added[row - count], **fields)
        edited = tuple(name for name in fields if (row, name) in typed)
        if not edited:
            continue
        message = refusal(row, before, after, edited, plan.settings)
        if message is not None:
            raise PlanError(message, edited[0])


def check_setting(plan, field: str, value: Any) -> None:
    """Refuse a setting that makes a row of ``plan`` break a rule it kept (α above a row's
    power, say); :class:`~fourfold.plan.fields.PlanError` names the setting and the row."""
    if field not in RULE_SETTINGS:
        return
    changed = dataclasses.replace(plan.settings, **{field: value})
    for row, metric in enumerate(plan.metrics):
        message = refusal(row, metric, metric, field, changed, plan.settings)
        if message is not None:
            raise PlanError(message, field)
