"""The columns of the plan table: what each shows, how it is edited, what its header says.

Input columns map one-to-one onto fields of :class:`fourfold.plan.Metric`; output columns read
attributes of the row's :class:`fourfold.plan.RowResult`. The header tooltips explain every
column in plain words. Which cells are shown (and typed) in percent depends on the row: a
proportion's baseline, any effect or margin of a relative row, and a proportion's absolute effect
(in percentage points).
"""

from __future__ import annotations

from dataclasses import dataclass

INPUT = "input"
OUTPUT = "output"

TEXT = "text"
NUMBER = "number"
CHOICE = "choice"
CHECK = "check"


@dataclass(frozen=True)
class Column:
    """One column of the plan table.

    Attributes
    ----------
    key : str
        Metric field (inputs) or result attribute (outputs).
    header : str
        Short header text.
    tooltip : str
        Plain-words explanation shown on the header.
    group : str
        ``"input"`` or ``"output"``.
    editor : str
        ``"text"``, ``"number"``, ``"choice"`` or ``"check"``; outputs are never edited.
    optional : bool
        An empty cell is allowed and means "not set" (``None``).
    width : int
        Preferred width in average character widths.
    sequential : bool
        Shown only while the plan has interim looks.
    kind : str or None
        Shown only while the plan has a row of this kind (its own inputs).
    windows : bool
        Shown only while the plan has a row with history windows.
    """

    key: str
    header: str
    tooltip: str
    group: str = INPUT
    editor: str = NUMBER
    optional: bool = False
    width: int = 9
    sequential: bool = False
    kind: str | None = None
    windows: bool = False

    @property
    def label(self) -> str:
        """The header on one line, for messages."""
        return self.header.replace("\n", " ")

    @property
    def computed(self) -> bool:
        """Whether the column shows a result (read-only)."""
        return self.group == OUTPUT


COLUMNS: tuple[Column, ...] = (
    Column("name", "Metric", "What the row measures, as the team calls it.", editor=TEXT,
           width=14),
    Column("role", "Role", "Primary: the metric the decision rests on. Secondary: also "
           "reported. Guardrail: must not get worse.", editor=CHOICE, width=8),
    Column("kind", "Kind", "Mean (a per-unit average), proportion (a share of units that do "
           "something), rate (a count per unit, such as contacts per visitor), ratio (of two "
           "per-unit means, such as items per order) or quantile (such as the p95 of a load "
           "time).", editor=CHOICE, width=9),
    Column("baseline", "Baseline", "The control arm's expected value: a mean, a proportion "
           "(typed in percent, e.g. 3.1), a mean count per unit, a ratio of means or the "
           "quantile itself.", width=7),
    Column("sd", "SD", "Standard deviation of one unit's value, from history. Required for "
           "means; for rates, empty means the count's variance equals its mean. Ratio and "
           "quantile rows show the sd derived from their own inputs.", optional=True, width=6),
    Column("effect", "Effect", "The smallest change worth detecting (treatment minus control). "
           "In percent of the baseline when 'Relative' is ticked; in percentage points for an "
           "absolute change of a proportion.", optional=True, width=7),
    Column("relative", "Relative", "Effect and margin are fractions of the baseline (a lift) "
           "rather than differences in the metric's own unit.", editor=CHECK, width=5),
    Column("alternative", "Direction", "Two-sided: a change either way counts. Greater / less: "
           "only an increase / a decrease is tested for (one-sided).", editor=CHOICE, width=9),
    Column("margin", "Margin", "The difference assumed under the null hypothesis. Zero for an "
           "ordinary test; a negative margin with 'greater' tests that the treatment is not "
           "worse by more than it (non-inferiority).", width=7),
    Column("better", "Better\nwhen", "Which way the metric improves. A guardrail tests that it "
           "does not get worse: choosing this sets its direction and the side of its margin.",
           editor=CHOICE, width=7),
    Column("solve", "Solve\nfor", "Which quantity this row computes from the others: sample "
           "size, detectable effect, power or α.", editor=CHOICE, width=12),
    Column("units_control", "Control\nunits", "Units the control arm needs (or has), rounded up "
           "to whole units. With interim looks, the most it may need.", group=OUTPUT, width=8),
    Column("units_treatment", "Units per\ntreatment", "Units each treatment arm needs: the "
           "control's units times the allocation ratio.", group=OUTPUT, width=8),
    Column("units_total", "Total\nunits", "Units of all arms together (with interim looks, the "
           "most the test may need).", group=OUTPUT, width=9),
    Column("days", "Days", "Days of traffic the row needs at the plan's daily eligible units and "
           "share of traffic.", group=OUTPUT, width=4),
    Column("detectable", "Detectable\neffect", "The smallest effect this row can detect with its "
           "units, α and power (in the row's own unit, like 'Effect'). A guardrail or "
           "non-inferiority row (one-sided, with a margin) shows the tightest margin it rules "
           "out instead, 'margin +8 %': the margin closest to its effect that its units, α and "
           "power can reject.", group=OUTPUT, width=8),
    Column("power_out", "Power\nreached", "The power this row reaches with its units and "
           "effect.", group=OUTPUT, width=6),
    Column("power_at_duration", "Power at\nduration", "The chance this row's test detects its "
           "effect (a guardrail or non-inferiority row: rules out its margin) with the traffic "
           "of the plan's whole duration, at its α: a secondary row's real chance in the test "
           "as planned. Empty while the plan has no duration.", group=OUTPUT, width=6),
    Column("simulated", "Simulated\npower", "Power found by simulating the experiment and "
           "running its test (Plan → Check by simulation): ✓ agrees with the closed form, ? "
           "just outside its 95 % interval (could be chance), ⚠ disagrees. Empty until the row "
           "is checked; a check made before the row changed is marked stale.", group=OUTPUT,
           width=8),
    Column("alpha_out", "α\nused", "The significance level the row is tested at, after the "
           "plan's correction for several comparisons.", group=OUTPUT, width=6),
    Column("units_expected_h1", "Expected\nunits", "With interim looks: the total units the "
           "test uses on average if the effect is real, since it may stop at an earlier look.",
           group=OUTPUT, width=8, sequential=True),
    Column("days_expected_h1", "Expected\ndays", "With interim looks: the days the test runs on "
           "average if the effect is real.", group=OUTPUT, width=6, sequential=True),
    Column("look_days", "Look\ndays", "With interim looks: the day of each analysis; the last "
           "one is the longest the test may run.", group=OUTPUT, width=12, sequential=True),
    Column("unit", "Unit", "The metric's unit as written after a value (ms, $, items); shown "
           "beside its numbers, on the plots' axes and in the report.", editor=TEXT, width=5),
    Column("denominator", "Denom.\nmean", "Ratio rows: the denominator's mean per unit "
           "(orders per visitor); the numerator's mean is the baseline times it.",
           optional=True, width=7, kind="ratio"),
    Column("numerator_sd", "Numer.\nSD", "Ratio rows: the sd of one unit's numerator (items "
           "per visitor).", optional=True, width=6, kind="ratio"),
    Column("denominator_sd", "Denom.\nSD", "Ratio rows: the sd of one unit's denominator "
           "(orders per visitor).", optional=True, width=6, kind="ratio"),
    Column("correlation", "Corr.", "Ratio rows: the correlation of a unit's numerator and "
           "denominator. With the sds it gives the ratio's variance by the delta method.",
           optional=True, width=5, kind="ratio"),
    Column("quantile_level", "Quantile", "Quantile rows: which quantile the baseline is "
           "(95 for the p95).", optional=True, width=6, kind="quantile"),
    Column("density", "Density", "Quantile rows: the density at the quantile, per unit of the "
           "metric (the history import estimates it). Empty: from the log-normal through the "
           "baseline and the second percentile.", optional=True, width=6, kind="quantile"),
    Column("second_level", "2nd\nquantile", "Quantile rows: a second percentile of the metric "
           "(50 for the median) that fixes an assumed log-normal with the baseline.",
           optional=True, width=6, kind="quantile"),
    Column("second_value", "2nd\nvalue", "Quantile rows: the metric's value at the second "
           "percentile (the median, say).", optional=True, width=6, kind="quantile"),
    Column("windowed", "By\nwindow", "The row's baseline and sd (and ρ, a ratio's inputs) are "
           "its history figures over each unit's first days as long as the plan's duration — "
           "revenue per visitor over 21 days for a 21-day test — and follow the duration; the "
           "row's own figures are not used. Needs the windows of a history import with unit "
           "and time columns.", editor=CHECK, width=6, windows=True),
    Column("method", "Method", "The test statistic used for this kind. Empty: the usual one "
           "for the kind.", editor=CHOICE, width=7),
    Column("alpha", "α", "This row's significance level; empty uses the plan's default "
           "(before any correction for several comparisons).", optional=True, width=5),
    Column("power", "Power", "This row's power, the chance of detecting the effect if it is "
           "real; empty uses the plan's default.", optional=True, width=5),
    Column("rho", "ρ\n(CUPED)", "Correlation of the metric with its pre-experiment value. "
           "Variance reduction by CUPED multiplies the variance by 1 − ρ².", width=5),
    Column("cluster_size", "Cluster\nsize", "Mean number of units per randomised cluster; 1 "
           "when each unit is randomised on its own.", width=5),
    Column("icc", "ICC", "Intra-cluster correlation: how alike units of one cluster are.",
           width=4),
    Column("cluster_cv", "Cluster\nCV", "Coefficient of variation of cluster sizes (0 when all "
           "clusters are the same size).", width=5),
    Column("n", "n\n(control)", "Control-arm units, for rows that solve for effect, power or α "
           "when the plan has no fixed runtime.", optional=True, width=7),
    Column("notes", "Notes", "Free text: where the numbers come from.", editor=TEXT, width=20),
)

KEYS: tuple[str, ...] = tuple(column.key for column in COLUMNS)
COLUMN_KINDS: dict[str, str] = {column.key: column.kind for column in COLUMNS if column.kind}
"""The columns that only rows of one kind use, and that kind."""

SOLVED_COLUMN: dict[str, tuple[str, ...]] = {
    "sample_size": ("units_control",),
    "detectable_effect": ("detectable",),
    "detectable_margin": ("detectable",),
    "power": ("power_out",),
    "significance_level": ("alpha_out",),
}


def column_index(key: str) -> int:
    """Position of the column showing ``key``.

    Examples
    --------
    >>> COLUMNS[column_index("baseline")].header
    'Baseline'
    """
    return KEYS.index(key)
