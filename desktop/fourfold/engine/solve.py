"""The four solvers: sample size, power, detectable effect and significance level.

Fix three of sample size, effect, α and power; solve the fourth.  Every numeric argument
broadcasts; results are float arrays (0-d for scalar calls) in control-arm units (the
treatment arm has ``ratio`` times as many), not rounded.  A scalar call with impossible input
raises ``ValueError`` naming the argument and its allowed range; an array call returns nan
there and :func:`problems` gives the reason per element.

Conventions
-----------
* A two-sided test's power adds both tails (the far tail too), as statsmodels does.
* ``margin`` is the difference under H0; a negative margin with ``alternative="greater"``
  is a non-inferiority test.  With ``relative=True`` effect, margin and the detectable effect
  are fractions of the baseline.
* ``detectable_effect`` returns the smallest effect on the side of the alternative (the
  positive side for two-sided) that reaches the power.
* ``significance_level`` returns the α at which the design reaches the power.

References
----------
Lehr, R. (1992) Sixteen s-squared over d-squared. *Statistics in Medicine* 11:1099–1102.
Cohen, J. (1988) *Statistical Power Analysis for the Behavioral Sciences*, 2nd ed.
Fleiss, J. L., Levin, B. & Paik, M. C. (2003) *Statistical Methods for Rates and
Proportions*, 3rd ed., ch. 4.

Examples
--------
>>> round(float(sample_size("mean", 0.0, 0.5, sd=1.0)), 2)
62.79
>>> round(float(sample_size("mean", 0.0, 0.5, sd=1.0, method="t")), 2)
63.77
>>> round(float(power("proportion", 0.10, 0.02, 3841.0)), 3)
0.8
"""

import dataclasses

import numpy as np

from . import _normal, _t_family, roots, tdist
from ._power import (
    critical,
    degrees_of_freedom,
    distance_search,
    limit_power_and_slope,
    power_of,
    screen_power,
)
from .checks import KIND_MODULES, prepare
from .margin import solve_margin

_TAIL_SIGN = {"greater": 1.0, "less": -1.0, "two-sided": 1.0}
_N_MIN_Z = 1e-9
_N_MAX = 1e18
_LOG_N_MAX = float(np.log(_N_MAX))
_ALPHA_MIN = 1e-300
_FTOL_Z = 1e-13
_FTOL_T = 1e-10

_REASONS = {
    "sample_size": {
        roots.BELOW: "power is reached with almost no units: raise the power",
        roots.ABOVE: "the effect is too small: more than 1e18 units per arm would be needed",
        roots.FAILED: "no sample size could be found for these inputs",
    },
    "detectable_effect": {
        roots.BELOW: "no effect could be found for these inputs",
        roots.ABOVE: "no effect within the possible range reaches the power with this n",
        roots.FAILED: "no effect could be found for these inputs",
    },
    "significance_level": {
        roots.BELOW: "alpha would be below 1e-300: the design is far stronger than needed",
        roots.ABOVE: "no alpha below 1 reaches the power with this n and effect",
        roots.FAILED: "no alpha could be found for these inputs",
    },
}
_NO_FINITE = "no finite result for these inputs"
_T_TOO_SMALL = "the effect is so large that the t method would need fewer than 3 units in all"


def _run(solver, p):
    with np.errstate(all="ignore"):
        values, reasons = solver(p)
    lost = ~np.isfinite(values)
    if lost.any():
        lost &= reasons == ""
        reasons[lost] = _NO_FINITE
        values[lost] = np.nan
    return values, reasons


def _finish(p, values, reasons):
    values = values.reshape(p.shape)
    if p.scalar:
        if reasons[0]:
            raise ValueError(reasons[0])
        return values.reshape(())
    return values


def _moments(p, i, effect):
    sd = None if p.sd is None else p.sd[i]
    return KIND_MODULES[p.kind].moments(
        p.method, p.baseline[i], effect, p.margin[i], sd, p.ratio[i]
    )


def _power_from(p, moments, ratio, n, alpha):
    """Power at ``n`` and ``alpha`` from the moments of the estimate (see :func:`_moments`)."""
    exact_t = p.method == "t"
    df = degrees_of_freedom(n, ratio) if exact_t else None
    u = critical(alpha, p.alternative, exact_t, df)
    return power_of(*moments, n, u, p.alternative, exact_t, ratio)


def _power_at(p, i, effect, n, alpha):
    return _power_from(p, _moments(p, i, effect), p.ratio[i], n, alpha)


def _subset(j, size, *arrays):
    """The elements ``j`` of each array (the arrays themselves when ``j`` is all of them).

    A continuity term that is the plain float 0.0 stays as it is.
    """
    if j.size == size:
        return arrays
    return tuple(a if isinstance(a, float) else a[j] for a in arrays)


def _record(reasons, i, status, solve):
    failed = status != roots.OK
    if failed.any():
        for code, text in _REASONS[solve].items():
            reasons[i[status == code]] = text
    return failed


def _sample_size(p):
    values = np.full(p.reasons.size, np.nan)
    reasons = p.reasons.copy()
    i = np.flatnonzero(p.ok)
    if i.size == 0:
        return values, reasons
    exact_t = p.method == "t"
    ratio, target, alpha = p.ratio[i], p.power[i], p.alpha[i]
    d, s0, s1, cc = moments = _moments(p, i, p.effect[i])
    main = np.abs(d) if p.alternative == "two-sided" else _TAIL_SIGN[p.alternative] * d
    u = critical(alpha, p.alternative, False, None)
    k = u * s0 + _normal.quantile(target) * s1
    x0 = (k + np.sqrt(k * k + 4.0 * main * cc)) / (2.0 * main)
    n0 = normal = np.where(x0 > 0, x0 * x0, 1.0)
    if exact_t:
        n0 = n0 + u * u / (2.0 * (1.0 + ratio))
        n_min = np.maximum(np.maximum(1.0, 1.0 / ratio), 3.0 / (1.0 + ratio)) * (1.0 + 1e-12)
    else:
        n_min = np.full(i.size, _N_MIN_Z)
    y_min = np.log(n_min)
    y = np.log(np.minimum(np.maximum(n0, n_min), _N_MAX))
    covered = np.zeros(i.size, dtype=bool)
    if exact_t and i.size >= _t_family.FAMILY_ROWS:  # many rows: most start at their root
        def exact(rows):
            values, reasons = _sample_size(_rows_of(p, i[rows]))
            return np.where(reasons == "", values[: rows.size], np.nan)

        with np.errstate(all="ignore"):
            normal = _normal_units(moments, normal, u, target, ratio, p.alternative)
        found, covered = _t_family.start(normal, alpha, target, ratio, exact)
        y = np.where(covered, np.log(np.minimum(np.maximum(found, n_min), _N_MAX)), y)

    series = tdist.cornish_fisher_terms(u) if exact_t else None

    def limit(y, j):
        n = np.exp(y)
        dj, s0j, s1j, ccj, uj, rj = _subset(j, i.size, d, s0, s1, cc, u, ratio)
        if exact_t:
            terms = _subset(j, i.size, *series)
            uj = tdist.cornish_fisher_sum(degrees_of_freedom(n, rj), terms)
        return limit_power_and_slope(dj, s0j, s1j, ccj, n, uj, p.alternative, exact_t, rj)

    every = np.arange(i.size)
    rest = np.flatnonzero(~covered) if covered.any() else every
    for _ in range(3 if rest.size else 0):
        level, slope = limit(y[rest], rest)
        y_new = y[rest] - (level - target[rest]) / slope
        y[rest] = np.where(np.isfinite(y_new),
                           np.minimum(np.maximum(y_new, y_min[rest]), _LOG_N_MAX), y[rest])
    # The model's fixed slope: the last Newton step's for z; for the exact t a central
    # difference at the start, computed once, only if some element is searched.
    start, slopes = y, [] if exact_t else [slope]

    def model(y, j):
        if not slopes:
            h = 1e-6
            slopes.append((limit(start + h, every)[0] - limit(start - h, every)[0]) / (2.0 * h))
        return limit(y, j)[0] - target[j], slopes[0][j]

    def f(y, j):
        sub = _subset(j, i.size, *moments, ratio, alpha)
        return _power_from(p, sub[:4], sub[4], np.exp(y), sub[5]) - target[j]

    if covered.any():  # the family's starts are checked by a screen first
        def screen(y, j):
            dj, s0j, rj, aj = _subset(j, i.size, d, s0, ratio, alpha)
            return screen_power(dj, s0j, np.exp(y), aj, p.alternative, rj) - target[j]

        f = _t_family.screened(f, screen, covered, _FTOL_T)
    y, status = roots.find_root(
        f, y, 1e-6, y_min, np.full(i.size, _LOG_N_MAX), model=model,
        ftol=_FTOL_T if exact_t else _FTOL_Z,
    )
    values[i] = np.exp(y)
    if _record(reasons, i, status, "sample_size").any() and exact_t:
        reasons[i[status == roots.BELOW]] = _T_TOO_SMALL
    return values, reasons


def _normal_units(moments, n, u, target, ratio, alternative):
    """The normal approximation's units (z critical value ``u``), near enough for a smooth
    base: one Newton step in log n from its closed form ``n``, which leaves out a two-sided
    test's far tail (the step takes in most of it)."""
    level, slope = limit_power_and_slope(*moments, n, u, alternative, False, ratio)
    return n * np.exp(-(level - target) / slope)


def _rows_of(p, rows):
    """The prepared inputs of the elements ``rows`` of ``p`` alone (a one-dimensional call)."""
    return dataclasses.replace(
        p, shape=(rows.size,), scalar=False, baseline=p.baseline[rows], effect=p.effect[rows],
        n=p.n[rows], sd=None if p.sd is None else p.sd[rows], alpha=p.alpha[rows],
        power=p.power[rows], ratio=p.ratio[rows], margin=p.margin[rows],
        relative=p.relative[rows], reasons=p.reasons[rows], ok=p.ok[rows],
        unit=None if p.unit is None else p.unit[rows])


def _power(p):
    values = np.full(p.reasons.size, np.nan)
    i = np.flatnonzero(p.ok)
    if i.size:
        values[i] = _power_at(p, i, p.effect[i], p.n[i], p.alpha[i])
    return values, p.reasons.copy()


def _detectable_effect(p):
    values = np.full(p.reasons.size, np.nan)
    reasons = p.reasons.copy()
    i = np.flatnonzero(p.ok)
    if i.size == 0:
        return values, reasons
    sign = _TAIL_SIGN[p.alternative]
    margin = p.margin[i]
    lo, hi = KIND_MODULES[p.kind].effect_bounds(p.baseline[i], margin, sign)
    room = (hi - margin) if sign > 0 else (margin - lo)
    _, s0, s1, _ = _moments(p, i, margin)
    u, y0, y_min, y_max = distance_search(room, s0, s1, p.alpha[i], p.power[i], p.n[i],
                                          p.alternative)
    target = p.power[i]
    exact_t = p.method == "t"
    n, ratio, baseline = p.n[i], p.ratio[i], p.baseline[i]
    sd = None if p.sd is None else p.sd[i]
    crit = critical(p.alpha[i], p.alternative, True, degrees_of_freedom(n, ratio)) if exact_t else u
    moments = KIND_MODULES[p.kind].moments

    def f(y, j):
        mj, nj, rj, uj, bj = _subset(j, i.size, margin, n, ratio, crit, baseline)
        sdj = None if sd is None else _subset(j, i.size, sd)[0]
        effect = mj + sign * np.exp(y)
        return power_of(*moments(p.method, bj, effect, mj, sdj, rj), nj, uj, p.alternative,
                        exact_t, rj) - target[j]

    y, status = roots.find_root(f, np.minimum(y0, y_max), 1e-3, y_min, y_max)
    effect = margin + sign * np.exp(y)
    scale = np.where(p.relative[i], p.baseline[i], 1.0)
    values[i] = effect / scale
    if p.unit is not None:  # back from the units a far-from-1 mean row was solved in
        values[i] = np.where(p.relative[i], values[i], np.ldexp(values[i], p.unit[i]))
    _record(reasons, i, status, "detectable_effect")
    return values, reasons


def _significance_level(p):
    values = np.full(p.reasons.size, np.nan)
    reasons = p.reasons.copy()
    i = np.flatnonzero(p.ok)
    if i.size == 0:
        return values, reasons
    two = p.alternative == "two-sided"
    d, s0, s1, cc = moments = _moments(p, i, p.effect[i])
    main = np.abs(d) if two else _TAIL_SIGN[p.alternative] * d
    x = np.sqrt(p.n[i])
    u0 = (main * x - cc / x - _normal.quantile(p.power[i]) * s1) / s0
    y_max = np.full(i.size, np.log(0.5 if two else 1.0) + np.log1p(-1e-12))
    y_min = np.full(i.size, np.log(_ALPHA_MIN))
    y0 = np.clip(np.log(np.maximum(_normal.sf(u0), _ALPHA_MIN)), y_min, y_max)
    target = p.power[i]
    ratio, n = p.ratio[i], p.n[i]

    def alpha_of(y):
        tail = np.exp(y)
        return 2.0 * tail if two else tail

    def f(y, j):
        sub = _subset(j, i.size, *moments, ratio, n)
        return _power_from(p, sub[:4], sub[4], sub[5], alpha_of(y)) - target[j]

    y, status = roots.find_root(f, y0, 1e-3, y_min, y_max)
    values[i] = alpha_of(y)
    _record(reasons, i, status, "significance_level")
    return values, reasons


def sample_size(kind, baseline, effect, *, sd=None, alpha=0.05, power=0.8,
                alternative="two-sided", ratio=1.0, relative=False, margin=0.0, method=None):
    """Control-arm units for the test to reach ``power`` at ``effect``.

    Parameters
    ----------
    kind : {"mean", "proportion", "rate", "ratio", "quantile"}
        Metric kind: ``baseline`` is the control mean, the control proportion in (0, 1),
        the control mean count per unit, the control ratio of means
        (:mod:`~fourfold.engine.ratio`) or the control quantile
        (:mod:`~fourfold.engine.quantile`).
    baseline, effect : array_like
        Control value and the effect (treatment − control; a fraction of baseline when
        ``relative``).
    sd : array_like, optional
        Per-unit standard deviation: required for a mean; for a ratio its delta-method sd
        (:func:`fourfold.engine.ratio.unit_sd`) and for a quantile the sample quantile's
        (:func:`fourfold.engine.quantile.unit_sd`); for a rate it overrides the Poisson
        variance (over-dispersion: sd² in control, sd²·(baseline + effect)/baseline in
        treatment); ignored for a proportion.
    alpha, power : array_like
        Significance level and power, both in (0, 1), power > alpha.
    alternative : {"two-sided", "greater", "less"}
    ratio : array_like
        Treatment units per control unit (> 0).
    relative : bool or array_like of bool
        Effect and margin as fractions of the baseline.
    margin : array_like
        Difference under H0 (negative with "greater" for non-inferiority).
    method : str, optional
        One of ``METHODS[kind]``; None for the kind's default.

    Returns
    -------
    numpy.ndarray
        Control-arm units (not rounded); nan where impossible (array calls).

    Raises
    ------
    ValueError
        Scalar call with impossible input; unknown kind, method or alternative.

    References
    ----------
    Lehr (1992); Fleiss, Levin & Paik (2003), ch. 4; Fleiss, Tytun & Ury (1980); Deng,
    Knoblich & Lu (2018) for ratios; Serfling (1980), §2.3 for quantiles.

    Examples
    --------
    >>> round(float(sample_size("mean", 10.0, 1.0, sd=2.0, power=0.9)), 1)
    84.1
    >>> sample_size("proportion", [0.1, 1.5], 0.02).round(1).tolist()
    [3840.8, nan]
    >>> from fourfold.engine import ratio
    >>> round(float(sample_size("ratio", 2.6, 0.04, relative=True,
    ...                         sd=ratio.unit_sd(2.6, 0.034, 0.61, 0.19, 0.8))))
    168225
    """
    p = prepare("sample_size", kind, baseline, effect=effect, sd=sd, alpha=alpha, power=power,
                alternative=alternative, ratio=ratio, relative=relative, margin=margin,
                method=method)
    return _finish(p, *_run(_sample_size, p))


def power(kind, baseline, effect, n, *, sd=None, alpha=0.05, alternative="two-sided",
          ratio=1.0, relative=False, margin=0.0, method=None):
    """Power of the test with ``n`` control-arm units at ``effect``.

    Parameters are as in :func:`sample_size`; ``n`` is the control-arm size (> 0; > 1 unit
    per arm for "t").

    Returns
    -------
    numpy.ndarray
        Power in (0, 1]; nan where impossible (array calls).

    References
    ----------
    Cohen (1988), ch. 2; Fleiss, Levin & Paik (2003), ch. 4.

    Examples
    --------
    >>> round(float(power("mean", 0.0, 0.5, 64.0, sd=1.0, method="t")), 4)
    0.8015
    """
    p = prepare("power", kind, baseline, effect=effect, n=n, sd=sd, alpha=alpha,
                alternative=alternative, ratio=ratio, relative=relative, margin=margin,
                method=method)
    return _finish(p, *_run(_power, p))


def detectable_effect(kind, baseline, n, *, sd=None, alpha=0.05, power=0.8,
                      alternative="two-sided", ratio=1.0, relative=False, margin=0.0,
                      method=None):
    """Smallest effect on the side of the alternative that ``n`` units detect with ``power``.

    For two-sided tests the positive effect is returned; with ``relative=True`` it is a
    fraction of the baseline.  Other parameters as in :func:`sample_size`.

    Returns
    -------
    numpy.ndarray
        The effect (treatment − control); nan where impossible (array calls).

    References
    ----------
    Cohen (1988), ch. 2; Fleiss, Levin & Paik (2003), ch. 4.

    Examples
    --------
    >>> round(float(detectable_effect("mean", 0.0, 63.7656, sd=1.0, method="t")), 4)
    0.5
    """
    p = prepare("detectable_effect", kind, baseline, n=n, sd=sd, alpha=alpha, power=power,
                alternative=alternative, ratio=ratio, relative=relative, margin=margin,
                method=method)
    return _finish(p, *_run(_detectable_effect, p))


def significance_level(kind, baseline, effect, n, *, sd=None, power=0.8,
                       alternative="two-sided", ratio=1.0, relative=False, margin=0.0,
                       method=None):
    """The α at which ``n`` units reach ``power`` at ``effect``.

    Other parameters as in :func:`sample_size`.

    Returns
    -------
    numpy.ndarray
        α in (0, 1); nan where impossible (array calls).

    References
    ----------
    Cohen (1988), ch. 2.

    Examples
    --------
    >>> round(float(significance_level("mean", 0.0, 0.5, 62.7910, sd=1.0)), 4)
    0.05
    """
    p = prepare("significance_level", kind, baseline, effect=effect, n=n, sd=sd, power=power,
                alternative=alternative, ratio=ratio, relative=relative, margin=margin,
                method=method)
    return _finish(p, *_run(_significance_level, p))


def detectable_margin(kind, baseline, effect, n, *, sd=None, alpha=0.05, power=0.8,
                      alternative="greater", ratio=1.0, relative=False, method=None):
    """The tightest margin a one-sided test of ``n`` units rules out with ``power``.

    With the true difference held at ``effect`` (usually 0 for a guardrail), the margin
    closest to it that the test still rejects with the given power: below the effect for
    "greater" (non-inferiority: the treatment is not worse than the margin), above it for
    "less" (a guardrail: the metric does not rise by the margin or more). With
    ``relative=True`` effect and margin are fractions of the baseline. Other parameters as in
    :func:`sample_size`; a two-sided test has no such margin.

    Returns
    -------
    numpy.ndarray
        The margin (treatment − control under H0); nan where impossible (array calls).

    References
    ----------
    Chow, Shao & Wang (2008), §3.2 and §4.2; Farrington & Manning (1990).

    Examples
    --------
    >>> round(float(detectable_margin("mean", 1.84, 0.0, 14_533.0, sd=0.61,
    ...                               alternative="less")), 4)
    0.0178
    """
    p = prepare("detectable_margin", kind, baseline, effect=effect, n=n, sd=sd, alpha=alpha,
                power=power, alternative=alternative, ratio=ratio, relative=relative,
                method=method)
    return _finish(p, *_run(solve_margin, p))


_SOLVERS = {
    "sample_size": _sample_size,
    "power": _power,
    "detectable_effect": _detectable_effect,
    "significance_level": _significance_level,
    "detectable_margin": solve_margin,
}


def values_and_reasons(solve, kind, baseline, *, effect=None, n=None, sd=None, alpha=0.05,
                       power=0.8, alternative="two-sided", ratio=1.0, relative=False, margin=0.0,
                       method=None):
    """Solve once and return both the results and why each element has none.

    The array form of the four solvers for callers that need both (a plan table): the values
    are those of the solver named by ``solve`` (nan where impossible) and the reasons those of
    :func:`problems`, from one solve instead of two. Scalar input never raises for an
    impossible element; like :func:`problems`, a name that is not allowed (kind, method,
    alternative) or a missing input gives its message for every element.

    Parameters
    ----------
    solve : {"sample_size", "power", "detectable_effect", "significance_level", \
"detectable_margin"}
    kind, baseline, effect, n, sd, alpha, power, alternative, ratio, relative, margin, method
        As for the solver; inputs the solve does not use are ignored.

    Returns
    -------
    values : numpy.ndarray
        Float array of the broadcast shape.
    reasons : numpy.ndarray
        Object array of the broadcast shape, ``""`` where the value is computed.

    Raises
    ------
    ValueError
        For a ``solve`` that is not one of the four.

    Examples
    --------
    >>> values, reasons = values_and_reasons("sample_size", "proportion", [0.1, 1.2],
    ...                                      effect=0.02)
    >>> values.round(1).tolist(), reasons.tolist()
    ([3840.8, nan], ['', 'baseline must be between 0 and 1 (exclusive) for a proportion'])
    """
    kwargs = dict(effect=effect, n=n, sd=sd, alpha=alpha, power=power, alternative=alternative,
                  ratio=ratio, relative=relative, margin=margin, method=method)
    try:
        p = prepare(solve, kind, baseline, **kwargs)
    except ValueError as error:
        if solve not in _SOLVERS:
            raise
        shapes = [np.shape(v) for v in (baseline, effect, n, sd, alpha, power, ratio, margin)
                  if v is not None]
        shape = np.broadcast_shapes(*shapes)
        return np.full(shape, np.nan), np.full(shape, str(error), dtype=object)
    values, reasons = _run(_SOLVERS[solve], p)
    return values.reshape(p.shape), reasons.reshape(p.shape)


def problems(solve, kind, baseline, *, effect=None, n=None, sd=None, alpha=0.05, power=0.8,
             alternative="two-sided", ratio=1.0, relative=False, margin=0.0, method=None):
    """Why each element of a call to ``solve`` cannot be computed ("" where it can).

    Parameters
    ----------
    solve : {"sample_size", "power", "detectable_effect", "significance_level"}
    kind, baseline, effect, n, sd, alpha, power, alternative, ratio, relative, margin, method
        As for the solver; inputs the solve does not use are ignored.

    Returns
    -------
    numpy.ndarray
        Object array of the broadcast shape holding one short reason per element.

    Examples
    --------
    >>> problems("sample_size", "proportion", [0.1, 1.2], effect=0.01).tolist()
    ['', 'baseline must be between 0 and 1 (exclusive) for a proportion']
    >>> problems("power", "mean", 1.0, effect=0.1, n=100, sd=1.0, method="w").tolist()
    "method must be one of 'z', 't' for a mean, not 'w'"
    """
    return values_and_reasons(solve, kind, baseline, effect=effect, n=n, sd=sd, alpha=alpha,
                              power=power, alternative=alternative, ratio=ratio,
                              relative=relative, margin=margin, method=method)[1]
