"""What the history import produces: column mappings, per-metric tallies and summaries.

A :class:`ColumnMap` says how file columns become one metric row: a numeric column is a mean
(mean and sd), a 0/1 or true/false column a proportion, a count column a rate (with its
observed sd, which carries any over-dispersion), a numerator and denominator pair a ratio row
(the ratio of sums, the denominator's mean, both sds and their correlation; its delta-method
sd), and a numeric column with a level a quantile row (the quantile and a kernel estimate of
the density there, see :mod:`fourfold.history.quantiles`). An optional pre-period column gives
CUPED's correlation ρ; an optional cap percentile winsorises the upper tail.

A :class:`Tally` is the mergeable state of one metric (moments of the values, co-moments of
the pairs); tallies of chunks, of files or of a warehouse's partitions merge exactly, and
:func:`finish` turns a tally into a :class:`MetricSummary`, checking what makes the numbers
unusable (no values, no spread, a denominator summing to zero).

References
----------
Deng, A., Knoblich, U. & Lu, J. (2018). Applying the delta method in metric analytics: a
practical guide with novel ideas. *KDD 2018*, 233–242.

Deng, A., Xu, Y., Kohavi, R. & Walker, T. (2013). Improving the sensitivity of online
controlled experiments by utilizing pre-experiment data. *WSDM 2013*, 123–132.

Kohavi, R., Tang, D. & Xu, Y. (2020). *Trustworthy Online Controlled Experiments*. Cambridge
University Press, ch. 18 (variance estimation, the delta method) and ch. 22 (capping).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from fourfold.history.errors import HistoryError
from fourfold.history.moments import CoMoments, Moments

HISTORY_KINDS = ("mean", "proportion", "count", "ratio", "quantile")
"""How a column maps to a metric row (``count`` becomes a rate row)."""

PLAN_KIND = {"mean": "mean", "proportion": "proportion", "count": "rate", "ratio": "ratio",
             "quantile": "quantile"}


@dataclass(frozen=True)
class ColumnMap:
    """How file columns become one metric.

    Parameters
    ----------
    kind : str
        One of :data:`HISTORY_KINDS`.
    column : str
        The metric's column; for a ratio, the numerator.
    denominator : str, optional
        The ratio's denominator column (ratios only).
    pre : str, optional
        The same metric in a pre-period, for CUPED's ρ (not for ratios).
    cap : float, optional
        Cap the values (and the pre-period values) above this percentile, in (50, 100); for a
        ratio, the numerator. Not for proportions nor quantiles.
    level : float, optional
        The quantile's level in (0, 1), 0.95 for the p95 (quantiles only).

    Examples
    --------
    >>> ColumnMap("ratio", "items", denominator="orders").name
    'items:orders'
    """

    kind: str
    column: str
    denominator: str | None = None
    pre: str | None = None
    cap: float | None = None
    level: float | None = None

    def __post_init__(self) -> None:
        if self.kind not in HISTORY_KINDS:
            raise HistoryError(
                f"kind of column {self.column!r} must be one of {', '.join(HISTORY_KINDS)}; "
                f"got {self.kind!r}"
            )
        if not isinstance(self.column, str) or not self.column:
            raise HistoryError(f"column must name a column of the file, not {self.column!r}")
        if (self.kind == "ratio") != (self.denominator is not None):
            raise HistoryError(
                f"column {self.column!r}: a denominator goes with kind 'ratio' and only with it"
            )
        if self.pre is not None and self.kind == "ratio":
            raise HistoryError(
                f"ratio {self.name!r}: a pre-period column applies to a mean, proportion or "
                "count column, not to a ratio"
            )
        if (self.kind == "quantile") != (self.level is not None):
            raise HistoryError(
                f"column {self.column!r}: a level goes with kind 'quantile' and only with it"
            )
        if self.level is not None and (isinstance(self.level, bool)
                                       or not 0.0 < float(self.level) < 1.0):
            raise HistoryError(f"level of column {self.column!r} must be between 0 and 1 "
                               f"(0.95 for the p95); got {self.level!r}")
        if self.kind == "quantile" and (self.pre is not None or self.cap is not None):
            raise HistoryError(f"quantile {self.name!r}: a pre-period column or a cap applies "
                               "to a mean, proportion or count column, not to a quantile")
        if self.pre is not None and self.pre == self.column:
            raise HistoryError(f"column {self.column!r} cannot be its own pre-period column")
        if self.cap is not None:
            if self.kind == "proportion":
                raise HistoryError(f"column {self.column!r}: a 0/1 proportion cannot be capped")
            if isinstance(self.cap, bool) or not 50.0 < float(self.cap) < 100.0:
                raise HistoryError(
                    f"cap of column {self.column!r} must be a percentile between 50 and 100 "
                    f"(e.g. 99.9); got {self.cap!r}"
                )

    @property
    def name(self) -> str:
        """The metric's key: the column, ``NUM:DEN`` for a ratio, ``COL p95`` for a quantile."""
        if self.kind == "quantile":
            return f"{self.column} p{100 * self.level:.6g}"
        return f"{self.column}:{self.denominator}" if self.kind == "ratio" else self.column

    @property
    def columns(self) -> tuple[str, ...]:
        """Every file column this mapping reads."""
        return tuple(c for c in (self.column, self.denominator, self.pre) if c is not None)

    @property
    def capped_columns(self) -> tuple[str, ...]:
        """The columns whose upper tail is capped (the metric and its pre-period column)."""
        if self.cap is None:
            return ()
        return tuple(c for c in (self.column, self.pre) if c is not None)


@dataclass(frozen=True)
class Tally:
    """Mergeable state of one metric.

    ``values`` are the metric's values (capped when a cap applies; the numerator for a
    ratio); ``pairs`` the (denominator, numerator) pairs of a ratio or the (pre-period,
    value) pairs of a metric with a pre-period column; ``raw_values``/``raw_pairs`` the same
    before capping (only when capped); ``rows`` the rows seen, ``capped`` the values changed
    by the cap.
    """

    rows: int = 0
    values: Moments = Moments()
    pairs: CoMoments = CoMoments()
    raw_values: Moments = Moments()
    raw_pairs: CoMoments = CoMoments()
    capped: int = 0
    kernel: float = 0.0
    """A quantile's sum of Gaussian kernels at the quantile (see :mod:`~.quantiles`)."""

    def merge(self, other: Tally) -> Tally:
        """The tally of both sets of rows."""
        return Tally(
            self.rows + other.rows,
            self.values.merge(other.values),
            self.pairs.merge(other.pairs),
            self.raw_values.merge(other.raw_values),
            self.raw_pairs.merge(other.raw_pairs),
            self.capped + other.capped,
            self.kernel + other.kernel,
        )


@dataclass(frozen=True)
class CapSummary:
    """What capping did to one metric.

    ``threshold`` is the value of the ``percentile``-th percentile (``exact`` False when it
    was estimated from a sample because the tail was too long to keep), ``capped`` the number
    of values lowered to it, and ``mean_uncapped``/``sd_uncapped`` the figures without the cap.
    """

    percentile: float
    threshold: float
    exact: bool
    capped: int
    mean_uncapped: float
    sd_uncapped: float
    pre_threshold: float | None = None

    def variance_ratio(self, sd: float) -> float:
        """Capped variance over uncapped variance (below 1 when the cap helps)."""
        return (sd / self.sd_uncapped) ** 2 if self.sd_uncapped > 0 else math.nan


@dataclass(frozen=True)
class MetricSummary:
    """Baseline and variance of one metric from history.

    Attributes
    ----------
    name, kind : str
        The mapping's key and kind (see :class:`ColumnMap`).
    n, missing : int
        Units used, and rows skipped because a mapped cell was empty.
    mean, sd : float
        The baseline (proportion, mean, mean count or ratio of sums) and the per-unit sd
        (delta-method sd for a ratio: ``sd² / n`` is the variance of the ratio estimate).
    rho : float or None
        Correlation with the pre-period column, over ``pairs`` units with both values.
    cap : CapSummary or None
        What the cap changed.
    """

    name: str
    kind: str
    n: int
    missing: int
    mean: float
    sd: float
    rho: float | None = None
    pairs: int = 0
    cap: CapSummary | None = None
    parts: dict | None = None
    """The kind's own plan fields: a ratio's ``denominator``, ``numerator_sd``,
    ``denominator_sd``, ``correlation``; a quantile's ``quantile_level``, ``density`` (and
    ``exact``: whether the quantile is exact or estimated from a sample)."""

    @property
    def plan_kind(self) -> str:
        """The metric row kind: mean, proportion, rate, ratio or quantile."""
        return PLAN_KIND[self.kind]

    @property
    def dispersion(self) -> float | None:
        """Variance over mean of a count (1 for Poisson counts); None for other kinds."""
        if self.kind != "count" or self.mean <= 0:
            return None
        return self.sd**2 / self.mean

    def plan_fields(self) -> dict[str, object]:
        """The metric row fields this summary sets: kind, baseline, sd, (with a pre-period
        column) rho, and a ratio's or quantile's own inputs. A proportion's sd is left empty
        (its variance follows from the baseline), as are a ratio's and a quantile's (derived
        from their own inputs).

        Examples
        --------
        >>> MetricSummary("spend", "mean", 100, 0, 2.5, 9.0, rho=0.5, pairs=100).plan_fields()
        {'kind': 'mean', 'baseline': 2.5, 'sd': 9.0, 'rho': 0.5}
        """
        derived = self.kind in ("proportion", "ratio", "quantile")
        fields: dict[str, object] = {
            "kind": self.plan_kind,
            "baseline": self.mean,
            "sd": None if derived else self.sd,
        }
        fields.update({name: value for name, value in (self.parts or {}).items()
                       if name != "exact"})
        if self.rho is not None:
            fields["rho"] = self.rho
        return fields

    def describe(self) -> str:
        """One line on where the numbers come from (for a row's notes)."""
        text = f"From history: {self.kind} of {self.name}, n = {self.n:,}"
        if self.missing:
            text += f", {self.missing:,} missing skipped"
        if self.rho is not None:
            text += f", ρ = {self.rho:.3f} with the pre-period"
        if self.cap is not None:
            text += (f", capped at the {self.cap.percentile:g}th percentile "
                     f"({self.cap.threshold:.6g}; {self.cap.capped:,} values)")
        if self.kind == "quantile" and self.parts is not None:
            how = "" if self.parts["exact"] else ", the quantile estimated from a sample"
            text += (f", density {self.parts['density']:.4g} at the quantile (Gaussian kernel, "
                     f"Silverman's bandwidth{how})")
        return text + "."

    def to_dict(self) -> dict[str, object]:
        """A JSON-ready dict (nan becomes None)."""
        out: dict[str, object] = {
            "kind": self.kind,
            "plan_kind": self.plan_kind,
            "n": self.n,
            "missing": self.missing,
            "mean": _plain(self.mean),
            "sd": _plain(self.sd),
        }
        if self.rho is not None:
            out["rho"] = _plain(self.rho)
            out["pairs"] = self.pairs
        if self.dispersion is not None:
            out["dispersion"] = _plain(self.dispersion)
        for name, value in (self.parts or {}).items():
            out[name] = value if isinstance(value, bool) else _plain(value)
        if self.cap is not None:
            out["cap"] = {
                "percentile": self.cap.percentile,
                "threshold": _plain(self.cap.threshold),
                "exact": self.cap.exact,
                "capped": self.cap.capped,
                "mean_uncapped": _plain(self.cap.mean_uncapped),
                "sd_uncapped": _plain(self.cap.sd_uncapped),
                "variance_ratio": _plain(self.cap.variance_ratio(self.sd)),
            }
            if self.cap.pre_threshold is not None:
                out["cap"]["pre_threshold"] = _plain(self.cap.pre_threshold)
        return out


RESERVED_KEYS = ("reach", "traffic")
"""Keys of the JSON output that are not metric names (with a unit and a time column)."""


@dataclass(frozen=True)
class HistorySummary:
    """The result of one import: the source, its row count and one summary per metric.

    With a unit and a time column, ``reach`` is the reach curve
    (:class:`~fourfold.history.exposure.ReachCurve`) and ``windows`` the metrics over each
    unit's first days (:class:`~fourfold.history.exposure.WindowSummary`, shortest first).
    """

    source: str
    rows: int
    metrics: tuple[MetricSummary, ...] = field(default_factory=tuple)
    reach: object | None = None
    windows: tuple = ()

    def __getitem__(self, name: str) -> MetricSummary:
        for metric in self.metrics:
            if metric.name == name:
                return metric
        raise KeyError(name)

    def window(self, name: str, days: int) -> MetricSummary | None:
        """Metric ``name`` over each unit's first ``days`` days (None: no usable figures);
        KeyError when there is no such window."""
        for window in self.windows:
            if window.days == days:
                return window.get(name)
        raise KeyError(days)

    def to_dict(self) -> dict[str, object]:
        """One JSON object keyed by metric name; with a reach curve, also ``"reach"`` (the
        cumulative units by day) and ``"traffic"`` (how it was counted), and each metric's
        ``"windows"``."""
        out: dict[str, object] = {metric.name: metric.to_dict() for metric in self.metrics}
        if self.reach is None:
            return out
        for metric in self.metrics:
            out[metric.name]["windows"] = [_window_dict(w, metric.name) for w in self.windows]
        reach = self.reach
        out["reach"] = reach.to_list()
        out["traffic"] = {
            "first_day": reach.start,
            "days": reach.days,
            "units": reach.units[-1] if reach.units else 0,
            "reach_exact": reach.exact,
            "reach_relative_error": reach.relative_error,
            "window_share": self.windows[0].share if self.windows else 1.0,
        }
        return out


def _window_dict(window, name: str) -> dict[str, object]:
    metric = window.get(name)
    out: dict[str, object] = {"days": window.days, "units": window.units}
    if metric is None:
        out["problem"] = window.problems.get(name, "no figures")
        return out
    out.update(metric.to_dict())
    for key in ("kind", "plan_kind"):
        out.pop(key, None)
    return out


def _plain(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


def check_mapping(mapping: list[ColumnMap], header: list[str], source: str, *,
                  unit: str | None = None, time: str | None = None) -> None:
    """Check that every mapped column (and the unit and time columns) is in the file and no
    metric is mapped twice."""
    if not mapping:
        raise HistoryError(
            f"{source}: map at least one column to a metric; the file's columns are "
            f"{_listing(header)}"
        )
    names = [spec.name for spec in mapping]
    for name in names:
        if names.count(name) > 1:
            raise HistoryError(f"column {name!r} is mapped to more than one metric")
    for column in (unit, time):
        if column is not None and column not in header:
            raise HistoryError(
                f"{source}: no column {column!r}; the file's columns are {_listing(header)}"
            )
    if (unit is None) != (time is None):
        raise HistoryError("reach and windows need both a unit column and a time column")
    if unit is not None:
        clash = [name for name in names if name in RESERVED_KEYS]
        if clash:
            raise HistoryError(f"a metric called {clash[0]!r} cannot go with a unit and a "
                               "time column (the output uses that name for the reach curve)")
    known = set(header)
    for spec in mapping:
        for column in spec.columns:
            if column not in known:
                raise HistoryError(
                    f"{source}: no column {column!r}; the file's columns are {_listing(header)}"
                )


def _listing(header: list[str]) -> str:
    shown = ", ".join(repr(name) for name in header[:30])
    return shown + (", …" if len(header) > 30 else "")


def finish(spec: ColumnMap, tally: Tally, *, thresholds: dict | None = None,
           quantiles: dict | None = None) -> MetricSummary:
    """The summary of one metric's tally; HistoryError when its numbers cannot be used.

    ``thresholds`` maps ``(column, cap percentile)`` to its
    :class:`~fourfold.history.tail.TailEstimate`; ``quantiles`` maps a quantile's name to its
    :class:`~fourfold.history.quantiles.QuantileEstimate`.
    """
    if spec.kind == "ratio":
        return _finish_ratio(spec, tally, thresholds)
    if spec.kind == "quantile":
        from fourfold.history.quantiles import finish_quantile

        return finish_quantile(spec, tally, (quantiles or {}).get(spec.name))
    values = tally.values
    if values.n == 0:
        raise HistoryError(f"column {spec.column!r} has no values (every cell is empty)")
    if values.n < 2 or not values.m2 > 0:
        what = "after capping has" if spec.cap is not None else "has"
        raise HistoryError(
            f"column {spec.column!r} {what} the same value ({values.mean:g}) on every row: "
            "its sd is 0, so it cannot size a test"
            + (f"; choose a cap above the {spec.cap:g}th percentile" if spec.cap else "")
        )
    rho = None
    if spec.pre is not None:
        pairs = tally.pairs
        if pairs.n < 3:
            raise HistoryError(
                f"pre-period column {spec.pre!r} has fewer than 3 rows with {spec.column!r} "
                "also filled in"
            )
        if not pairs.x.m2 > 0:
            raise HistoryError(
                f"pre-period column {spec.pre!r} has the same value on every row, so its "
                f"correlation with {spec.column!r} is undefined"
            )
        rho = max(-1.0, min(1.0, pairs.correlation))
    return MetricSummary(
        spec.name, spec.kind, values.n, tally.rows - values.n, values.mean, values.sd,
        rho, tally.pairs.n if spec.pre is not None else 0,
        _cap(spec, tally.raw_values, tally.capped, thresholds),
    )


def _finish_ratio(spec: ColumnMap, tally: Tally, thresholds: dict | None) -> MetricSummary:
    pairs = tally.pairs
    if pairs.n == 0:
        raise HistoryError(
            f"ratio {spec.name!r} has no rows with both {spec.column!r} and "
            f"{spec.denominator!r} filled in"
        )
    if pairs.x.mean == 0:
        raise HistoryError(
            f"denominator column {spec.denominator!r} sums to zero, so the ratio "
            f"{spec.name!r} is undefined"
        )
    if pairs.x.mean < 0:
        raise HistoryError(
            f"denominator column {spec.denominator!r} sums to a negative number; a ratio's "
            "denominator counts something (orders, sessions)"
        )
    sd = pairs.ratio_sd()
    if pairs.n < 2 or not sd > 0:
        raise HistoryError(
            f"ratio {spec.name!r} has no spread between units (its delta-method sd is 0), so "
            "it cannot size a test"
        )
    cap = None
    if spec.cap is not None:
        raw = tally.raw_pairs
        cap_values = Moments(raw.n, raw.ratio(), raw.ratio_sd() ** 2 * max(raw.n - 1, 0))
        cap = _cap(spec, cap_values, tally.capped, thresholds)
    correlation = pairs.correlation  # nan when the denominator is constant: it plays no part
    correlation = max(-1.0, min(1.0, correlation)) if math.isfinite(correlation) else 0.0
    parts = {"denominator": pairs.x.mean, "numerator_sd": pairs.y.sd,
             "denominator_sd": pairs.x.sd, "correlation": correlation}
    return MetricSummary(spec.name, spec.kind, pairs.n, tally.rows - pairs.n, pairs.ratio(),
                         sd, None, 0, cap, parts)


def _cap(spec: ColumnMap, raw: Moments, capped: int, thresholds: dict | None):
    if spec.cap is None:
        return None
    estimate = (thresholds or {})[(spec.column, spec.cap)]
    pre = (thresholds or {}).get((spec.pre, spec.cap)) if spec.pre is not None else None
    return CapSummary(
        float(spec.cap), estimate.value, estimate.exact and (pre is None or pre.exact), capped,
        raw.mean, raw.sd, None if pre is None else pre.value,
    )
