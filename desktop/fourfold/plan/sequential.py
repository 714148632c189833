"""Interim looks in a plan: each row's group sequential design and what it does to units and days.

With ``settings.looks > 1`` a row's units are the *maximum* the test may need: the fixed
design's units times the design's inflation factor. Rows that start from a number of units
(a runtime, or their own ``n``) treat it as the maximum, so they detect the effect a fixed
design of ``n / inflation`` units detects, or reach the power of the boundaries at that size.
Looks fall at equal shares of the maximum, hence on equally spaced days, except in a plan that
runs in whole weeks: there every look falls at the end of a week (:func:`week_timing`) and the
boundaries are those of the design at those information fractions, a row's maximum units being
the fixed design's units times that design's inflation (solved together with the row's weeks,
which the inflation may lengthen). A run with fewer whole weeks than looks keeps equal spacing.
Expected units and days are those if the planned effect is real (H1), stopping at the first
crossing.

The design of a row uses its α (after correction) and power, its direction and the plan's
spending family; a futility bound uses the Lan–DeMets family of the same shape (the classic
Pocock and O'Brien–Fleming shapes have no β-spending form of their own).

References
----------
Jennison, C. & Turnbull, B. W. (2000). *Group Sequential Methods with Applications to Clinical
Trials*. Chapman & Hall/CRC, ch. 2 and 7 (inflation factors, expected sample size).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtri

from fourfold.engine import sequential
from fourfold.engine.sequential import Boundaries, SequentialDesign
from fourfold.plan import traffic

FUTILITY_FAMILY = {
    "ld-obrien-fleming": "ld-obrien-fleming",
    "ld-pocock": "ld-pocock",
    "hsd": "hsd",
    "obrien-fleming": "ld-obrien-fleming",
    "pocock": "ld-pocock",
}
"""The β-spending family a futility bound uses with each α-spending choice."""

NO_ALPHA_SOLVE = ("with interim looks the significance level cannot be solved for; set looks "
                  "to 1 or solve for power")


def week_timing(settings, days: float) -> tuple[float, ...] | None:
    """Information fractions of looks at week ends in a run of ``days`` days, or ``None``.

    ``None`` (equal spacing) unless the plan has interim looks and runs in whole weeks, and the
    run holds at least as many whole weeks as looks. Interim look k of K falls at the end of
    week ⌈k·W/K⌉ of the run's W whole weeks, the last look at its end; its information
    fraction is its share of the run's analysed units (:mod:`fourfold.plan.traffic`), which
    for constant traffic without ramp-up or burn-in is its share of the days.

    Examples
    --------
    >>> from fourfold.plan.model import Settings
    >>> week_timing(Settings(looks=3, whole_weeks=True), 28.0)
    (0.5, 0.75, 1.0)
    >>> week_timing(Settings(looks=3, whole_weeks=True), 14.0) is None  # 2 weeks, 3 looks
    True
    """
    if settings.looks <= 1 or not settings.whole_weeks or not math.isfinite(days):
        return None
    weeks = int(math.floor(days / 7.0 + 1e-9))
    if weeks < settings.looks:
        return None
    looks = settings.looks
    if not traffic.is_plain(settings):
        ends = np.array([7.0 * math.ceil(k * weeks / looks - 1e-9) for k in range(1, looks)])
        whole = float(traffic.units_after(settings, days))
        fractions = traffic.units_after(settings, ends) / whole
        if not (whole > 0 and np.all(np.diff(np.concatenate([[0.0], fractions, [1.0]])) > 0)):
            return None
        return (*(float(f) for f in fractions), 1.0)
    ends = [7.0 * math.ceil(k * weeks / looks - 1e-9) / days for k in range(1, looks)]
    return (*ends, 1.0)


def row_design(settings, alpha: float, power: float, alternative: str,
               designs: dict | None = None, days: float = math.nan) -> SequentialDesign | None:
    """The group sequential design of a row, or ``None`` for a fixed design (one look).

    ``designs`` may be a dict the caller keeps for one evaluation (or for every evaluation at
    one plan's settings: a row cache's), so that rows sharing α, power, sidedness and the
    timing of their looks share one design ("greater" and "less" have the same boundaries).
    ``days`` is the row's run, for looks at week ends (:func:`week_timing`). The dict also
    remembers the design by these arguments themselves, so that the rows of a large plan,
    which share a few of them, do not work out the timing of their looks one by one.

    Raises
    ------
    ValueError
        When the design is impossible (e.g. power not above the one-sided α).

    Examples
    --------
    >>> from fourfold.plan.model import Settings
    >>> round(row_design(Settings(looks=5, spending="pocock"), 0.05, 0.8,
    ...                  "two-sided").inflation, 3)
    1.229
    >>> row_design(Settings(), 0.05, 0.8, "two-sided") is None
    True
    """
    return _remembered(settings, alpha, power, alternative, designs, days, whole=True)


def row_boundaries(settings, alpha: float, power: float, alternative: str, designs: dict,
                   days: float = math.nan) -> SequentialDesign | Boundaries | None:
    """What :func:`power_of` needs of a row's design (``None`` for a fixed design): the
    boundaries of :func:`row_design`'s design, without the search for the drift that gives
    the design its power and inflation (most of a design's cost), unless the design has a
    futility bound (which that search places) or ``designs`` holds the design already.

    Raises
    ------
    ValueError
        When the design is impossible (as :func:`row_design`).

    Examples
    --------
    >>> from fourfold.plan.model import Settings
    >>> settings, designs = Settings(looks=3), {}
    >>> bare = row_boundaries(settings, 0.05, 0.8, "less", designs)
    >>> made = row_design(settings, 0.05, 0.8, "greater")
    >>> type(bare).__name__, power_of(bare, 0.7) == power_of(made, 0.7)
    ('Boundaries', True)
    """
    if settings.futility:
        return row_design(settings, alpha, power, alternative, designs, days)
    return _remembered(settings, alpha, power, alternative, designs, days, whole=False)


def _remembered(settings, alpha: float, power: float, alternative: str, designs: dict | None,
                days: float, whole: bool) -> SequentialDesign | Boundaries | None:
    """:func:`row_design` (``whole``) or :func:`row_boundaries`."""
    if settings.looks <= 1:
        return None
    make = shared_design if whole else shared_boundaries
    if designs is None:
        return make(settings.looks, settings.spending, bool(settings.futility),
                    *_key(settings, alpha, power, alternative, days))
    asked = ("design" if whole else "boundaries", alpha, power, alternative,
             _days_key(settings, days))
    made = designs.get(asked)
    if made is None:
        key = _key(settings, alpha, power, alternative, days)
        made = designs.get(key)
        if made is None:
            made = make(settings.looks, settings.spending, bool(settings.futility), *key)
            if whole:
                designs[key] = made
        designs[asked] = made
    return made


def design_timing(settings, days: float) -> tuple[float, ...] | None:
    """:func:`week_timing` as a design is keyed by it: ``None`` too where the week ends fall
    at equal shares to the last bit (four looks in four weeks of constant traffic), so that
    those rows share the equally spaced design instead of making the same one again.

    Examples
    --------
    >>> from fourfold.plan.model import Settings
    >>> design_timing(Settings(looks=4, whole_weeks=True), 28.0) is None
    True
    >>> design_timing(Settings(looks=4, whole_weeks=True), 35.0)
    (0.4, 0.6, 0.8, 1.0)
    """
    timing = week_timing(settings, days)
    if timing is not None and timing == _equal_shares(settings.looks):
        return None
    return timing


@functools.lru_cache(maxsize=32)
def _equal_shares(looks: int) -> tuple[float, ...]:
    """The fractions :func:`fourfold.engine.sequential.design` gives equally spaced looks."""
    return tuple((np.arange(1, looks + 1) / looks).tolist())


def _key(settings, alpha: float, power: float, alternative: str, days: float) -> tuple:
    """What a row's design is made of, besides the plan's looks, spending and futility."""
    return (float(alpha), float(power), alternative == "two-sided",
            design_timing(settings, days))


def _days_key(settings, days: float) -> float | None:
    """What of a row's ``days`` its looks' timing depends on: the days themselves in a plan
    of whole weeks, where the looks fall at week ends (``math.nan`` for any day not known,
    so that it is one key), else nothing."""
    if not settings.whole_weeks:
        return None
    return days if math.isfinite(days) else math.nan


@functools.lru_cache(maxsize=4096)
def shared_design(looks: int, spending: str, futility: bool, alpha: float, power: float,
                  two_sided: bool, timing: tuple[float, ...] | None) -> SequentialDesign:
    """The design of :func:`row_design`, made once for every evaluation, scenario and curve
    that asks for it (the design is a pure function of these values; "greater" and "less"
    share their boundaries, so a one-sided design is made as "greater").

    Raises
    ------
    ValueError
        When the design is impossible (a failed design is not remembered).

    Examples
    --------
    >>> shared_design(3, "pocock", False, 0.05, 0.8, True, None) is shared_design(
    ...     3, "pocock", False, 0.05, 0.8, True, None)
    True
    """
    return sequential.design(
        looks, alpha=alpha, power=power, alternative="two-sided" if two_sided else "greater",
        spending=spending, timing=timing,
        futility=FUTILITY_FAMILY[spending] if futility else None,
    )


@functools.lru_cache(maxsize=4096)
def shared_boundaries(looks: int, spending: str, futility: bool, alpha: float, power: float,
                      two_sided: bool, timing: tuple[float, ...] | None) -> Boundaries:
    """The boundaries of :func:`shared_design`'s design without futility (``futility`` is
    false), made once for every evaluation that asks for them.

    Raises
    ------
    ValueError
        When the design is impossible (failed boundaries are not remembered).
    """
    return sequential.boundaries(looks, alpha=alpha, power=power,
                                 alternative="two-sided" if two_sided else "greater",
                                 spending=spending, timing=timing)


def inflation(made: SequentialDesign | None) -> float:
    """Maximum units ÷ fixed-design units (1 for a fixed design)."""
    return 1.0 if made is None else made.inflation


def power_of(made: SequentialDesign | Boundaries, fixed_power: float) -> float:
    """Power of the boundaries at a size where a fixed design would reach ``fixed_power``.

    The fixed design's drift there is z₁₋α/₂ + Φ⁻¹(fixed_power) (one-sided: z₁₋α).

    Examples
    --------
    >>> made = sequential.design(3)
    >>> round(power_of(made, 0.8), 3), round(power_of(made, 0.5), 3)
    (0.795, 0.494)
    """
    return _power_of(made, float(fixed_power))


@functools.lru_cache(maxsize=65536)
def _power_of(made: SequentialDesign | Boundaries, fixed_power: float) -> float:
    """:func:`power_of`, remembered: rows of one design at one size ask for it again after
    every edit of another row (a design is hashed as the object it is)."""
    side = made.alpha / 2.0 if made.alternative == "two-sided" else made.alpha
    clipped = min(max(fixed_power, 1e-15), 1.0 - 1e-15)
    return sequential.power_at(made, float(ndtri(1.0 - side) + ndtri(clipped)))


def _ceil(value: float) -> float:
    return float(math.ceil(value - 1e-9 * max(1.0, abs(value))))


def look_days(made: SequentialDesign, days: float,
              settings=None) -> tuple[float, ...] | None:
    """Calendar day of each look (rounded up to whole days; the last is ``days``).

    With ``settings`` whose traffic is not plain constant (a reach curve, a ramp-up, a
    burn-in; :mod:`fourfold.plan.traffic`), look k falls on the first day by which the
    share t_k of the run's analysed units is in.
    """
    if not math.isfinite(days):
        return None
    if settings is not None and not traffic.is_plain(settings):
        run = float(traffic.units_after(settings, days))
        found = traffic.days_for(settings, np.asarray(made.fractions[:-1]) * run,
                                 whole_weeks=False)
        return tuple(float(min(day, days)) for day in np.atleast_1d(found)) + (float(days),)
    return tuple(_ceil(t * days) for t in made.fractions[:-1]) + (float(days),)


def rows_fields(staged: list, units_total: np.ndarray, days: np.ndarray, settings,
                designs: dict) -> tuple[list, list, list, list]:
    """``(units_max, units_expected_h1, days_expected_h1, look_days)`` of computed rows, one
    list each.

    ``staged`` holds each row's design (``None``: fixed), ``units_total`` and ``days`` its
    maximum; a fixed design's row keeps them unchanged. ``settings`` give the traffic model
    for the look days (:func:`look_days`). A design's look days and expected days at a run of
    some days are worked out once and kept in ``designs``, the evaluation's dict of designs
    (:func:`row_design`), for every row of that design and run.

    Examples
    --------
    >>> from fourfold.plan.model import Settings
    >>> made = sequential.design(4, spending="obrien-fleming")
    >>> units, expected, expected_days, looks = rows_fields(
    ...     [made, None], np.array([10_000.0, 500.0]), np.array([28.0, 7.0]), Settings(), {})
    >>> units, looks
    ([10000.0, 500.0], [(7.0, 14.0, 21.0, 28.0), None])
    >>> bool(expected[0] < units[0] and expected_days[0] < 28.0), expected[1], expected_days[1]
    (True, 500.0, 7.0)
    """
    units = np.asarray(units_total, dtype=float)
    expected_days = np.asarray(days, dtype=float).tolist()
    looks: list = [None] * len(staged)
    share = np.ones(units.shape)
    staged_rows = np.zeros(units.shape, dtype=bool)
    for index, (made, day) in enumerate(zip(staged, expected_days, strict=True)):
        if made is not None:
            key = ("looks", made, day if math.isfinite(day) else math.nan)
            found = designs.get(key)
            if found is None:
                found = designs[key] = _look_fields(made, day, settings)
            share[index], looks[index], expected_days[index] = found
            staged_rows[index] = True
    with np.errstate(invalid="ignore", over="ignore"):
        scaled = units * share
        rounded = np.ceil(scaled - 1e-9 * np.maximum(1.0, np.abs(scaled)))
    expected = np.where(staged_rows, np.where(np.isfinite(units), rounded, np.nan), units)
    return units.tolist(), expected.tolist(), expected_days, looks


def _look_fields(made: SequentialDesign, days: float, settings) -> tuple:
    """A design's share of its maximum expected under H1, its look days at a run of
    ``days`` and the days expected under H1."""
    looks = look_days(made, days, settings)
    expected_days = math.nan if looks is None else _ceil(float(np.dot(made.stop_h1, looks)))
    return made.expected_h1 / made.inflation, looks, expected_days


@functools.lru_cache(maxsize=256)
def peeking_text(looks: int, alpha: float) -> str:
    """The price of unadjusted peeking, in words (remembered: it sums every look's crossings,
    a quarter of a millisecond, and the summary and the boundaries figure ask for it after
    every recompute).

    Examples
    --------
    >>> peeking_text(5, 0.05)
    'Checking 5 times at p < 0.05 unadjusted gives a false-positive rate of 14 %, not 5 %.'
    """
    rate = sequential.peeking_alpha(looks, alpha)
    return (f"Checking {looks} times at p < {alpha:g} unadjusted gives a false-positive rate "
            f"of {rate * 100:.2g} %, not {alpha * 100:g} %.")


def plan_notes(plan, rows, designs: dict | None = None) -> tuple[str, ...]:
    """Notes on the interim looks for the plan's summary; empty for a fixed design.

    The inflation quoted is that of the first computed primary row (else the first computed
    row), at that row's α and power; the price of peeking is at the plan's α. ``designs`` is
    the evaluation's dict of designs (see :func:`row_design`).
    """
    settings = plan.settings
    if settings.looks <= 1:
        return ()
    order = sorted(range(len(rows)), key=lambda i: plan.metrics[i].role != "primary")
    notes = []
    for index in order:
        made = _design_for(plan, rows[index], index, designs)
        if made is None:
            continue
        futility = " or futility" if settings.futility else ""
        notes.append(
            f"{settings.looks} looks: units and days are the maximum the test may need "
            f"({plan.metrics[index].name}: {made.inflation:.3f} × the fixed design); if the "
            f"effect is real it stops for efficacy{futility} after "
            f"{made.expected_h1 / made.inflation * 100:.0f} % of them on average."
        )
        break
    # a row's look days follow from its run alone (the looks' shares, equal or at week ends,
    # and the traffic), so each run of days is looked at once, however many rows it has
    runs = {row.days: row.look_days for row in rows
            if not row.reason and math.isfinite(row.days)}
    if settings.whole_weeks:
        equal = {days for days in runs if week_timing(settings, days) is None}
        _note_rows(notes, plan, rows, equal, "Fewer whole weeks than looks ({}): those looks "
                   "are equally spaced, not at week ends.")
    crowded = {days for days, at in runs.items() if at and len(set(at)) < len(at)}
    _note_rows(notes, plan, rows, crowded, "Two looks or more on one day ({}): each is taken "
               "when its share of the units is in, part-way through that day.")
    notes.append(peeking_text(settings.looks, settings.alpha))
    return tuple(notes)


def _note_rows(notes: list, plan, rows, runs: set, text: str) -> None:
    """Add ``text`` naming the computed rows whose run of days is in ``runs`` (up to three by
    name, else their count)."""
    if not runs:
        return
    named = [plan.metrics[index].name for index, row in enumerate(rows)
             if not row.reason and row.days in runs]
    notes.append(text.format(", ".join(named) if len(named) <= 3 else f"{len(named)} rows"))


@dataclass(frozen=True)
class Look:
    """One interim look of a row: when it happens and what it decides.

    ``z_efficacy`` / ``z_futility`` are z boundaries oriented in the row's direction
    (``z_futility`` is nan without a futility bound); ``p_efficacy`` is the nominal p-value
    below which the look stops for efficacy; ``alpha_spent`` is cumulative.
    """

    look: int
    fraction: float
    day: float
    units: float
    z_efficacy: float
    p_efficacy: float
    z_futility: float
    alpha_spent: float
    stop_h0: float
    stop_h1: float


LOOK_HEADERS = {
    "look": "Look",
    "fraction": "Share of maximum",
    "day": "Day",
    "units": "Total units",
    "z_efficacy": "Efficacy z",
    "p_efficacy": "Nominal p",
    "z_futility": "Futility z",
    "alpha_spent": "α spent",
    "stop_h0": "P(stop | no effect)",
    "stop_h1": "P(stop | effect)",
}
"""Column headers of a looks table, keyed by :class:`Look` field."""


def looks_of(made: SequentialDesign, units_total: float, days: float,
             settings=None) -> tuple[Look, ...]:
    """The looks table of a row with maximum ``units_total`` and ``days`` (``settings``: the
    traffic model for the look days, :func:`look_days`).

    Examples
    --------
    >>> made = sequential.design(2, spending="pocock")
    >>> [(look.day, look.units, round(look.z_efficacy, 3)) for look in
    ...  looks_of(made, 1000.0, 14.0)]
    [(7.0, 500.0, 2.178), (14.0, 1000.0, 2.178)]
    """
    days_at = look_days(made, days, settings) or (math.nan,) * made.looks
    lower = made.lower if made.lower is not None else np.full(made.looks, math.nan)
    return tuple(
        Look(k + 1, float(t), days_at[k],
             _ceil(t * units_total) if math.isfinite(units_total) else math.nan,
             float(made.upper[k]), float(made.nominal_p[k]), float(lower[k]),
             float(made.alpha_spent[k]), float(made.stop_h0[k]), float(made.stop_h1[k]))
        for k, t in enumerate(made.fractions)
    )


def row_looks(plan, result, index: int) -> tuple[Look, ...]:
    """The looks table of row ``index`` of an evaluated plan; empty for a fixed design or a
    row that was not computed.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, Settings
    >>> from fourfold.plan.evaluation import compute
    >>> plan = Plan(Settings(looks=3), [Metric(name="Spend", role="primary", kind="mean",
    ...                                       baseline=10.0, sd=5.0, effect=0.5)])
    >>> [look.look for look in row_looks(plan, compute(plan), 0)]
    [1, 2, 3]
    """
    made = design_of_row(plan, result, index)
    if made is None:
        return ()
    row = result.rows[index]
    return looks_of(made, row.units_total, row.days, plan.settings)


def design_of_row(plan, result, index: int) -> SequentialDesign | None:
    """The design behind row ``index`` of an evaluated plan (``None``: fixed or not computed)."""
    return _design_for(plan, result.rows[index], index)


def _design_for(plan, row, index: int, designs: dict | None = None) -> SequentialDesign | None:
    settings = plan.settings
    if settings.looks <= 1 or row.reason or not math.isfinite(row.alpha):
        return None
    metric = plan.metrics[index]
    power = settings.power if metric.power is None else metric.power
    try:
        return row_design(settings, row.alpha, power, metric.alternative, designs, row.days)
    except ValueError:
        return None


def looks_row(plan, result) -> int | None:
    """The row whose looks a report shows: the binding row, else the first with looks.

    ``None`` for a fixed design or when no row could be computed.

    Examples
    --------
    >>> from fourfold.plan.model import Metric, Plan, Settings
    >>> from fourfold.plan.evaluation import compute
    >>> plan = Plan(Settings(looks=2), [Metric(name="Spend", role="secondary", kind="mean",
    ...                                       baseline=10.0, sd=5.0, effect=0.5)])
    >>> looks_row(plan, compute(plan)), looks_row(Plan(Settings(), plan.metrics), compute(plan))
    (0, None)
    """
    if plan.settings.looks <= 1:
        return None
    if result.binding_index is not None:
        return result.binding_index
    return next((index for index in range(len(result.rows))
                 if design_of_row(plan, result, index) is not None), None)
