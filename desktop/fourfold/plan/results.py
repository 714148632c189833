"""What an evaluation of a plan gives: one :class:`RowResult` per metric row and a
:class:`PlanResult` for the plan (see :mod:`fourfold.plan.evaluation` for the rules)."""

from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass(frozen=True)
class RowResult:
    """The evaluation of one metric row (``nan`` where it cannot be computed).

    Attributes
    ----------
    units_control, units_treatment, units_total : float
        Whole units: the control arm, each treatment arm, all arms together.
    days : float
        Days of traffic for ``units_total`` (``nan`` without daily units).
    effect_abs, effect_rel : float
        The effect (given or solved) as a difference and as a fraction of the baseline.
    power, alpha : float
        Power and significance level of the row (given, corrected or solved).
    reason : str
        Why the row cannot be computed; ``""`` when it can.
    solved : str
        The quantity computed: ``"sample_size"``, ``"detectable_effect"``, ``"power"``,
        ``"significance_level"`` or, for a margin row, ``"detectable_margin"``.
    design_factor : float
        The variance factor applied to the row's units.
    units_max, units_expected_h1, days_expected_h1 : float
        With interim looks: the maximum total units, the expected total units and days when the
        effect is real. Equal to ``units_total`` / ``days`` for a fixed design.
    look_days : tuple of float or None
        Day of each interim look; ``None`` for a fixed design.
    margin_abs, margin_rel : float
        The H0 margin as a difference and as a fraction of the baseline: the row's own, or,
        for a margin row (:func:`fourfold.plan.rules.is_margin_row`) that solves for what it
        can detect, the tightest margin it rules out (``solved`` is then
        ``"detectable_margin"``).
    """

    units_control: float
    units_treatment: float
    units_total: float
    days: float
    effect_abs: float
    effect_rel: float
    power: float
    alpha: float
    reason: str
    solved: str
    design_factor: float
    units_max: float
    units_expected_h1: float
    days_expected_h1: float
    look_days: tuple[float, ...] | None
    margin_abs: float = math.nan
    margin_rel: float = math.nan


@dataclass(frozen=True)
class PlanResult:
    """The evaluation of a plan.

    Attributes
    ----------
    rows : tuple of RowResult
        One per metric row, in the plan's order.
    duration_days : float or None
        Days the test runs (the binding row's, or the runtime); ``None`` when nothing decides.
    total_units : float or None
        Units the test needs over all arms (the binding row's, or the runtime's traffic).
    binding_index : int or None
        Index of the binding metric row.
    binding_name : str or None
        Its name.
    notes : tuple of str
        Plain-language remarks on how the plan was evaluated.
    incomplete : tuple of Unfinished
        The primary and guardrail rows that cannot be computed; when there are any, the plan
        is incomplete and has no duration, total units or binding metric.
    duration_powers : tuple of float
        Each row's power at the plan's duration: the chance its test detects its effect (a
        margin row: rules out its margin) with the units the plan's duration brings, at its
        α; ``nan`` where the row or the plan's duration is not known.
    window_days : float or None
        The days whose history windows gave the figures of the rows that follow them
        (:mod:`fourfold.plan.windows`); None when no row does, or the duration did not
        settle.
    """

    rows: tuple[RowResult, ...]
    duration_days: float | None
    total_units: float | None
    binding_index: int | None
    binding_name: str | None
    notes: tuple[str, ...]
    incomplete: tuple[Unfinished, ...] = ()
    duration_powers: tuple[float, ...] = ()
    window_days: float | None = None

    @property
    def status(self) -> str:
        """``"complete"``, or ``"incomplete"`` when a deciding row cannot be computed."""
        return "incomplete" if self.incomplete else "complete"

    def incomplete_text(self) -> str:
        """The rows that make the plan incomplete, in words ("" for a complete plan).

        Examples
        --------
        >>> from fourfold.plan import Metric, Plan, compute
        >>> plan = Plan(metrics=[Metric(name="Spend", role="primary", kind="mean")])
        >>> print(compute(plan).incomplete_text())
        row 1 (Spend): sd is required for a mean (the per-unit standard deviation)
        """
        return "; ".join(f"row {item.index + 1} ({item.name}): {item.reason}"
                         for item in self.incomplete)


@dataclass(frozen=True)
class Unfinished:
    """A deciding row that cannot be computed: its index (from 0), name and the reason."""

    index: int
    name: str
    reason: str

