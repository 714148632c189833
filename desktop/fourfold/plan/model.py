"""The plan document: plan-wide settings and one row per metric.

Plain dataclasses with no behaviour beyond construction; every change a user makes goes through
:mod:`fourfold.plan.commands` (which validates with :func:`fourfold.plan.fields.validate_field`),
and files go through :mod:`fourfold.plan.storage`, which checks every field on load.
"""

from __future__ import annotations

from dataclasses import dataclass, field


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
        Allocation per treatment arm: treatment units per control unit.
    correction : str
        Multiple-comparison correction of α: ``"none"``, ``"bonferroni"`` or ``"sidak"``.
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
    correction: str = "none"
    daily_units: float | None = None
    share: float = 1.0
    whole_weeks: bool = True
    runtime_days: float | None = None
    looks: int = 1
    spending: str = "ld-obrien-fleming"
    futility: bool = False


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
        ``"mean"``, ``"proportion"`` or ``"rate"`` (see :mod:`fourfold.engine`).
    method : str or None
        Test statistic of the kind (``None``: the kind's default).
    baseline : float
        Control-arm mean, proportion or mean count per unit.
    sd : float or None
        Per-unit standard deviation (required for means; optional for rates).
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


@dataclass
class Plan:
    """A plan: its settings and its metric rows, in display order.

    Examples
    --------
    >>> plan = Plan.empty()
    >>> [metric.role for metric in plan.metrics]
    ['primary']
    """

    settings: Settings = field(default_factory=Settings)
    metrics: list[Metric] = field(default_factory=list)

    @classmethod
    def empty(cls) -> Plan:
        """A new plan (File → New): default settings and one primary metric row."""
        return cls(Settings(), [Metric(name="Primary metric", role="primary")])
