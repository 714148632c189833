"""The plan table's "Simulated power" column: text, tooltip and colour of a row's check.

The column sits beside "Power reached". It is empty until the row is checked (Plan → Check by
simulation); then it shows the simulated power with a mark — ✓ inside the 95 % interval of
the closed form, ? just outside it (could be chance), ⚠ a real disagreement — and the
tooltip gives the interval, replicates, seed, model, test and the advice in words. A check
made before the row's inputs changed is marked stale.
"""

from __future__ import annotations

from fourfold.simulation import is_stale

KEY = "simulated"
"""Column key of the simulated power."""

MARKS = {"agrees": "✓", "borderline": "?", "below": "⚠", "above": "⚠"}

HEADER = "Simulated\npower"
TOOLTIP = ("Power found by simulating the experiment and running its test (Plan → Check by "
           "simulation). ✓ agrees with the closed form, ? just outside its 95 % interval "
           "(could be chance), ⚠ disagrees. Empty until the row is checked; a check made "
           "before the row changed is marked stale.")


def _check(plan, index):
    return plan.metrics[index].simulation or None


def text(plan, result, index) -> str:
    """The cell text: ``"79.6 % ✓"``, ``"64.0 % ⚠"``, ``"… (stale)"`` or ``""``.

    Examples
    --------
    >>> from fourfold.plan import Metric, Plan
    >>> plan = Plan(metrics=[Metric(name="Conversion", baseline=0.031, effect=0.2)])
    >>> text(plan, None, 0)
    ''
    """
    check = _check(plan, index)
    if check is None:
        return ""
    shown = f"{100 * check['power']:.1f} % {MARKS.get(check.get('verdict'), '')}".rstrip()
    if result is not None and is_stale(plan, index, result):
        shown += " (stale)"
    return shown


def tooltip(plan, result, index) -> str | None:
    """The check in words, with its replicates, seed, model and test."""
    check = _check(plan, index)
    if check is None:
        return "Not checked yet: Plan → Check by simulation"
    lines = [check.get("message", ""),
             f"Model: {check['model']}; test: {check['test']}; {check['n_control']:,} control "
             f"and {check['n_treatment']:,} treatment units; {check['reps']:,} replicates, "
             f"seed {check['seed']}."]
    if result is not None and is_stale(plan, index, result):
        lines.append("The row changed after this check: run it again.")
    return "\n".join(line for line in lines if line)


def number(plan, index) -> float:
    """The simulated power for sorting (nan when not checked)."""
    check = _check(plan, index)
    return float("nan") if check is None else float(check["power"])


def flagged(plan, index) -> bool:
    """Whether the check disagrees with the closed form (shown in the problem colour)."""
    check = _check(plan, index)
    return check is not None and check.get("verdict") in ("below", "above")


def stale(plan, result, index) -> bool:
    """Whether the stored check no longer matches the row (shown muted)."""
    return (_check(plan, index) is not None and result is not None
            and is_stale(plan, index, result))
