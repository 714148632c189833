"""The stored simulation checks of a plan as plain text rows, for reports (PDF, CSV).

Only rows with a stored ``Metric.simulation`` appear. Each row gives the closed-form power,
the simulated power with its 95 % interval, the false-positive rate under H0 against α, the
replicates and seed (which reproduce the check), the model and test, and a verdict in words.
"""

from __future__ import annotations

from fourfold.plan.evaluation import compute
from fourfold.simulation.check import is_stale

HEADER = ("#", "Metric", "Power, closed form", "Power, simulated (95 % interval)",
          "False positives (α)", "Replicates, seed", "Model, test", "Verdict")
ALIGN = ("r", "l", "r", "r", "r", "r", "l", "l")

VERDICTS = {
    "agrees": "agrees",
    "borderline": "just outside (may be chance)",
    "below": "lower than the closed form",
    "above": "higher than the closed form",
}


def _pct(value):
    return f"{100 * value:.1f} %"


def report_rows(plan, result=None):
    """One tuple of texts (see :data:`HEADER`) per row with a stored check.

    Examples
    --------
    >>> from fourfold.plan import Metric, Plan
    >>> from fourfold.simulation.check import check_metric
    >>> plan = Plan(metrics=[Metric(name="Load time", kind="mean", baseline=1.84, sd=0.61,
    ...                             effect=0.05, relative=True)])
    >>> report_rows(plan)
    []
    >>> plan.metrics[0].simulation = check_metric(plan, 0, reps=400, seed=3)
    >>> report_rows(plan)[0][-1]
    'agrees'
    """
    result = compute(plan) if result is None else result
    rows = []
    for index, metric in enumerate(plan.metrics):
        check = metric.simulation
        if not check:
            continue
        verdict = VERDICTS.get(check.get("verdict"), "")
        if is_stale(plan, index, result):
            verdict = "stale: the row changed after this check"
        rows.append((
            str(index + 1),
            metric.name,
            _pct(check["analytic_power"]),
            f"{_pct(check['power'])} ({_pct(check['low'])}–{_pct(check['high'])})",
            f"{_pct(check['false_positive'])} ({check['alpha']:g})",
            f"{check['reps']:,}, seed {check['seed']}",
            f"{check['model']}, {check['test']}",
            verdict,
        ))
    return rows


def report_messages(plan, result=None):
    """``(label, message)`` for every check that disagrees, misses α under H0 or is stale.

    Examples
    --------
    >>> from fourfold.plan import Metric, Plan
    >>> report_messages(Plan(metrics=[Metric(name="Conversion")]))
    []
    """
    result = compute(plan) if result is None else result
    out = []
    for index, metric in enumerate(plan.metrics):
        check = metric.simulation
        if not check:
            continue
        stale = is_stale(plan, index, result)
        level_holds = check["false_positive_low"] <= check["alpha"] <= check["false_positive_high"]
        if check.get("verdict") == "agrees" and level_holds and not stale:
            continue
        text = check.get("message", "")
        if stale:
            text += " The row changed after this check; run it again."
        out.append((f"{index + 1}. {metric.name}", text.strip()))
    return out
