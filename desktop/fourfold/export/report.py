"""What the PDF report says, as plain text and tables (no Qt): the layout lives in ``pdf``.

Numbers are formatted for reading here: units rounded up to whole units (a sample size is
always rounded up), proportions as percentages, effects with four significant digits. The CSV
export keeps the full-precision values.

References
----------
The methods section cites, per method a plan uses:

- Lehr, R. (1992). Sixteen s-squared over d-squared: a relation for crude sample size
  estimates. *Statistics in Medicine* 11, 1099–1102.
- Cohen, J. (1988). *Statistical Power Analysis for the Behavioral Sciences*, 2nd ed.
- Fleiss, J. L., Levin, B. & Paik, M. C. (2003). *Statistical Methods for Rates and
  Proportions*, 3rd ed., ch. 4.
- Fleiss, J. L., Tytun, A. & Ury, H. K. (1980). *Biometrics* 36, 343–346.
- Farrington, C. P. & Manning, G. (1990). *Statistics in Medicine* 9, 1447–1454.
- Kohavi, R., Tang, D. & Xu, Y. (2020). *Trustworthy Online Controlled Experiments*, ch. 17.
- Chow, S.-C., Shao, J. & Wang, H. (2008). *Sample Size Calculations in Clinical Research*,
  2nd ed. (tests against a margin).
- Deng, A., Xu, Y., Kohavi, R. & Walker, T. (2013). WSDM 2013, 123–132 (CUPED).
- Kish, L. (1965). *Survey Sampling*; Eldridge, S. M., Ashby, D. & Kerry, S. (2006).
  *International Journal of Epidemiology* 35, 1292–1300 (design effect).
- Deng, A., Knoblich, U. & Lu, J. (2018). KDD 2018 (delta method).
- Bonferroni, C. E. (1936); Šidák, Z. (1967). *Journal of the American Statistical
  Association* 62, 626–633.
- Lan, K. K. G. & DeMets, D. L. (1983). *Biometrika* 70, 659–663; O'Brien, P. C. & Fleming,
  T. R. (1979). *Biometrics* 35, 549–556; Pocock, S. J. (1977). *Biometrika* 64, 191–199;
  Hwang, I. K., Shih, W. J. & DeCani, J. S. (1990). *Statistics in Medicine* 9, 1439–1445;
  Jennison, C. & Turnbull, B. W. (2000). *Group Sequential Methods with Applications to
  Clinical Trials*.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from fourfold.formatting import format_days
from fourfold.plan import CHOICES
from fourfold.plan.fields import CORRECTION_LABELS
from fourfold.plan.sequential import looks_row, row_looks

DASH = "—"
ROLE_ORDER = ("primary", "secondary", "guardrail")
SOLVE_LABELS = {
    "sample_size": "sample size",
    "detectable_effect": "detectable effect",
    "power": "power",
    "significance_level": "α",
}
SPENDING_LABELS = {
    "ld-obrien-fleming": "Lan–DeMets, O'Brien–Fleming type",
    "ld-pocock": "Lan–DeMets, Pocock type",
    "hsd": "Hwang–Shih–DeCani",
    "obrien-fleming": "O'Brien–Fleming",
    "pocock": "Pocock",
}

_LAN_DEMETS = ("Lan, K. K. G. & DeMets, D. L. (1983). Discrete sequential boundaries for "
               "clinical trials. Biometrika 70, 659–663.")
SPENDING_SOURCES = {
    "ld-obrien-fleming": _LAN_DEMETS,
    "ld-pocock": _LAN_DEMETS,
    "hsd": "Hwang, I. K., Shih, W. J. & DeCani, J. S. (1990). Group sequential designs using a "
           "family of type I error probability spending functions. Statistics in Medicine 9, "
           "1439–1445.",
    "obrien-fleming": "O'Brien, P. C. & Fleming, T. R. (1979). A multiple testing procedure "
                      "for clinical trials. Biometrics 35, 549–556.",
    "pocock": "Pocock, S. J. (1977). Group sequential methods in the design and analysis of "
              "clinical trials. Biometrika 64, 191–199.",
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


@dataclass(frozen=True)
class Method:
    """One entry of the methods section: what was used, for which rows, and its source."""

    name: str
    text: str
    reference: str
    rows: tuple[str, ...] = ()


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


def method_of(metric) -> str:
    """The row's method, the kind's default when the row leaves it empty."""
    return metric.method if metric.method is not None else CHOICES["method"][metric.kind][0]


def baseline_text(metric) -> str:
    """The baseline: a percentage for a proportion, the metric's unit otherwise."""
    if metric.kind == "proportion":
        return percent(metric.baseline, 4)
    return number(metric.baseline)


def effect_text(metric, value, *, relative: bool) -> str:
    """An effect or margin as entered: a % of the baseline, percentage points or metric units."""
    if not _finite(value):
        return DASH
    if relative:
        return percent(value, signed=True)
    if metric.kind == "proportion":
        return signed(f"{number(100 * float(value), 3)} pp", value)
    return signed(number(value), value)


def alternative_text(metric) -> str:
    """The test's direction in words."""
    text = {"two-sided": "two-sided", "greater": "one-sided, >", "less": "one-sided, <"}
    return text[metric.alternative]


def split_text(settings) -> str:
    """The allocation, control first: ``1 : 1 : 1`` for two treatment arms at ratio 1."""
    ratio = number(settings.ratio, 3)
    return " : ".join(["1", *[ratio] * settings.arms])


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
    """The key figures at the top of the report: (label, value, a line of detail)."""
    s = plan.settings
    if s.daily_units is None and s.runtime_days is None:
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
    if result.binding_index is None:
        binding, binding_detail = DASH, "no row binds"
    else:
        role = plan.metrics[result.binding_index].role
        binding = result.binding_name
        binding_detail = f"row {result.binding_index + 1}, {role}"
    treatment = "treatment arm" if s.arms == 1 else "treatment arms"
    return [
        ("Duration", duration_text(result), duration_detail),
        ("Total units", units(result.total_units), "all arms together"),
        ("Binding metric", binding, binding_detail),
        ("Arms", f"{s.arms + 1} arms", f"control + {s.arms} {treatment}, "
                                         f"split {split_text(s)}"),
    ]


def assumptions(plan) -> list[tuple[str, str]]:
    """The plan-wide assumptions, as label and value."""
    s = plan.settings
    traffic = DASH if s.daily_units is None else f"{units(s.daily_units)} eligible units per day"
    runtime = DASH if s.runtime_days is None else f"{days(s.runtime_days)} days"
    looks = "none (fixed design)"
    if s.looks > 1:
        looks = f"{s.looks} looks, {SPENDING_LABELS[s.spending]} α spending"
        if s.futility:
            looks += ", with a futility bound"
    overrides = [m.name for m in plan.metrics if m.alpha is not None or m.power is not None]
    rows = [
        ("Significance level α", probability(s.alpha)),
        ("Power", probability(s.power)),
        ("Multiple-comparison correction", CORRECTION_LABELS[s.correction]),
        ("Traffic", traffic),
        ("Share of traffic in the test", percent(s.share)),
        ("Duration rounded to whole weeks", "yes" if s.whole_weeks else "no"),
        ("Fixed runtime", runtime),
        ("Interim looks", looks),
    ]
    if overrides:
        rows.append(("Rows with their own α or power", ", ".join(overrides)))
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
            f"{m.kind}, {method_of(m)}",
            baseline_text(m),
            DASH if m.sd is None else number(m.sd),
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


_SOLVED_COLUMN = {"sample_size": 6, "detectable_effect": 2, "power": 5, "significance_level": 4}


def results_table(plan, result) -> Table:
    """The computed rows: effect, α, power, units and days; the solved cell in bold."""
    rows = []
    bold = set()
    for index, (m, r) in enumerate(zip(plan.metrics, result.rows, strict=True)):
        absolute = effect_text(m, r.effect_abs, relative=False)
        rows.append((
            str(index + 1),
            m.name,
            absolute,
            percent(r.effect_rel, signed=True),
            probability(r.alpha),
            probability(r.power),
            units(r.units_control),
            units(r.units_treatment),
            units(r.units_total),
            days(r.days),
            r.reason,
        ))
        column = _SOLVED_COLUMN.get(r.solved)
        if column is not None and not r.reason:
            bold.add((index, column))
            if column == 6:
                bold.update({(index, 7), (index, 8)})
    marked = frozenset() if result.binding_index is None else frozenset({result.binding_index})
    header = ("#", "Metric", "Effect", "Effect, relative", "α", "Power", "Control units",
              "Units per treatment arm", "Total units", "Days", "Why not computed")
    align = ("r", "l", "r", "r", "r", "r", "r", "r", "r", "r", "l")
    if not any(r.reason for r in result.rows):
        header, align, rows = header[:-1], align[:-1], [row[:-1] for row in rows]
    return Table(header=header, rows=tuple(rows), align=align, bold=frozenset(bold),
                 marked=marked)


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


_KIND_METHODS = {
    ("mean", "z"): (
        "Difference of means, normal approximation",
        "n per arm = 2σ²(z₁₋α/₂ + z₁₋β)²/δ² for equal arms; with α = 0.05 two-sided and power "
        "0.8 the coefficient is 15.7, Lehr's rule of 16.",
        "Lehr, R. (1992). Sixteen s-squared over d-squared: a relation for crude sample size "
        "estimates. Statistics in Medicine 11, 1099–1102.",
    ),
    ("mean", "t"): (
        "Difference of means, two-sample t test",
        "Power from the noncentral t distribution with the degrees of freedom of the two arms.",
        "Cohen, J. (1988). Statistical Power Analysis for the Behavioral Sciences, 2nd ed., "
        "ch. 2.",
    ),
    ("proportion", "pooled"): (
        "Two proportions, pooled variance under H0",
        "Normal approximation with the pooled proportion under H0 (the restricted estimates "
        "of Farrington & Manning when H0 has a margin) and each arm's own variance under H1.",
        "Fleiss, J. L., Levin, B. & Paik, M. C. (2003). Statistical Methods for Rates and "
        "Proportions, 3rd ed., ch. 4.",
    ),
    ("proportion", "unpooled"): (
        "Two proportions, unpooled variance",
        "Wald test: each arm's own variance under H0 as well as under H1.",
        "Fleiss, J. L., Levin, B. & Paik, M. C. (2003). Statistical Methods for Rates and "
        "Proportions, 3rd ed., ch. 4.",
    ),
    ("proportion", "pooled-cc"): (
        "Two proportions with continuity correction",
        "The pooled normal approximation with the continuity correction for the discrete "
        "outcome.",
        "Fleiss, J. L., Tytun, A. & Ury, H. K. (1980). A simple approximation for calculating "
        "sample sizes for comparing independent proportions. Biometrics 36, 343–346.",
    ),
    ("proportion", "arcsine"): (
        "Two proportions, arcsine transformation (Cohen's h)",
        "Effect size h = 2·arcsin√p_t − 2·arcsin√p_c, whose variance does not depend on p.",
        "Cohen, J. (1988). Statistical Power Analysis for the Behavioral Sciences, 2nd ed., "
        "ch. 6.",
    ),
    ("rate", "z"): (
        "Difference of mean counts, normal approximation",
        "Counts per unit with variance equal to the mean (Poisson), or over-dispersed with the "
        "control arm's variance-to-mean ratio when a per-unit sd is given; Wald test.",
        "Kohavi, R., Tang, D. & Xu, Y. (2020). Trustworthy Online Controlled Experiments. "
        "Cambridge University Press, ch. 17.",
    ),
}

_DELTA_WORDS = ("delta method", "ratio of sums", "ratio metric")


def methods(plan) -> list[Method]:
    """The published methods the plan's rows use, each with its reference, in a fixed order."""
    used: dict[str, Method] = {}

    def add(key: str, name: str, text: str, reference: str, row: str | None = None) -> None:
        known = used.get(key)
        rows = (known.rows if known else ()) + ((row,) if row else ())
        used[key] = Method(name, text, reference, rows)

    for m in plan.metrics:
        name, text, reference = _KIND_METHODS[(m.kind, method_of(m))]
        add(f"kind:{m.kind}:{method_of(m)}", name, text, reference, m.name)
    for m in plan.metrics:
        if m.rho != 0:
            add("cuped", "Variance reduction with a pre-period covariate (CUPED)",
                "The variance is multiplied by 1 − ρ², ρ being the correlation between the "
                "metric and its pre-period value.",
                "Deng, A., Xu, Y., Kohavi, R. & Walker, T. (2013). Improving the sensitivity of "
                "online controlled experiments by utilizing pre-experiment data. WSDM 2013, "
                "123–132.", m.name)
        if m.cluster_size > 1 and m.icc > 0:
            add("deff", "Design effect of clustered units",
                "The variance is multiplied by 1 + (m − 1)·ICC for clusters of m units.",
                "Kish, L. (1965). Survey Sampling. Wiley.", m.name)
            if m.cluster_cv > 0:
                add("deff-cv", "Design effect with unequal cluster sizes",
                    "With a coefficient of variation cv of cluster sizes the design effect is "
                    "1 + ((cv² + 1)·m − 1)·ICC.",
                    "Eldridge, S. M., Ashby, D. & Kerry, S. (2006). Sample size for cluster "
                    "randomized trials: effect of coefficient of variation of cluster size and "
                    "analysis method. International Journal of Epidemiology 35, 1292–1300.",
                    m.name)
        if any(word in f"{m.name} {m.notes}".lower() for word in _DELTA_WORDS):
            add("delta", "Delta method for ratio metrics",
                "The per-unit variance of a ratio of sums comes from its linearisation.",
                "Deng, A., Knoblich, U. & Lu, J. (2018). Applying the delta method in metric "
                "analytics: a practical guide with novel ideas. KDD 2018.", m.name)
        if m.margin != 0 and m.kind == "proportion" and method_of(m) in ("pooled", "pooled-cc"):
            add("farrington-manning", "Restricted estimates under a margin (Farrington–Manning)",
                "With a margin in H0, the H0 variance uses the maximum-likelihood proportions "
                "restricted to the margin.",
                "Farrington, C. P. & Manning, G. (1990). Test statistics and sample size formulae "
                "for comparative binomial trials with null hypothesis of non-zero risk "
                "difference or non-unity relative risk. Statistics in Medicine 9, 1447–1454.",
                m.name)
        if m.margin != 0:
            add("margin", "Test against a margin",
                "H0 places the difference at the margin instead of zero (non-inferiority, or "
                "superiority by a margin).",
                "Chow, S.-C., Shao, J. & Wang, H. (2008). Sample Size Calculations in Clinical "
                "Research, 2nd ed. Chapman & Hall/CRC.", m.name)
    _plan_methods(plan, add)
    return list(used.values())


def _plan_methods(plan, add) -> None:
    s = plan.settings
    if s.correction == "bonferroni":
        add("bonferroni", "Bonferroni correction",
            "Each comparison is tested at α divided by the number of comparisons.",
            "Bonferroni, C. E. (1936). Teoria statistica delle classi e calcolo delle "
            "probabilità. Pubblicazioni del R. Istituto Superiore di Scienze Economiche e "
            "Commerciali di Firenze 8, 3–62.")
    if s.correction == "sidak":
        add("sidak", "Šidák correction",
            "Each of k comparisons is tested at 1 − (1 − α)^(1/k).",
            "Šidák, Z. (1967). Rectangular confidence regions for the means of multivariate "
            "normal distributions. Journal of the American Statistical Association 62, "
            "626–633.")
    if s.looks > 1:
        futility = " and a futility bound" if s.futility else ""
        add("sequential", "Group-sequential design with α spending",
            f"{s.looks} looks at equal shares of the maximum units, "
            f"{SPENDING_LABELS[s.spending]} boundaries{futility}; the maximum is the fixed "
            "design's units times the design's inflation factor, and the expected units assume "
            "the planned effect is real.",
            f"{SPENDING_SOURCES[s.spending]} Jennison, C. & Turnbull, B. W. (2000). Group "
            "Sequential Methods with Applications to Clinical Trials. Chapman & Hall/CRC.")
        add("peeking", "Unadjusted repeated looks",
            "The false-positive rate of checking the test at every look without adjusting, "
            "quoted in the notes, is that of repeated significance tests on accumulating data.",
            "Armitage, P., McPherson, C. K. & Rowe, B. C. (1969). Repeated significance tests "
            "on accumulating data. Journal of the Royal Statistical Society A 132, 235–244.")
    if s.daily_units is not None:
        text = "Days = total units ÷ (eligible units per day × share of traffic in the test)"
        text += ", rounded up to whole weeks." if s.whole_weeks else "."
        add("days", "From units to days", text, "Common practice; no single source.")
