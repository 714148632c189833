"""What a metric row's kind needs beyond baseline and sd, and its direction in words.

Ratio and quantile rows do not take an sd: the per-unit sd the engine's solvers need is
derived from the row's own inputs, for a group of rows at once (:func:`unit_sds`):

* a ratio row from its denominator's mean per unit, the sds of numerator and denominator
  and their correlation, by the delta method (:func:`fourfold.engine.ratio.unit_sd`);
* a quantile row from its level and the density at the quantile
  (:func:`fourfold.engine.quantile.unit_sd`): the ``density`` the history import estimated,
  or else the density of the log-normal through the baseline and a second percentile.

A row's ``better`` direction says which way the metric improves; a guardrail row tests that
it does not get worse, so its alternative is the improving side, with the margin on the
worsening side (:func:`guardrail_direction`). Any row's test reads in words
(:func:`direction_words`): "must not get worse (higher) by more than 20 ms".

References
----------
Deng, A., Knoblich, U. & Lu, J. (2018). Applying the delta method in metric analytics. *KDD
2018*. Serfling, R. J. (1980). *Approximation Theorems of Mathematical Statistics*, §2.3.

Examples
--------
>>> from fourfold.plan.model import Metric
>>> row = Metric(kind="quantile", baseline=3.1, quantile_level=0.95, second_level=0.5,
...              second_value=1.7)
>>> sds, reasons = unit_sds([row])
>>> round(float(sds[0]), 3), reasons.tolist()
(2.393, [''])
"""

from __future__ import annotations

import numpy as np

from fourfold import engine
from fourfold.plan.model import Metric

DERIVED_SD = ("ratio", "quantile")
"""Kinds whose per-unit sd is derived from their own inputs (the row's ``sd`` is unused)."""

RATIO_FIELDS = ("denominator", "numerator_sd", "denominator_sd", "correlation")
QUANTILE_FIELDS = ("quantile_level", "density", "second_level", "second_value")
KIND_FIELDS = {"ratio": RATIO_FIELDS, "quantile": QUANTILE_FIELDS}
"""The fields that only rows of one kind use."""

_NEEDS = {
    "denominator": "a ratio row needs its denominator's mean per unit",
    "numerator_sd": "a ratio row needs the numerator's sd per unit",
    "denominator_sd": "a ratio row needs the denominator's sd per unit",
    "correlation": "a ratio row needs the correlation of numerator and denominator",
    "quantile_level": "a quantile row needs its level (0.95 for the p95)",
}
_NO_DENSITY = ("a quantile row needs the density at the quantile (from a history import) or "
               "a second percentile (level and value) for a log-normal")


def has_sd(metric: Metric) -> bool:
    """Whether the engine gets a per-unit sd for this row (derived, or the row's own)."""
    return metric.kind in DERIVED_SD or metric.sd is not None


def _column(metrics: list[Metric], name: str) -> np.ndarray:
    return np.array([np.nan if getattr(m, name) is None else getattr(m, name) for m in metrics],
                    dtype=float)


def _missing(metrics: list[Metric], names: tuple[str, ...]) -> np.ndarray:
    reasons = np.full(len(metrics), "", dtype=object)
    for index, metric in enumerate(metrics):
        for name in names:
            if getattr(metric, name) is None:
                reasons[index] = _NEEDS[name]
                break
    return reasons


def _merge(first: np.ndarray, then: np.ndarray) -> np.ndarray:
    return np.where(first != "", first, then)


def quantile_densities(metrics: list[Metric]) -> tuple[np.ndarray, np.ndarray]:
    """The density at the quantile each quantile row uses, and why where there is none."""
    given = _column(metrics, "density")
    fitted, why = engine.quantile.lognormal_density_and_reasons(
        _column(metrics, "quantile_level"), _column(metrics, "baseline"),
        _column(metrics, "second_level"), _column(metrics, "second_value"))
    second = np.array([m.second_level is not None and m.second_value is not None
                       for m in metrics], dtype=bool)
    density = np.where(np.isfinite(given), given, fitted)
    reasons = np.where(np.isfinite(given), "", np.where(second, why, _NO_DENSITY))
    return np.where(reasons == "", density, np.nan), reasons.astype(object)


def unit_sds(metrics: list[Metric]) -> tuple[np.ndarray | None, np.ndarray]:
    """The per-unit sds of rows of one kind for the engine, and the reason per row.

    Returns ``(None, reasons)`` for rows of a kind without a derived sd whose ``sd`` is empty
    (proportions; rates with Poisson variance).
    """
    kind = metrics[0].kind
    if kind == "ratio":
        missing = _missing(metrics, RATIO_FIELDS)
        sd, why = engine.ratio.unit_sd_and_reasons(
            _column(metrics, "baseline"), *(_column(metrics, name) for name in RATIO_FIELDS))
        reasons = _merge(missing, why)
    elif kind == "quantile":
        missing = _missing(metrics, ("quantile_level",))
        density, no_density = quantile_densities(metrics)
        sd, why = engine.quantile.unit_sd_and_reasons(_column(metrics, "quantile_level"),
                                                      density)
        reasons = _merge(_merge(missing, no_density), why)
    else:
        reasons = np.full(len(metrics), "", dtype=object)
        if metrics[0].sd is None:
            return None, reasons
        return _column(metrics, "sd"), reasons
    return np.where(reasons == "", sd, np.nan), reasons


KEPT = 50_000
"""Derived figures :func:`kept_unit_sds` and :func:`kept_density` keep before they start
again."""

_kept: dict[tuple[int, str], tuple] = {}
"""Derived figures by (row stamp, what): an sd with its reason, or a fitted density."""


def _keep(key: tuple[int, str], value: tuple) -> None:
    if len(_kept) >= KEPT:  # mostly rows edited or gone since
        _kept.clear()
    _kept[key] = value


def kept_unit_sds(metrics: list[Metric]) -> tuple[np.ndarray | None, np.ndarray]:
    """:func:`unit_sds`, remembered by row stamp for the kinds whose sd is derived.

    A ratio's or quantile's sd depends on the row's own fields alone, and a row's stamp is
    renewed on every change of them (:attr:`fourfold.plan.model.Metric.stamp`), so every
    evaluation at any settings and the window's table share one engine call per state of a
    row.

    Examples
    --------
    >>> row = Metric(kind="ratio", baseline=2.0, denominator=1.0, numerator_sd=1.0,
    ...              denominator_sd=0.5, correlation=0.0)
    >>> kept_unit_sds([row])[0].tolist() == unit_sds([row])[0].tolist()
    True
    """
    if metrics[0].kind not in DERIVED_SD:
        return unit_sds(metrics)
    known = [_kept.get((metric.stamp, "sd")) for metric in metrics]
    if None in known:
        unknown = [metric for metric, each in zip(metrics, known, strict=True) if each is None]
        sd, own = unit_sds(unknown)
        made = dict(zip([metric.stamp for metric in unknown],
                        zip(sd.tolist(), own.tolist(), strict=True), strict=True))
        for stamp, each in made.items():
            _keep((stamp, "sd"), each)
        known = [made[metric.stamp] if each is None else each
                 for metric, each in zip(metrics, known, strict=True)]
    return (np.array([each[0] for each in known], dtype=float),
            np.array([each[1] for each in known], dtype=object))


def kept_density(metric: Metric) -> float:
    """The density at the quantile a quantile row uses (:func:`quantile_densities`; nan where
    it has none), remembered by row stamp as :func:`kept_unit_sds` is."""
    found = _kept.get((metric.stamp, "density"))
    if found is None:
        found = (float(quantile_densities([metric])[0][0]),)
        _keep((metric.stamp, "density"), found)
    return found[0]


def unit_sd(metric: Metric) -> float:
    """The per-unit sd the engine uses for one row (nan when it has none).

    Examples
    --------
    >>> from fourfold.plan.model import Metric
    >>> unit_sd(Metric(kind="ratio", baseline=2.0, denominator=1.0, numerator_sd=1.0,
    ...                denominator_sd=0.5, correlation=0.0))
    1.4142135623730951
    """
    sds, _ = unit_sds([metric])
    return float("nan") if sds is None else float(sds[0])


def quantile_name(metric: Metric) -> str:
    """The quantile as analysts write it: "p95", "p99.9", "p50"; "quantile" without a level.

    Examples
    --------
    >>> from fourfold.plan.model import Metric
    >>> quantile_name(Metric(kind="quantile", quantile_level=0.999))
    'p99.9'
    """
    if metric.quantile_level is None:
        return "quantile"
    return f"p{100 * metric.quantile_level:.6g}"


def tail_note(metric: Metric, row) -> str | None:
    """A caution for a quantile row with few units beyond its quantile (else ``None``).

    The closed form of a quantile rests on the sample quantile being nearly normal, which
    needs many units per arm beyond it: fewer than ``MIN_TAIL_UNITS`` expected in the smaller
    arm (n·min(p, 1 − p)) gets a note that points to the simulation check.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from fourfold.plan.model import Metric
    >>> row = Metric(name="Load p99.9", kind="quantile", quantile_level=0.999)
    >>> print(tail_note(row, SimpleNamespace(units_control=2000.0, units_treatment=2000.0)))
    ... # doctest: +NORMALIZE_WHITESPACE
    Load p99.9: about 2 units per arm lie beyond its p99.9; the closed form needs about 100,
    so check this row by simulation.
    """
    if metric.kind != "quantile" or metric.quantile_level is None:
        return None
    n = min(row.units_control, row.units_treatment)
    if not np.isfinite(n):
        return None
    beyond = n * min(metric.quantile_level, 1.0 - metric.quantile_level)
    if beyond >= engine.quantile.MIN_TAIL_UNITS:
        return None
    return (f"{metric.name}: about {beyond:.3g} units per arm lie beyond its "
            f"{quantile_name(metric)}; the closed form needs about "
            f"{engine.quantile.MIN_TAIL_UNITS}, so check this row by simulation.")


def guardrail_direction(better: str, margin: float) -> tuple[str, float]:
    """The alternative and margin of a guardrail row whose metric is better ``better``.

    The test is one-sided toward the better side, with the margin, the worsening it
    tolerates, on the worse side of 0: ``("greater", −|m|)`` when higher is better,
    ``("less", +|m|)`` when lower is.

    Examples
    --------
    >>> guardrail_direction("lower", -0.02)
    ('less', 0.02)
    """
    size = abs(margin)
    return ("greater", -size if size else 0.0) if better == "higher" else ("less", size)


def direction_words(metric: Metric, size_text: str) -> str:
    """What the row's test asks, in plain words, with its direction and ``better``.

    ``size_text`` is the margin's size as the reader sees it (no sign, e.g. "20 ms").

    Examples
    --------
    >>> from fourfold.plan.model import Metric
    >>> direction_words(Metric(better="lower", alternative="less", margin=0.02), "20 ms")
    'must not get worse (higher) by more than 20 ms'
    >>> direction_words(Metric(better="higher", alternative="greater", margin=0.0), "0")
    'must get better (higher)'
    """
    better = metric.better
    worse = "lower" if better == "higher" else "higher"
    up = 1.0 if better == "higher" else -1.0
    margin = metric.margin * up  # > 0: on the better side
    if metric.alternative == "two-sided":
        return ("tests for a change either way" if margin == 0 else
                f"tests for a difference either way from {size_text}")
    if metric.alternative == ("greater" if better == "higher" else "less"):
        if margin == 0:
            return f"must get better ({better})"
        if margin < 0:
            return f"must not get worse ({worse}) by more than {size_text}"
        return f"must get better ({better}) by more than {size_text}"
    if margin == 0:
        return f"tests whether it gets worse ({worse})"
    return f"tests whether it gets worse ({worse}) by more than {size_text}" if margin < 0 \
        else f"tests whether it falls short of getting better ({better}) by {size_text}"
