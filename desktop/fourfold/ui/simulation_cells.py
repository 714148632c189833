"""The plan table's "Simulated power" column: text, tooltip and colour of a row's check.

The column sits beside "Power reached". It is empty until the row is checked (Plan → Check by
simulation); then it shows the simulated power with a mark — ✓ inside the 95 % interval of
the closed form, ? just outside it (could be chance), ⚠ a real disagreement — and the
tooltip gives the interval, replicates, seed, model, test and the advice in words. A check
made before the row's inputs changed is marked stale. Every function takes the metric, the
plan's settings and the row's :class:`~fourfold.plan.evaluation.RowResult` (None before the
first recompute).
"""

from __future__ import annotations

KEY = "simulated"
"""Column key of the simulated power."""

MARKS = {"agrees": "✓", "borderline": "?", "below": "⚠", "above": "⚠"}


def _stale(metric, settings, row) -> bool:
    # imported here: only rows with a stored check get this far, and the simulation package
    # is not needed to open a window
    from fourfold.simulation import row_is_stale

    return row is not None and row_is_stale(metric, settings, row)


def text(metric, settings, row) -> str:
    """The cell text: ``"79.6 % ✓"``, ``"64.0 % ⚠"``, ``"… (stale)"`` or ``""``.

    Examples
    --------
    >>> from fourfold.plan import Metric, Settings
    >>> text(Metric(name="Conversion"), Settings(), None)
    ''
    """
    check = metric.simulation
    if not check:
        return ""
    shown = f"{100 * check['power']:.1f} % {MARKS.get(check.get('verdict'), '')}".rstrip()
    return shown + " (stale)" if _stale(metric, settings, row) else shown


def tooltip(metric, settings, row) -> str:
    """The check in words, with its replicates, seed, model and test."""
    check = metric.simulation
    if not check:
        return "Not checked yet: Plan → Check by simulation"
    lines = [check.get("message", ""),
             f"Model: {check['model']}; test: {check['test']}; {check['n_control']:,} control "
             f"and {check['n_treatment']:,} treatment units; {check['reps']:,} replicates, "
             f"seed {check['seed']}."]
    if _stale(metric, settings, row):
        lines.append("The row changed after this check: run it again.")
    return "\n".join(line for line in lines if line)


def number(metric) -> float:
    """The simulated power for sorting (nan when not checked)."""
    check = metric.simulation
    return float("nan") if not check else float(check["power"])


def colour(tints, metric, settings, row):
    """Text colour: the problem tint for a disagreement, muted when stale, else None."""
    check = metric.simulation
    if not check:
        return None
    if _stale(metric, settings, row):
        return tints.muted
    if check.get("verdict") in ("below", "above"):
        return tints.problem
    return None
