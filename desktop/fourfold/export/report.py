"""What the PDF report says, as plain text and tables (no Qt): the layout lives in ``pdf``.

Numbers are formatted for reading here: units rounded up to whole units (a sample size is
always rounded up), proportions as percentages, effects with four significant digits. The CSV
export keeps the full-precision values.

The methods section and its references are in :mod:`fourfold.export.report_methods`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from fourfold.export.report_methods import (
    SPENDING_LABELS,
    SPENDING_SOURCES,
    Method,
    method_of,
    methods,
)
from fourfold.formatting import format_days
from fourfold.plan import kinds
from fourfold.plan.arms import equal_allocation_saving, treatment_ratio
from fourfold.plan.fields import CORRECTION_LABELS
from fourfold.plan.sequential import looks_row, row_looks

__all__ = ["SPENDING_LABELS", "SPENDING_SOURCES", "Method", "Table", "method_of", "methods"]

DASH = "—"
ROLE_ORDER = ("primary", "secondary", "guardrail")
SOLVE_LABELS = {
    "sample_size": "sample size",
    "detectable_effect": "detectable effect",
    "power": "power",
    "significance_level": "α",
}
@dataclass(frozen=True)
class Table:
    """A table to lay out: header, rows of text cells, per-column alignment and emphasis.

    ``align`` holds ``"l"`` or ``"r"`` per column; ``bold`` the (row, column) cells to set in
    bold (the solved quantity of each row); ``marked`` the rows to highlight (the binding one).
    """

    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    align: tuple[str, ...]
    bold: frozenset[tuple[int, int]] = field(default_factory=frozenset)
    marked: frozenset[int] = field(default_factory=frozenset)


def _finite(value) -> bool:
    return value is not None and math.isfinite(float(value))


def units(value) -> str:
    """Units rounded up to a whole unit, with thousands separators.

    Examples
    --------
    >>> units(12344.2), units(float("nan")), units(None)
    ('12,345', '—', '—')
    """
    if not _finite(value):
        return DASH
    return f"{math.ceil(float(value) * (1 - 1e-12)):,}"


def days(value) -> str:
    """Days as everywhere in Fourfold: whole days, rounded up.

    Examples
    --------
    >>> days(28.0), days(13.42), days(None)
    ('28', '14', '—')
    """
    return format_days(value if _finite(value) else None)


def number(value, digits: int = 4) -> str:
    """A number with ``digits`` significant digits and no exponent for everyday sizes.

    Examples
    --------
    >>> number(2.35), number(0.0181234), number(14.8), number(123456.7)
    ('2.35', '0.01812', '14.8', '123,457')
    """
    if not _finite(value):
        return DASH
    value = float(value)
    if value == 0:
        return "0"
    exponent = math.floor(math.log10(abs(value)))
    if exponent >= digits - 1:
        return f"{value:,.0f}"
    if exponent < -6:
        return f"{value:.{digits - 1}e}"
    decimals = digits - 1 - exponent
    return f"{value:.{decimals}f}".rstrip("0").rstrip(".")


def percent(fraction, digits: int = 3, *, signed: bool = False) -> str:
    """A fraction as a percentage with ``digits`` significant digits.

    Examples
    --------
    >>> percent(0.031), percent(0.05, signed=True), percent(0.6)
    ('3.1 %', '+5 %', '60 %')
    """
    if not _finite(fraction):
        return DASH
    text = number(100 * float(fraction), digits)
    if signed and float(fraction) > 0:
        text = "+" + text
    return f"{text} %"


def probability(value) -> str:
    """α or power: up to four decimals.

    Examples
    --------
    >>> probability(0.05), probability(0.8), probability(0.0166667)
    ('0.05', '0.80', '0.0167')
    """
    if not _finite(value):
        return DASH
    whole, decimals = f"{float(value):.4f}".split(".")
    return f"{whole}.{decimals.rstrip('0').ljust(2, '0')}"


def signed(text: str, value) -> str:
    """``text`` with a leading ``+`` when ``value`` is positive."""
    return "+" + text if _finite(value) and float(value) > 0 else text


def with_unit(metric, text: str) -> str:
    """``text`` followed by the row's unit (when it has one and the text is a number).

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> with_unit(SimpleNamespace(unit="ms"), "20"), with_unit(SimpleNamespace(unit=""), "20")
    ('20 ms', '20')
    """
    return f"{text} {metric.unit}" if metric.unit and text != DASH else text


def baseline_text(metric) -> str:
    """The baseline: a percentage for a proportion, the metric's unit otherwise."""
    if metric.kind == "proportion":
        return percent(metric.baseline, 4)
    return with_unit(metric, number(metric.baseline))


def sd_text(metric) -> str:
    """The per-unit sd: as entered, or derived from a ratio's or quantile's own inputs."""
    if metric.kind in kinds.DERIVED_SD:
        return with_unit(metric, number(kinds.unit_sd(metric)))
    return DASH if metric.sd is None else with_unit(metric, number(metric.sd))


def effect_text(metric, value, *, relative: bool) -> str:
    """An effect or margin as entered: a % of the baseline, percentage points or metric units."""
    if not _finite(value):
        return DASH
    if relative:
        return percent(value, signed=True)
    if metric.kind == "proportion":
        return signed(f"{number(100 * float(value), 3)} pp", value)
    return with_unit(metric, signed(number(value), value))


def kind_text(metric) -> str:
    """The kind and method, a quantile with its level: ``quantile (p95), asymptotic``."""
    kind = metric.kind
    if kind == "quantile":
        kind = f"quantile ({kinds.quantile_name(metric)})"
    return f"{kind}, {method_of(metric)}"


def margin_size_text(metric) -> str:
    """The margin's size without its sign, in the row's units ("20 ms", "10 %", "0.5 pp")."""
    size = abs(metric.margin)
    if metric.relative:
        return f"{percent(size)} of the baseline"
    if metric.kind == "proportion":
        return f"{number(100 * size, 3)} pp"
    return with_unit(metric, number(size))


def direction_lines(plan) -> list[tuple[str, str]]:
    """Each guardrail's test in plain words (see :func:`fourfold.plan.kinds.direction_words`).

    Examples
    --------
    >>> from fourfold.plan import Metric, Plan
    >>> direction_lines(Plan(metrics=[Metric(name="Load", role="guardrail", kind="mean",
    ...     sd=1.0, baseline=1.8, better="lower", alternative="less", margin=0.02,
    ...     relative=False, unit="s")]))
    [('1. Load', 'must not get worse (higher) by more than 0.02 s; lower is better')]
    """
    return [(f"{index + 1}. {m.name}",
             f"{kinds.direction_words(m, margin_size_text(m))}; {m.better} is better")
            for index, m in enumerate(plan.metrics) if m.role == "guardrail"]


def kind_inputs_table(plan) -> Table:
    """The own inputs of ratio and quantile rows and the per-unit sd they give."""
    rows = []
    for index, m in enumerate(plan.metrics):
        if m.kind == "ratio":
            numerator = None if m.denominator is None else m.baseline * m.denominator
            inputs = (f"numerator {number(numerator)} per unit (sd {number(m.numerator_sd)}), "
                      f"denominator {number(m.denominator)} per unit (sd "
                      f"{number(m.denominator_sd)}), correlation {number(m.correlation, 3)}")
            how = "delta method"
        elif m.kind == "quantile":
            name = kinds.quantile_name(m)
            if m.density is not None:
                inputs = f"density at the {name}: {number(m.density)} (from history)"
                how = "√(p(1 − p)) / density"
            else:
                second = DASH if m.second_level is None else f"p{100 * m.second_level:.6g}"
                inputs = (f"log-normal through the {name} and the {second} = "
                          f"{with_unit(m, number(m.second_value))}")
                how = "√(p(1 − p)) / log-normal density"
        else:
            continue
        rows.append((str(index + 1), m.name, inputs, how, sd_text(m)))
    return Table(header=("#", "Metric", "Own inputs", "SD from", "SD per unit"),
                 rows=tuple(rows), align=("r", "l", "l", "l", "r"))


def both_ways(metric, value) -> str:
    """An effect or margin (in the row's units) as entered, then the other way in brackets:
    ``+10 % (+0.0018)`` for a relative row, ``+0.02 (+1.09 %)`` for an absolute one.

    Examples
    --------
    >>> from fourfold.plan import Metric
    >>> both_ways(Metric(kind="rate", baseline=0.018, relative=True), 0.1)
    '+10 % (+0.0018)'
    >>> both_ways(Metric(kind="mean", baseline=1.84, relative=False), 0.02)
    '+0.02 (+1.09 %)'
    """
    if not _finite(value):
        return DASH
    if metric.relative:
        return f"{effect_text(metric, value, relative=True)} (" \
               f"{effect_text(metric, value * metric.baseline, relative=False)})"
    other = value / metric.baseline if metric.baseline != 0 else math.nan
    entered = effect_text(metric, value, relative=False)
    return entered if not _finite(other) else f"{entered} ({percent(other, signed=True)})"


def alpha_text(metric, alpha) -> str:
    """α with its sidedness: ``0.025 (two-sided)``, ``0.05 (one-sided)``."""
    if not _finite(alpha):
        return DASH
    sides = "two-sided" if metric.alternative == "two-sided" else "one-sided"
    return f"{probability(alpha)} ({sides})"


def alternative_text(metric) -> str:
    """The test's direction in words."""
    text = {"two-sided": "two-sided", "greater": "one-sided, >", "less": "one-sided, <"}
    return text[metric.alternative]


def split_text(settings) -> str:
    """The allocation, control first: ``1 : 1 : 1`` for two treatment arms at ratio 1."""
    ratio = number(treatment_ratio(settings), 3)
    split = " : ".join(["1", *[ratio] * settings.arms])
    return f"{split} (√k rule)" if settings.allocation == "sqrt-k" else split


def saving_text(plan, result) -> str | None:
    """What the √k split saves against an equal one, in words (``None`` for other splits)."""
    if plan.settings.allocation != "sqrt-k":
        return None
    saving = equal_allocation_saving(plan, result)
    if saving is None:
        return None
    text = (f"{units(saving.units_saved)} units fewer than an equal split "
            f"({units(saving.equal_units)})")
    if _finite(saving.days_saved):
        text += f", {days(saving.days_saved)} days sooner ({days(saving.equal_days)})"
    return text


def duration_text(result) -> str:
    """The plan's duration in days, ``—`` when nothing sets it.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> duration_text(SimpleNamespace(duration_days=35.0)), duration_text(
    ...     SimpleNamespace(duration_days=None))
    ('35 days', '—')
    """
    if not _finite(result.duration_days):
        return DASH
    value = float(result.duration_days)
    return f"{days(value)} {'day' if value == 1 else 'days'}"


def summary(plan, result) -> list[tuple[str, str, str]]:
    """The key figures at the top of the report: (label, value, a line of detail).

    An incomplete plan's duration reads "incomplete" (:func:`incomplete_text` says why).
    """
    s = plan.settings
    treatment = "treatment arm" if s.arms == 1 else "treatment arms"
    arms = ("Arms", f"{s.arms + 1} arms", f"control + {s.arms} {treatment}, "
                                          f"split {split_text(s)}")
    if result.incomplete:
        rows = len(result.incomplete)
        return [
            ("Duration", "incomplete",
             f"{rows} {'row' if rows == 1 else 'rows'} cannot be computed"),
            ("Total units", DASH, "unknown while incomplete"),
            ("Binding metric", DASH, "unknown while incomplete"),
            arms,
        ]
    from fourfold.plan import traffic

    if not traffic.has_traffic(s) and s.runtime_days is None:
        duration_detail = "no daily traffic given"
    elif not _finite(result.duration_days):
        duration_detail = "nothing sets the duration"
    elif s.runtime_days is not None:
        duration_detail = "fixed runtime"
    else:
        weeks = float(result.duration_days) / 7
        whole = weeks == round(weeks) and s.whole_weeks
        duration_detail = (f"{weeks:.0f} whole {'week' if weeks == 1 else 'weeks'}" if whole
                           else "at the planned traffic")
        if traffic.extrapolated(s, float(result.duration_days)):
            duration_detail += ", beyond the reach curve (extrapolated)"
    if result.binding_index is None:
        binding, binding_detail = DASH, "no row binds"
    else:
        role = plan.metrics[result.binding_index].role
        binding = result.binding_name
        binding_detail = f"row {result.binding_index + 1}, {role}"
    return [
        ("Duration", duration_text(result), duration_detail),
        ("Total units", units(result.total_units), "all arms together"),
        ("Binding metric", binding, binding_detail),
        arms,
    ]


def incomplete_text(result) -> str:
    """Why an incomplete plan has no duration, naming each row ("" for a complete plan)."""
    if not result.incomplete:
        return ""
    return ("Incomplete plan: it has no duration until every primary and guardrail row can be "
            f"computed. Not computed: {result.incomplete_text()}.")


def roles_text(plan) -> str:
    """The rows by role: ``6 metric rows (1 primary, 3 secondaries, 2 guardrails)``.

    Examples
    --------
    >>> from fourfold.plan import Metric, Plan
    >>> roles_text(Plan(metrics=[Metric(role="guardrail"), Metric(role="guardrail")]))
    '2 metric rows (2 guardrails)'
    """
    plurals = {"primary": "primaries", "secondary": "secondaries", "guardrail": "guardrails"}
    counts = {role: sum(1 for m in plan.metrics if m.role == role) for role in ROLE_ORDER}
    parts = [f"{count} {role if count == 1 else plurals[role]}"
             for role, count in counts.items() if count]
    rows = "metric row" if len(plan.metrics) == 1 else "metric rows"
    return f"{len(plan.metrics)} {rows} ({', '.join(parts)})" if parts else f"0 {rows}"


def assumptions(plan, result=None) -> list[tuple[str, str]]:
    """The plan-wide assumptions, as label and value (``result`` for the traffic model's
    extrapolation flag)."""
    from fourfold.plan import traffic as model

    s = plan.settings
    traffic = DASH if s.daily_units is None else f"{units(s.daily_units)} eligible units per day"
    runtime = DASH if s.runtime_days is None else f"{days(s.runtime_days)} days"
    looks = "none (fixed design)"
    if s.looks > 1:
        looks = f"{s.looks} looks, {SPENDING_LABELS[s.spending]} α spending"
        if s.futility:
            looks += ", with a futility bound"
    overrides = [m.name for m in plan.metrics if m.alpha is not None or m.power is not None]
    flow = [("Traffic", traffic), ("Share of traffic in the test", percent(s.share))]
    if model.uses_model(s):
        from fourfold.export.traffic import assumptions as traffic_assumptions

        flow = traffic_assumptions(plan, result)
    rows = [
        ("Significance level α", probability(s.alpha)),
        ("Power", probability(s.power)),
        ("Multiple-comparison correction", CORRECTION_LABELS[s.correction]),
        ("Split between the arms", split_text(s)),
        *flow,
        ("Duration rounded to whole weeks", "yes" if s.whole_weeks else "no"),
        ("Fixed runtime", runtime),
        ("Interim looks", looks),
    ]
    if overrides:
        rows.append(("Rows with their own α or power", ", ".join(overrides)))
    saving = saving_text(plan, None)
    if saving is not None:
        rows.append(("What the √k split saves", saving))
    return rows


def uses_design_factor(metric) -> bool:
    """Whether a row uses CUPED or clustering (its variance factor may differ from 1)."""
    return (metric.rho != 0 or metric.cluster_size != 1 or metric.icc != 0
            or metric.cluster_cv != 0)


def design_table(plan, result) -> Table:
    """Variance reduction and clustering of the rows that use them, with the variance factor."""
    rows = []
    for index, (m, r) in enumerate(zip(plan.metrics, result.rows, strict=True)):
        if not uses_design_factor(m):
            continue
        rows.append((
            str(index + 1),
            m.name,
            number(m.rho, 3),
            number(m.cluster_size, 4),
            number(m.icc, 3),
            number(m.cluster_cv, 3),
            number(r.design_factor, 4),
        ))
    return Table(
        header=("#", "Metric", "CUPED ρ", "Units per cluster", "ICC", "Cluster-size CV",
                "Variance factor"),
        rows=tuple(rows),
        align=("r", "l", "r", "r", "r", "r", "r"),
    )


def inputs_table(plan) -> Table:
    """The metric rows as entered."""
    rows = []
    for index, m in enumerate(plan.metrics):
        rows.append((
            str(index + 1),
            m.name,
            m.role,
            kind_text(m),
            baseline_text(m),
            sd_text(m),
            DASH if m.solve == "detectable_effect" else effect_text(m, m.effect,
                                                                     relative=m.relative),
            alternative_text(m),
            DASH if m.margin == 0 else effect_text(m, m.margin, relative=m.relative),
            SOLVE_LABELS[m.solve],
        ))
    return Table(
        header=("#", "Metric", "Role", "Kind, method", "Baseline", "SD", "Effect",
                "Test", "H0 margin", "Solve for"),
        rows=tuple(rows),
        align=("r", "l", "l", "l", "r", "r", "r", "l", "r", "l"),
    )


_SOLVED_COLUMNS = {"detectable_effect": 2, "detectable_margin": 3, "power": 5,
                   "significance_level": 4}


def _marked(result) -> frozenset[int]:
    return frozenset() if result.binding_index is None else frozenset({result.binding_index})


def results_table(plan, result) -> Table:
    """What each row tests and reaches: effect and margin (both ways), α with its sides, power
    (given or solved) and power at the plan's duration; the solved cell in bold.

    A margin row's margin is the one it was computed with: its own, or the tightest it rules
    out when it solves for what it can detect (``solved == "detectable_margin"``).
    """
    rows = []
    bold = set()
    powers = result.duration_powers or (math.nan,) * len(result.rows)
    for index, (m, r) in enumerate(zip(plan.metrics, result.rows, strict=True)):
        effect = r.effect_rel if m.relative else r.effect_abs
        margin = r.margin_rel if m.relative else r.margin_abs
        rows.append((
            str(index + 1),
            m.name,
            both_ways(m, effect),
            DASH if margin == 0 else both_ways(m, margin),
            alpha_text(m, r.alpha),
            probability(r.power),
            probability(powers[index]),
            r.reason,
        ))
        if not r.reason and r.solved in _SOLVED_COLUMNS:
            bold.add((index, _SOLVED_COLUMNS[r.solved]))
    header = ("#", "Metric", "Effect", "H0 margin", "α", "Power", "Power at duration",
              "Why not computed")
    align = ("r", "l", "r", "r", "r", "r", "r", "l")
    if not any(r.reason for r in result.rows):
        header, align, rows = header[:-1], align[:-1], [row[:-1] for row in rows]
    return Table(header=header, rows=tuple(rows), align=align, bold=frozenset(bold),
                 marked=_marked(result))


def units_table(plan, result) -> Table:
    """The units and days of each row; in bold where the row solves for its sample size."""
    rows = []
    bold = set()
    for index, (m, r) in enumerate(zip(plan.metrics, result.rows, strict=True)):
        rows.append((str(index + 1), m.name, units(r.units_control), units(r.units_treatment),
                     units(r.units_total), days(r.days)))
        if not r.reason and r.solved == "sample_size":
            bold.update({(index, 2), (index, 3), (index, 4)})
    return Table(header=("#", "Metric", "Control units", "Units per treatment arm",
                         "Total units", "Days"),
                 rows=tuple(rows), align=("r", "l", "r", "r", "r", "r"), bold=frozenset(bold),
                 marked=_marked(result))


def sequential_table(plan, result) -> Table | None:
    """Maximum and expected units of a group-sequential design; ``None`` for a fixed design."""
    if plan.settings.looks <= 1:
        return None
    rows = []
    for index, (m, r) in enumerate(zip(plan.metrics, result.rows, strict=True)):
        looks = DASH if not r.look_days else ", ".join(days(d) for d in r.look_days)
        rows.append((
            str(index + 1),
            m.name,
            units(r.units_max),
            units(r.units_expected_h1),
            days(r.days_expected_h1),
            looks,
        ))
    return Table(
        header=("#", "Metric", "Maximum units", "Expected units if the effect is real",
                "Expected days", "Look days"),
        rows=tuple(rows),
        align=("r", "l", "r", "r", "r", "l"),
    )


def looks_table(plan, result) -> tuple[str, Table] | None:
    """The interim looks of the binding row (else the first row with looks) and its name.

    Per look: its day, share of the maximum and total units, the efficacy (and futility) z
    boundary, the nominal p-value that stops the test, the α spent so far and the chance of
    stopping there with no effect and with the planned effect. ``None`` for a fixed design.
    """
    index = looks_row(plan, result)
    if index is None:
        return None
    futility = plan.settings.futility
    rows = []
    for look in row_looks(plan, result, index):
        cells = [str(look.look), days(look.day), percent(look.fraction), units(look.units),
                 f"{look.z_efficacy:.3f}", number(look.p_efficacy, 2)]
        if futility:
            cells.append(f"{look.z_futility:.3f}")
        cells += [number(look.alpha_spent, 2), percent(look.stop_h0, 2),
                  percent(look.stop_h1, 2)]
        rows.append(tuple(cells))
    header = ("Look", "Day", "Share of maximum", "Total units", "Efficacy z", "Nominal p")
    header += ("Futility z",) if futility else ()
    header += ("α spent", "P(stop), no effect", "P(stop), planned effect")
    return plan.metrics[index].name, Table(header=header, rows=tuple(rows),
                                           align=("r",) * len(header))


def notes(plan) -> list[tuple[str, str]]:
    """Each row's free-text notes, labelled with its number and name."""
    return [(f"{i + 1}. {m.name}", m.notes) for i, m in enumerate(plan.metrics) if m.notes.strip()]
