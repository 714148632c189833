"""The plan document: plan-wide settings and one row per metric.

Plain dataclasses with no behaviour beyond construction (a metric row also counts its changes,
see :attr:`Metric.stamp`); every change a user makes goes through
:mod:`fourfold.plan.commands` (which validates with :func:`fourfold.plan.fields.validate_field`),
and files go through :mod:`fourfold.plan.storage`, which checks every field on load.

A plan is its **base** (``settings`` and ``metrics``) and any number of named **scenarios**, each
storing only what it changes; :mod:`fourfold.plan.scenarios` builds a scenario's plan.
"""

from __future__ import annotations

import itertools
import os
from dataclasses import dataclass, field
from typing import Any


def new_row_id() -> str:
    """A fresh row id: eight random hexadecimal digits.

    Random rather than counted, so that the id of a deleted row is never given to a new one
    (a scenario's changes to the deleted row must not move to another row).

    Examples
    --------
    >>> len(new_row_id()), new_row_id() != new_row_id()
    (8, True)
    """
    return os.urandom(4).hex()


_STAMPS = itertools.count()


@dataclass
class Settings:
    """Plan-wide settings: the defaults every metric row inherits and the traffic.

    Attributes
    ----------
    title, description : str
        Shown at the top of the window and of the exports.
    alpha, power : float
        Default significance level and power of every row (a row may override them).
    arms : int
        Number of treatment arms, each compared with the one control arm.
    ratio : float
        Allocation per treatment arm: treatment units per control unit (used when
        ``allocation`` is ``"fixed"``).
    allocation : str
        ``"fixed"`` (``ratio`` as given) or ``"sqrt-k"``: the control gets √arms times the
        units of each treatment arm (:func:`fourfold.engine.allocation_ratio`).
    correction : str
        Multiple-comparison correction of α: ``"none"``, ``"bonferroni"``, ``"sidak"`` or
        ``"dunnett"`` (many-to-one, for the treatment arms against the shared control).
    daily_units : float or None
        Eligible units (visitors, users) per day; ``None`` means durations are not computed.
    share : float
        Share of the eligible traffic that enters the test, in (0, 1].
    whole_weeks : bool
        Round durations up to whole weeks (weekday effects).
    runtime_days : float or None
        Fixed runtime, a whole number of days: when set, rows solve for detectable effect or
        power from the units the runtime provides instead of for sample size.
    looks, spending, futility
        Interim looks of a group-sequential design (``looks=1`` is a fixed design), the α
        spending function and whether a futility bound is used.
    traffic : str
        The traffic model (:mod:`fourfold.plan.traffic`): ``"constant"`` (``daily_units`` new
        units every day) or ``"reach"`` (the distinct units of ``reach``).
    reach : tuple of (day, units) pairs
        The reach curve: distinct eligible units after each day listed (cumulative; linear
        between the days, extrapolated by a fitted model beyond the last).
    reach_source : str
        Where the reach curve comes from (a history file, typed), for the report.
    ramp : tuple of (day, share) pairs
        The ramp-up: up to and including each day, the share of traffic in the test (rising);
        after the last, ``share``.
    burn_in : int
        Days at the start whose units are not analysed (0: none).

    Examples
    --------
    >>> Settings(alpha=0.01).power
    0.8
    """

    title: str = "Untitled plan"
    description: str = ""
    alpha: float = 0.05
    power: float = 0.8
    arms: int = 1
    ratio: float = 1.0
    allocation: str = "fixed"
    correction: str = "none"
    daily_units: float | None = None
    share: float = 1.0
    whole_weeks: bool = True
    runtime_days: float | None = None
    looks: int = 1
    spending: str = "ld-obrien-fleming"
    futility: bool = False
    traffic: str = "constant"
    reach: tuple[tuple[float, float], ...] = ()
    reach_source: str = ""
    ramp: tuple[tuple[float, float], ...] = ()
    burn_in: int = 0


@dataclass
class Metric:
    """One metric row of a plan.

    Attributes
    ----------
    name : str
        What the row measures, as the team calls it.
    role : str
        ``"primary"``, ``"secondary"`` or ``"guardrail"``.
    kind : str
        ``"mean"``, ``"proportion"``, ``"rate"``, ``"ratio"`` or ``"quantile"`` (see
        :mod:`fourfold.engine`).
    method : str or None
        Test statistic of the kind (``None``: the kind's default).
    baseline : float
        Control-arm mean, proportion, mean count per unit, ratio of means or quantile.
    sd : float or None
        Per-unit standard deviation (required for means; optional for rates; ratio and
        quantile rows derive theirs, see :mod:`fourfold.plan.kinds`).
    unit : str
        The metric's unit as written after a value ("ms", "$", "items"); empty for none.
    better : str
        ``"higher"`` or ``"lower"``: which direction is good for the metric; it sets the
        one-sided alternative of a guardrail row ("must not get worse").
    denominator, numerator_sd, denominator_sd, correlation : float or None
        Ratio rows: the denominator's mean per unit, the per-unit sds of numerator and
        denominator and their correlation (the baseline is the ratio of the means).
    quantile_level : float or None
        Quantile rows: the level p of the quantile in the baseline (0.95 for the p95).
    density : float or None
        Quantile rows: the density at the quantile (from history); when empty, the density
        of the log-normal through the baseline and ``second_level``/``second_value``.
    second_level, second_value : float or None
        Quantile rows: a second percentile of the metric (e.g. 0.5 and the median).
    effect : float or None
        Minimum detectable effect, treatment minus control (a fraction of the baseline when
        ``relative``); used by rows that solve for sample size, power or α.
    relative : bool
        Whether ``effect`` and ``margin`` are fractions of the baseline.
    alternative : str
        ``"two-sided"``, ``"greater"`` or ``"less"``.
    margin : float
        Difference under the null hypothesis (non-inferiority / superiority margin).
    alpha, power : float or None
        Row overrides of the plan defaults.
    rho, cluster_size, icc, cluster_cv : float
        Design factor: CUPED correlation with a pre-period covariate, mean units per cluster,
        intra-cluster correlation and the coefficient of variation of cluster sizes.
    solve : str
        Which quantity the row computes: ``"sample_size"``, ``"detectable_effect"``,
        ``"power"`` or ``"significance_level"``.
    n : float or None
        Control-arm units for rows that do not solve for sample size, when the plan has no
        fixed runtime.
    notes : str
        Free text (where the numbers come from).
    simulation : dict or None
        A stored Monte Carlo check of the row (JSON-compatible).
    windowed : bool
        Take the row's figures from ``windows``, for the window as long as the plan's duration
        (:mod:`fourfold.plan.windows`) instead of ``baseline``, ``sd`` and the others.
    windows : tuple of dict
        The row's figures over each unit's first days, from a history import: one dict per
        window with ``"days"`` and the fields it sets (``baseline``, ``sd``, ``rho``, a ratio's
        inputs), shortest window first.
    id : str
        The row's stable identity, which scenarios use to name the row (not a field a user
        edits, and not compared: two rows with the same values are equal). A new row gets a
        fresh one; a copy keeps it until a command inserts it into a plan that has that id.
    stamp : int
        Not a field: a number no other row object has had, renewed by every assignment to
        the row, so that a cache tells the rows changed since it last looked from the others
        without comparing their fields (:class:`fourfold.plan.evaluation.RowCache`). A copy
        made without its constructor (``copy.copy``) keeps it, as it keeps the values.

    Examples
    --------
    >>> Metric(name="Checkout conversion", baseline=0.031).kind
    'proportion'
    """

    name: str = "New metric"
    role: str = "secondary"
    kind: str = "proportion"
    method: str | None = None
    baseline: float = 0.1
    sd: float | None = None
    unit: str = ""
    better: str = "higher"
    denominator: float | None = None
    numerator_sd: float | None = None
    denominator_sd: float | None = None
    correlation: float | None = None
    quantile_level: float | None = None
    density: float | None = None
    second_level: float | None = None
    second_value: float | None = None
    effect: float | None = 0.05
    relative: bool = True
    alternative: str = "two-sided"
    margin: float = 0.0
    alpha: float | None = None
    power: float | None = None
    rho: float = 0.0
    cluster_size: float = 1.0
    icc: float = 0.0
    cluster_cv: float = 0.0
    solve: str = "sample_size"
    n: float | None = None
    notes: str = ""
    simulation: dict | None = None
    windowed: bool = False
    windows: tuple[dict, ...] = ()
    id: str = field(default_factory=new_row_id, compare=False, repr=False)

    def __setattr__(self, name: str, value: Any) -> None:
        object.__setattr__(self, name, value)
        object.__setattr__(self, "stamp", next(_STAMPS))


@dataclass
class Scenario:
    """A named alternative to the base plan: only what it changes.

    Attributes
    ----------
    name : str
        Unique within the plan (ignoring case); never "base".
    settings : dict
        Settings field → value, for the settings the scenario changes.
    rows : dict
        Row id → {metric field → value}, for the row fields the scenario changes.
    omitted : list of str
        Ids of the base rows the scenario leaves out.

    Examples
    --------
    >>> Scenario("All traffic", settings={"share": 1.0}).rows
    {}
    """

    name: str
    settings: dict[str, Any] = field(default_factory=dict)
    rows: dict[str, dict[str, Any]] = field(default_factory=dict)
    omitted: list[str] = field(default_factory=list)


@dataclass
class Plan:
    """A plan: its settings and its metric rows, in display order (the base), and scenarios.

    Attributes
    ----------
    settings : Settings
        The base's settings.
    metrics : list of Metric
        The base's rows.
    scenarios : list of Scenario
        Named alternatives, in the order they were made.
    active : str or None
        The scenario the window shows and edits (``None``: the base).

    Examples
    --------
    >>> plan = Plan.empty()
    >>> [metric.role for metric in plan.metrics], plan.scenarios, plan.active
    (['primary'], [], None)
    """

    settings: Settings = field(default_factory=Settings)
    metrics: list[Metric] = field(default_factory=list)
    scenarios: list[Scenario] = field(default_factory=list)
    active: str | None = None

    @classmethod
    def empty(cls) -> Plan:
        """A new plan (File → New): default settings and one primary metric row."""
        return cls(Settings(), [Metric(name="Primary metric", role="primary")])
