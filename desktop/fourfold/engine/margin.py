"""The tightest margin a one-sided test rules out: the margin solved for, the effect held.

A guardrail or non-inferiority test puts the difference d = treatment − control at a margin m
under H0 and asks to rule it out: "greater" tests H0: d ≤ m against H1: d > m (the treatment
is not worse than m, m < 0), "less" tests H0: d ≥ m against H1: d < m (a cost must not rise by
m or more, m > 0). With the true difference assumed to be ``effect`` (usually 0), ``n`` units
rule out with the given power every margin at least as far from the effect as the one returned
here: the tightest margin, the one closest to the effect, found by a vectorised root search on
the distance |effect − m| (the power grows with it). For a mean the distance is
(z₁₋α + z₁₋β)·σ·√(1 + 1/r)/√n; for proportions and rates the variances change with the margin
(a proportion's H0 variance under Farrington–Manning's restricted estimates), hence the search.

References
----------
Chow, S.-C., Shao, J. & Wang, H. (2008). *Sample Size Calculations in Clinical Research*, 2nd
ed., Chapman & Hall/CRC, §3.2 and §4.2 (tests for non-inferiority and superiority by a margin).
Farrington, C. P. & Manning, G. (1990). *Statistics in Medicine* 9:1447–1454.

Examples
--------
>>> from fourfold.engine.checks import prepare
>>> p = prepare("detectable_margin", "mean", 10.0, effect=0.0, n=1000.0, sd=2.0,
...             alternative="greater")
>>> values, reasons = solve_margin(p)
>>> round(float(values[0]), 4)  # −(1.6449 + 0.8416)·2·√2/√1000
-0.2224
"""

import numpy as np

from . import roots
from ._power import critical, degrees_of_freedom, distance_search, power_of

SIGNS = {"greater": 1.0, "less": -1.0}
REASONS = {
    roots.BELOW: "no margin could be found for these inputs",
    roots.ABOVE: "no margin within the possible range is ruled out with this n",
    roots.FAILED: "no margin could be found for these inputs",
}
ONE_SIDED = "the margin can be solved for only in a one-sided test ('greater' or 'less')"


def solve_margin(p):
    """The tightest margin ruled out (row units) and the reasons, from prepared inputs ``p``.

    ``p`` comes from :func:`fourfold.engine.checks.prepare` with ``solve="detectable_margin"``.
    """
    from .checks import KIND_MODULES

    values = np.full(p.reasons.size, np.nan)
    reasons = p.reasons.copy()
    i = np.flatnonzero(p.ok)
    if i.size == 0:
        return values, reasons
    sign = SIGNS[p.alternative]
    effect, baseline, n, ratio = p.effect[i], p.baseline[i], p.n[i], p.ratio[i]
    kind = KIND_MODULES[p.kind]
    lo, hi = kind.effect_bounds(baseline, effect, -sign)  # margins on the far side of H1
    room = (effect - lo) if sign > 0 else (hi - effect)
    sd = None if p.sd is None else p.sd[i]
    _, s0, s1, _ = kind.moments(p.method, baseline, effect, effect, sd, ratio)
    u, y0, y_min, y_max = distance_search(room, s0, s1, p.alpha[i], p.power[i], n,
                                          p.alternative)
    exact_t = p.method == "t"
    crit = critical(p.alpha[i], p.alternative, True, degrees_of_freedom(n, ratio)) \
        if exact_t else u
    target = p.power[i]

    def f(y, j):
        margin = effect[j] - sign * np.exp(y)
        sdj = None if sd is None else sd[j]
        moments = kind.moments(p.method, baseline[j], effect[j], margin, sdj, ratio[j])
        return power_of(*moments, n[j], crit[j], p.alternative, exact_t, ratio[j]) - target[j]

    y, status = roots.find_root(f, np.minimum(y0, y_max), 1e-3, y_min, y_max)
    margin = effect - sign * np.exp(y)
    scale = np.where(p.relative[i], baseline, 1.0)
    values[i] = margin / scale
    failed = status != roots.OK
    for code, text in REASONS.items():
        reasons[i[failed & (status == code)]] = text
    return values, reasons
