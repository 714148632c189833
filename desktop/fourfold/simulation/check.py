"""Check a plan's metric rows by simulation; the dicts stored in ``Metric.simulation``.

A row is simulated exactly as :func:`fourfold.plan.evaluation.compute` evaluated it: its
effect (given or solved) as an absolute difference, its α (corrected or solved), the plan's
allocation ratio, and the design factor as effective units ``units_control / factor`` (the
same variance of the difference as the closed form). With interim looks (``looks > 1``) the
row's units are the maximum size (see :mod:`fourfold.plan.sequential`) and the test stops at
the boundaries of the row's design (:func:`fourfold.plan.sequential.design_of_row`).

The stored dict holds the :class:`~fourfold.simulation.SimulationResult` fields, the
closed-form power it is compared with, the inputs it was run on (to tell when it has gone
stale; among them the row's method, whose own test the simulation runs), a verdict
(:func:`verdict`) and a message in words (:func:`message`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from fourfold.engine.catalog import METHODS
from fourfold.errors import FourfoldError
from fourfold.plan.arms import treatment_ratio
from fourfold.plan.evaluation import compute
from fourfold.plan.kinds import RATIO_FIELDS
from fourfold.plan.sequential import design_of_row
from fourfold.plan.simulation_record import INPUT_FIELDS
from fourfold.plan.windows import evaluated
from fourfold.simulation.intervals import wilson_interval
from fourfold.simulation.power import simulate_power
from fourfold.simulation.streams import SimulationCancelled

WIDE_LEVEL = 0.999
"""Coverage of the interval beyond which a disagreement is called firm rather than borderline."""



@dataclass(frozen=True)
class PlanCheck:
    """Outcome of :func:`check_plan`.

    Attributes
    ----------
    checks : tuple of (int, dict)
        Row index and the dict to store in its ``Metric.simulation``.
    skipped : tuple of (int, str)
        Rows that could not be simulated and why.
    """

    checks: tuple[tuple[int, dict], ...]
    skipped: tuple[tuple[int, str], ...]

    def edits(self):
        """``(row, "simulation", dict)`` triples for one ``SetFields`` undo step."""
        return [(row, "simulation", check) for row, check in self.checks]


def _percent(value):
    return f"{100 * value:.1f} %"


def verdict(check):
    """How the closed-form power compares with the simulated one.

    ``"agrees"`` inside the 95 % interval; ``"borderline"`` outside it but inside the
    99.9 % interval (1 check in 20 lands outside a 95 % interval by chance alone);
    ``"below"`` when the simulated power is below the closed form beyond that, ``"above"``
    when it is above.

    Examples
    --------
    >>> verdict({"analytic_power": 0.8, "power": 0.64, "low": 0.62, "high": 0.66,
    ...          "reps": 2000})
    'below'
    """
    analytic = check["analytic_power"]
    if check["low"] <= analytic <= check["high"]:
        return "agrees"
    low, high = wilson_interval(round(check["power"] * check["reps"]), check["reps"],
                                level=WIDE_LEVEL)
    if low <= analytic <= high:
        return "borderline"
    return "below" if check["power"] < analytic else "above"


def message(check):
    """The check in words, with advice when simulation and closed form disagree.

    The advice depends on the model: a skewed or heavy-tailed metric can be capped; a
    proportion (``model == "binomial"``) only needs more units.

    Examples
    --------
    >>> print(message({"analytic_power": 0.8, "power": 0.803, "low": 0.785, "high": 0.82,
    ...                "false_positive": 0.05, "false_positive_low": 0.04,
    ...                "false_positive_high": 0.06, "alpha": 0.05, "reps": 2000, "seed": 0}))
    ... # doctest: +NORMALIZE_WHITESPACE
    Simulated power 80.3 % (95 % interval 78.5 %–82.0 %, 2000 replicates, seed 0)
    agrees with the closed form's 80.0 %.
    """
    head = (f"Simulated power {_percent(check['power'])} (95 % interval "
            f"{_percent(check['low'])}–{_percent(check['high'])}, {check['reps']} replicates, "
            f"seed {check['seed']})")
    closed = _percent(check["analytic_power"])
    how = verdict(check)
    if how == "agrees":
        text = f"{head} agrees with the closed form's {closed}."
    elif how == "borderline":
        text = (f"{head} is just outside the closed form's {closed}; this happens by chance "
                "in 1 check out of 20, so run it with more replicates to tell.")
    elif how == "below" and check.get("model") == "binomial":
        text = (f"{head} is below the closed form's {closed}: the normal approximation "
                "overstates the power of this test at this size (few conversions per arm, or "
                "a proportion near 0 or 1). Raise n.")
    elif how in ("below", "above") and check.get("test", "").startswith("sample-quantile"):
        text = (f"{head} is {how} the closed form's {closed}: the closed form of a quantile "
                "needs many units beyond it, and this one is too far in the tail for this "
                "many units (or its density is hard to estimate). Do not rely on the closed "
                "form here: raise n, or test a less extreme quantile.")
    elif how == "below" and check.get("model") == "bivariate normal":
        text = (f"{head} is below the closed form's {closed}: the delta method overstates "
                "the power here, where the denominator's mean is small against its noise. "
                "Raise n.")
    elif how == "below":
        text = (f"{head} is below the closed form's {closed}: the normal approximation "
                "overstates the power of this metric at this size (heavy tails or skew). "
                "Raise n, or cap (winsorise) the metric.")
    elif check.get("model") == "binomial":
        text = (f"{head} is above the closed form's {closed}: the closed form is conservative "
                "for this test at this size, so fewer units may do.")
    else:
        text = (f"{head} is above the closed form's {closed}: the closed form is conservative "
                "here, so fewer units may do; with a skewed metric check the false-positive "
                "rate before relying on it.")
    fp, alpha = check["false_positive"], check["alpha"]
    if alpha < check["false_positive_low"]:
        text += (f" Under H0 the test rejected {_percent(fp)} of replicates, above α = "
                 f"{alpha:g}: its level may not hold for this metric at this size.")
    elif alpha > check["false_positive_high"]:
        text += (f" Under H0 the test rejected {_percent(fp)} of replicates, below α = "
                 f"{alpha:g}: it is conservative here (futility stops or a discrete metric), "
                 "so it spends less than the planned α.")
    return text


def _row_method(metric):
    return METHODS[metric.kind][0] if metric.method is None else metric.method


def stored_method(inputs):
    """The method a stored check was simulated with.

    A check stored before the method was recorded ran, for a proportion, the pooled z at
    margin 0 and the unpooled (Wald) z at any other margin; for a mean Welch's t and for a
    rate the rate z, which the kind's default method stands for. So such a check stays
    fresh for a row whose method gives that same test, and is stale otherwise (a
    ``"pooled"`` row with a margin now runs the Farrington–Manning test).

    Examples
    --------
    >>> stored_method({"kind": "proportion", "margin": -0.01})
    'unpooled'
    >>> stored_method({"kind": "proportion", "method": "arcsine", "margin": 0.0})
    'arcsine'
    """
    if "method" in inputs:
        return inputs["method"]
    kind = inputs.get("kind")
    if kind == "proportion" and inputs.get("margin", 0.0) != 0.0:
        return "unpooled"
    return METHODS[kind][0] if kind in METHODS else None


def kind_inputs(metric):
    """The ratio's or quantile's own inputs for the simulation (``None`` for other kinds).

    Examples
    --------
    >>> from fourfold.plan import Metric
    >>> kind_inputs(Metric(kind="quantile", quantile_level=0.95, density=0.2))
    {'level': 0.95, 'density': 0.2, 'second_level': None, 'second_value': None}
    """
    if metric.kind == "ratio":
        return {name: getattr(metric, name) for name in RATIO_FIELDS}
    if metric.kind == "quantile":
        return {"level": metric.quantile_level, "density": metric.density,
                "second_level": metric.second_level, "second_value": metric.second_value}
    return None


def _inputs(metric, settings, row, n_control, looks):
    inputs = {
        "kind": metric.kind,
        "method": _row_method(metric),
        "baseline": metric.baseline,
        "sd": metric.sd,
        "effect": row.effect_abs,
        "alpha": row.alpha,
        "alternative": metric.alternative,
        "margin": metric.margin,
        "n_control": n_control,
        "ratio": treatment_ratio(settings),
        "looks": looks,
    }
    extra = kind_inputs(metric)
    if extra is not None:
        inputs["kind_inputs"] = extra
    return inputs


def _row_setup(plan, index, result):
    if not 0 <= index < len(plan.metrics):
        raise FourfoldError(f"row {index + 1} does not exist (the plan has "
                            f"{len(plan.metrics)} rows)")
    metric = plan.metrics[index]
    row = result.rows[index]
    if row.reason:
        raise FourfoldError(f"{metric.name}: cannot be simulated — {row.reason}")
    values = (row.units_control, row.effect_abs, row.power, row.alpha, row.design_factor)
    if not all(math.isfinite(v) for v in values):
        raise FourfoldError(f"{metric.name}: the row has no finite units, effect, α and power")
    looks = design_of_row(plan, result, index)
    if plan.settings.looks > 1 and looks is None:
        raise FourfoldError(f"{metric.name}: no group sequential design for this row")
    return metric, row, looks, row.units_control / row.design_factor


def check_metric(plan, index, *, reps=2000, seed=0, history=None, history_effect="shift",
                 result=None, progress=None, cancelled=None, workers=None):
    """Simulate metric row ``index`` of ``plan`` and return the dict for ``Metric.simulation``.

    Parameters
    ----------
    plan : fourfold.plan.Plan
    index : int
        Row index (0-based).
    reps, seed : int
        Replicates per scenario and seed (see :func:`fourfold.simulation.simulate_power`).
    history : array_like, optional
        Historical per-unit values to bootstrap from instead of the parametric model.
    history_effect : {"shift", "lift"}
        How the effect is applied to bootstrapped values.
    result : fourfold.plan.evaluation.PlanResult, optional
        ``compute(plan)`` if already at hand.
    progress, cancelled, workers
        As for :func:`~fourfold.simulation.simulate_power`.

    Returns
    -------
    dict
        JSON-ready: the simulation result's fields plus ``analytic_power``, ``inputs``,
        ``verdict`` and ``message``.

    Raises
    ------
    FourfoldError
        When the row cannot be computed or simulated (the message names the row).
    SimulationCancelled
        When ``cancelled()`` returned True.

    Examples
    --------
    >>> from fourfold.plan import Metric, Plan
    >>> plan = Plan(metrics=[Metric(name="Load time", kind="mean", baseline=1.84, sd=0.61,
    ...                             effect=0.05, relative=True)])
    >>> check = check_metric(plan, 0, reps=400, seed=3)
    >>> check["verdict"], check["reps"]
    ('agrees', 400)
    """
    result = compute(plan) if result is None else result
    plan = evaluated(plan, result)  # rows that follow their windows: the figures used
    metric, row, looks, n_control = _row_setup(plan, index, result)
    margin = row.margin_abs  # the row's own, or the tightest one it rules out
    try:
        outcome = simulate_power(
            metric.kind, metric.baseline, row.effect_abs, n_control, sd=metric.sd,
            alpha=row.alpha, alternative=metric.alternative,
            ratio=treatment_ratio(plan.settings), margin=margin, method=metric.method,
            reps=reps, seed=seed, history=history, history_effect=history_effect, looks=looks,
            progress=progress, cancelled=cancelled, workers=workers,
            kind_inputs=kind_inputs(metric),
        )
    except ValueError as error:
        raise FourfoldError(f"{metric.name}: cannot be simulated — {error}") from None
    check = outcome.to_dict()
    check["analytic_power"] = float(row.power)
    check["inputs"] = _inputs(metric, plan.settings, row, n_control, outcome.looks)
    check["verdict"] = verdict(check)
    check["message"] = message(check)
    return check


def is_stale(plan, index, result=None):
    """True when row ``index`` has a stored check that no longer matches its inputs.

    Examples
    --------
    >>> from fourfold.plan import Metric, Plan
    >>> plan = Plan(metrics=[Metric(name="Load time", kind="mean", baseline=1.84, sd=0.61,
    ...                             effect=0.05, relative=True)])
    >>> plan.metrics[0].simulation = check_metric(plan, 0, reps=100)
    >>> is_stale(plan, 0)
    False
    >>> plan.metrics[0].baseline = 1.9
    >>> is_stale(plan, 0)
    True
    """
    result = compute(plan) if result is None else result
    plan = evaluated(plan, result)
    return row_is_stale(plan.metrics[index], plan.settings, result.rows[index])


def row_is_stale(metric, settings, row):
    """True when ``metric``'s stored check no longer matches its evaluated ``row``.

    ``row`` is the metric's :class:`~fourfold.plan.evaluation.RowResult`; cheap enough for
    every table repaint. A metric without a check is never stale.
    """
    stored = metric.simulation
    if not stored or "inputs" not in stored:
        return False
    if row.reason or row.design_factor == 0 or not math.isfinite(row.units_control):
        return True
    now = _inputs(metric, settings, row, row.units_control / row.design_factor, settings.looks)
    before = {**stored["inputs"], "method": stored_method(stored["inputs"])}
    for name in INPUT_FIELDS:
        a, b = now.get(name), before.get(name)
        if isinstance(a, float) and isinstance(b, (int, float)):
            if not math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12):
                return True
        elif a != b:
            return True
    return False


def check_plan(plan, *, rows=None, reps=2000, seed=0, history=None, history_effect="shift",
               progress=None, cancelled=None, workers=None):
    """Simulate rows of a plan (all by default), with one progress count over all of them.

    Each row uses the same ``seed``, so its check equals :func:`check_metric` for that row.

    Parameters
    ----------
    plan : fourfold.plan.Plan
    rows : sequence of int, optional
        Row indices to check; every row when omitted.
    reps, seed, history, history_effect, progress, cancelled, workers
        As for :func:`check_metric` (``progress`` counts over all rows).

    Returns
    -------
    PlanCheck
        Rows that cannot be computed or simulated are in ``skipped`` with the reason.

    Raises
    ------
    SimulationCancelled
        When ``cancelled()`` returned True; nothing is returned.

    Examples
    --------
    >>> from fourfold.plan import Metric, Plan
    >>> plan = Plan(metrics=[Metric(name="Conversion", baseline=0.031, effect=0.2),
    ...                      Metric(name="Broken", kind="mean", baseline=1.0, sd=None)])
    >>> outcome = check_plan(plan, reps=100)
    >>> [row for row, _ in outcome.checks], [row for row, _ in outcome.skipped]
    ([0], [1])
    """
    result = compute(plan)
    plan = evaluated(plan, result)
    wanted = range(len(plan.metrics)) if rows is None else sorted(set(rows))
    todo, skipped = [], []
    for index in wanted:
        try:
            _row_setup(plan, index, result)
        except FourfoldError as error:
            skipped.append((index, str(error)))
        else:
            todo.append(index)
    total = 2 * reps * len(todo)
    checks = []
    for position, index in enumerate(todo):
        offset = 2 * reps * position

        def report(done, _total, offset=offset):
            if progress is not None:
                progress(offset + done, total)

        try:
            check = check_metric(plan, index, reps=reps, seed=seed, history=history,
                                 history_effect=history_effect, result=result,
                                 progress=report, cancelled=cancelled, workers=workers)
        except SimulationCancelled:
            raise
        except FourfoldError as error:
            skipped.append((index, str(error)))
        else:
            checks.append((index, check))
    return PlanCheck(tuple(checks), tuple(sorted(skipped)))
