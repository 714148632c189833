"""The methods section of the report: the published methods a plan's rows use, with sources.

Each kind and method of a row, each design factor and each plan-wide choice (correction,
allocation, interim looks, days) that the plan uses contributes one :class:`Method`: its name,
what it does in a sentence, its reference and the rows that use it.

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
- Serfling, R. J. (1980). *Approximation Theorems of Mathematical Statistics*, §2.3
  (sample quantiles); Silverman, B. W. (1986). *Density Estimation*, eq. 3.31 (bandwidth).
- Dunnett, C. W. (1955). *JASA* 50, 1096–1121; (1964). *Biometrics* 20, 482–491
  (many-to-one comparisons; the √k allocation).
- Bonferroni, C. E. (1936); Šidák, Z. (1967). *Journal of the American Statistical
  Association* 62, 626–633.
- Lan, K. K. G. & DeMets, D. L. (1983). *Biometrika* 70, 659–663; O'Brien, P. C. & Fleming,
  T. R. (1979). *Biometrics* 35, 549–556; Pocock, S. J. (1977). *Biometrika* 64, 191–199;
  Hwang, I. K., Shih, W. J. & DeCani, J. S. (1990). *Statistics in Medicine* 9, 1439–1445;
  Jennison, C. & Turnbull, B. W. (2000). *Group Sequential Methods with Applications to
  Clinical Trials*.
"""

from __future__ import annotations

from dataclasses import dataclass

from fourfold.plan import CHOICES, traffic, windows

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
class Method:
    """One entry of the methods section: what was used, for which rows, and its source."""

    name: str
    text: str
    reference: str
    rows: tuple[str, ...] = ()



def method_of(metric) -> str:
    """The row's method, the kind's default when the row leaves it empty."""
    return metric.method if metric.method is not None else CHOICES["method"][metric.kind][0]


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
    ("ratio", "delta"): (
        "Ratio of two per-unit means, delta method",
        "The ratio of sums R = ΣX/ΣY over the units of an arm (items per order, randomised by "
        "visitor) has the per-unit variance (σ_X² − 2R·ρ·σ_X·σ_Y + R²·σ_Y²)/μ_Y² by the delta "
        "method; the treatment is taken to add the effect per unit of the denominator, which "
        "keeps that variance. Normal approximation (z test).",
        "Deng, A., Knoblich, U. & Lu, J. (2018). Applying the delta method in metric "
        "analytics: a practical guide with novel ideas. KDD 2018.",
    ),
    ("quantile", "asymptotic"): (
        "Difference of quantiles, asymptotic variance",
        "A sample p-quantile of n units is nearly normal with variance p(1 − p)/(n·f(q_p)²), f "
        "the density at the quantile: from a Gaussian kernel estimate on history (Silverman's "
        "rule-of-thumb bandwidth, Silverman 1986, eq. 3.31) or from a log-normal through two "
        "of the metric's percentiles. The treatment is taken to shift the distribution. It "
        "needs many units beyond the quantile; the simulation check tells when it holds.",
        "Serfling, R. J. (1980). Approximation Theorems of Mathematical Statistics. Wiley, "
        "§2.3. Silverman, B. W. (1986). Density Estimation for Statistics and Data Analysis. "
        "Chapman & Hall.",
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
        if m.kind != "ratio" and any(word in f"{m.name} {m.notes}".lower()
                                     for word in _DELTA_WORDS):
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



def _look_placing(s) -> str:
    """Where a plan's interim looks fall, as :mod:`fourfold.plan.sequential` places them."""
    if s.whole_weeks:
        return ("at week ends (look k of K at the end of week ⌈k·W/K⌉ of a row's W whole "
                "weeks; a run of fewer weeks than looks keeps equal shares)")
    return "at equal shares of the maximum units"


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
    if s.correction == "dunnett":
        add("dunnett", "Dunnett's many-to-one correction",
            "The treatment arms share one control, so their comparisons are correlated "
            "(ρ = r/(1 + r) with r treatment units per control unit). Each is tested at the "
            "critical value that keeps the family-wise error at α under that correlation "
            "(multivariate normal), less strict than Bonferroni's or Šidák's; several primary "
            "metrics share α by Bonferroni first. The α column shows each comparison's level.",
            "Dunnett, C. W. (1955). A multiple comparison procedure for comparing several "
            "treatments with a control. Journal of the American Statistical Association 50, "
            "1096–1121. Dunnett, C. W. (1964). New tables for multiple comparisons with a "
            "control. Biometrics 20, 482–491.")
    if s.allocation == "sqrt-k":
        add("sqrt-k", "The √k allocation",
            f"The control gets √k times the units of each of the k = {s.arms} treatment arms: "
            "at a given power this split needs the fewest units in all.",
            "Dunnett, C. W. (1955). Journal of the American Statistical Association 50, "
            "1096–1121.")
    if s.looks > 1:
        futility = " and a futility bound" if s.futility else ""
        add("sequential", "Group-sequential design with α spending",
            f"{s.looks} looks, {_look_placing(s)}, "
            f"{SPENDING_LABELS[s.spending]} boundaries{futility} at the looks' shares of the "
            "units; the maximum is the fixed design's units times the design's inflation "
            "factor, and the expected units assume the planned effect is real.",
            f"{SPENDING_SOURCES[s.spending]} Jennison, C. & Turnbull, B. W. (2000). Group "
            "Sequential Methods with Applications to Clinical Trials. Chapman & Hall/CRC.")
        add("peeking", "Unadjusted repeated looks",
            "The false-positive rate of checking the test at every look without adjusting, "
            "quoted in the notes, is that of repeated significance tests on accumulating data.",
            "Armitage, P., McPherson, C. K. & Rowe, B. C. (1969). Repeated significance tests "
            "on accumulating data. Journal of the Royal Statistical Society A 132, 235–244.")
    if traffic.uses_model(s) and traffic.has_traffic(s):
        add("days", "From units to days: the traffic model",
            "Days = the first whole day by which the test's analysed units reach the total: "
            "after d days the test holds Σⱼ wⱼ·R(d − oⱼ + 1) units, band j of the ramp-up "
            "(its rise wⱼ in share, opened on day oⱼ) taking the units seen from day oⱼ on, "
            "R(d) the distinct eligible units of d days (daily units × d for constant "
            "traffic), less those that joined in the burn-in"
            + (", rounded up to whole weeks." if s.whole_weeks else "."),
            "Common practice; no single source (the stationary reach of any d days is an "
            "assumption of this model).")
        if s.traffic == "reach":
            add("reach", "Reach beyond the curve",
                "R(d) = N·(1 − (1 + d/β)^−k) + c·d: a pool of N units reached at gamma-spread "
                "rates (the negative binomial reach) plus c new units a day, fitted to the "
                "curve's tail by relative least squares (N and c solved exactly for each k and "
                "β); continued from the curve's last point; backtested on the curve itself.",
                "Ehrenberg, A. S. C. (1959). The pattern of consumer purchases. Applied "
                "Statistics 8, 26–41. Golub, G. H. & Pereyra, V. (1973). SIAM Journal on "
                "Numerical Analysis 10, 413–432.")
    elif s.daily_units is not None:
        text = "Days = total units ÷ (eligible units per day × share of traffic in the test)"
        text += ", rounded up to whole weeks." if s.whole_weeks else "."
        add("days", "From units to days", text, "Common practice; no single source.")
    for m in plan.metrics:
        if windows.follows(m):
            add("windows", "Metrics over the test's own window",
                "The row's baseline and sd (ρ, a ratio's inputs) are its figures over each "
                "unit's first d days in the history, d the plan's duration (read linearly "
                "between the windows imported, the nearest window's outside them), every unit "
                "taken to be watched for the whole duration. Since the duration depends on "
                "them, it is the fixed point of duration and window: rounds from the shortest "
                "window, and when they cycle, halving the days between the longest that needs "
                "more and the shortest that needs fewer.",
                "Common practice; no single source (the fixed point is this program's rule).",
                m.name)
