"""Simulated arms of ratio and quantile rows, and the test their replicates run.

Each arm's ``draw(rng, reps, sizes)`` gives, per replicate and look, the arm's estimate and
its per-unit variance estimate, which :func:`estimate_z` turns into the z statistic
(R̂_t − R̂_c − margin)/√(v̂_c/n_c + v̂_t/n_t) the analysis would compute.

Ratio
    Each unit's numerator X and denominator Y are bivariate normal with the row's means, sds
    and correlation. A segment of m units is drawn as its sufficient statistics: the mean
    vector, N(μ, Σ/m), and the scatter matrix, Wishart(m − 1, Σ), by Bartlett's decomposition;
    segments are combined exactly (Chan, Golub & LeVeque 1983), so interim looks are simulated.
    The estimate is the ratio of the means and its variance the delta method's on the
    replicate's own moments. A treatment adds δ per unit of the denominator (X + δ·Y), the
    engine's model.
Quantile
    The k = ⌈n·p⌉-th of n ordered values is F⁻¹ of the k-th of n ordered uniforms, and three
    ordered uniforms are drawn jointly from four independent gamma gaps (their Dirichlet
    representation), so a replicate costs the same for any n. The estimate is that order
    statistic and its variance p(1 − p)·ŝ² with the sparsity 1/f estimated from the order
    statistics around it, (X₍b₎ − X₍a₎)·n/(b − a), a and b from the Hall–Sheather bandwidth —
    the usual way to test a quantile without knowing f. F⁻¹ is that of the assumed log-normal
    or the history's empirical one (then every replicate is an exact bootstrap sample's
    quantile). A treatment shifts every value by δ. Interim looks are not simulated.

References
----------
Bartlett, M. S. (1933) On the theory of statistical regression. *Proc. R. Soc. Edinburgh* 53.
Deng, A., Knoblich, U. & Lu, J. (2018) *KDD 2018* (the delta method).
David, H. A. & Nagaraja, H. N. (2003) *Order Statistics*, 3rd ed., Wiley, §2.5 (uniform
order statistics from exponential or gamma spacings).
Hall, P. & Sheather, S. J. (1988) On the distribution of a studentized quantile. *JRSS B*
50:381–391; Koenker, R. (2005) *Quantile Regression*, Cambridge UP, §3.4 (the sparsity).
Chan, T. F., Golub, G. H. & LeVeque, R. J. (1983) *The American Statistician* 37:242–247.

Examples
--------
>>> import numpy as np
>>> arm = RatioArm(2.6 * 0.034, 0.034, 0.61, 0.19, 0.8)
>>> ratio, variance = arm.draw(np.random.default_rng(1), 2000, np.array([200_000]))
>>> round(float(ratio.mean()), 2), round(float(np.sqrt(variance.mean())), 1)
(2.6, 10.8)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from fourfold.simulation.models import segment_sizes

HALL_SHEATHER_ALPHA = 0.05
"""The level in the Hall–Sheather bandwidth (that of the interval the sparsity serves)."""


def estimate_z(n_c, est_c, var_c, n_t, est_t, var_t, margin=0.0):
    """(est_t − est_c − margin)/√(var_c/n_c + var_t/n_t); 0 where it is not finite.

    A replicate whose estimate or variance is not finite (a ratio whose denominator's mean came
    out at 0 or below) scores 0 and never rejects.

    Examples
    --------
    >>> z = estimate_z(100, np.array([1.0]), np.array([4.0]), 100, np.array([2.0]),
    ...                np.array([4.0]))
    >>> round(float(z[0]), 6)
    3.535534
    """
    n_c = np.asarray(n_c, dtype=float)
    n_t = np.asarray(n_t, dtype=float)
    with np.errstate(all="ignore"):
        z = (est_t - est_c - margin) / np.sqrt(var_c / n_c + var_t / n_t)
    return np.where(np.isfinite(z), z, 0.0)


@dataclass(frozen=True)
class RatioArm:
    """Units with bivariate normal numerator and denominator; ``shift`` δ adds δ·Y to X."""

    mean_x: float
    mean_y: float
    sd_x: float
    sd_y: float
    corr: float
    shift: float = 0.0

    def treated(self, shift):
        """The arm whose ratio is ``shift`` higher (the same units, X + shift·Y)."""
        return RatioArm(self.mean_x, self.mean_y, self.sd_x, self.sd_y, self.corr, shift)

    def draw(self, rng, reps, sizes):
        """Ratio of the means and the delta method's per-unit variance, shape (reps, K)."""
        counts = segment_sizes(sizes)
        # Lower Cholesky factor of Σ for (X, Y), written out so a singular Σ is allowed.
        l11, l21 = self.sd_x, self.corr * self.sd_y
        l22 = self.sd_y * math.sqrt(max(1.0 - self.corr**2, 0.0))
        shape = (reps, counts.size)
        mx, my = np.empty(shape), np.empty(shape)
        sxx, sxy, syy = np.zeros(shape), np.zeros(shape), np.zeros(shape)
        total = 0
        for k, m in enumerate(counts):
            z1, z2 = rng.standard_normal((2, reps)) / math.sqrt(m)
            seg_x, seg_y = self.mean_x + l11 * z1, self.mean_y + l21 * z1 + l22 * z2
            a11 = np.sqrt(rng.chisquare(m - 1, reps)) if m > 1 else np.zeros(reps)
            a22 = np.sqrt(rng.chisquare(m - 2, reps)) if m > 2 else np.zeros(reps)
            a21 = rng.standard_normal(reps) if m > 1 else np.zeros(reps)
            # Bartlett: S = L·A·Aᵀ·Lᵀ with A = [[a11, 0], [a21, a22]].
            b11, b21, b22 = l11 * a11, l21 * a11 + l22 * a21, l22 * a22
            seg_xx, seg_xy, seg_yy = b11 * b11, b11 * b21, b21 * b21 + b22 * b22
            if k == 0:
                mx[:, 0], my[:, 0] = seg_x, seg_y
                sxx[:, 0], sxy[:, 0], syy[:, 0] = seg_xx, seg_xy, seg_yy
            else:
                new = total + m
                dx, dy = seg_x - mx[:, k - 1], seg_y - my[:, k - 1]
                weight = total * m / new
                mx[:, k] = mx[:, k - 1] + dx * (m / new)
                my[:, k] = my[:, k - 1] + dy * (m / new)
                sxx[:, k] = sxx[:, k - 1] + seg_xx + dx * dx * weight
                sxy[:, k] = sxy[:, k - 1] + seg_xy + dx * dy * weight
                syy[:, k] = syy[:, k - 1] + seg_yy + dy * dy * weight
            total += m
        d = self.shift  # X + d·Y: the means and the scatter move together
        mx, sxx, sxy = mx + d * my, sxx + 2 * d * sxy + d * d * syy, sxy + d * syy
        n = np.asarray(sizes, dtype=float)
        with np.errstate(all="ignore"):
            ratio = np.where(my > 0, mx / my, np.nan)
            var = (sxx - 2 * ratio * sxy + ratio * ratio * syy) / np.maximum(n - 1, 1) / my**2
        return ratio, var


def hall_sheather(n, level, alpha=HALL_SHEATHER_ALPHA):
    """The Hall–Sheather bandwidth (in probability) for the sparsity at ``level``.

    h = n^(−1/3)·z₁₋α/₂^(2/3)·(1.5·φ(z_p)²/(2z_p² + 1))^(1/3) (Koenker 2005, §3.4.4).

    Examples
    --------
    >>> round(hall_sheather(10_000, 0.5), 4)
    0.0451
    """
    z_p = float(special.ndtri(level))
    phi = math.exp(-0.5 * z_p * z_p) / math.sqrt(2 * math.pi)
    z_a = float(special.ndtri(1 - alpha / 2))
    return n ** (-1 / 3) * z_a ** (2 / 3) * (1.5 * phi * phi / (2 * z_p * z_p + 1)) ** (1 / 3)


def lognormal_quantile(mu, sigma):
    """F⁻¹ of the log-normal with log-mean ``mu`` and log-sd ``sigma``."""
    def inverse(u):
        return np.exp(mu + sigma * special.ndtri(u))

    return inverse


def empirical_quantile(values):
    """F⁻¹ of the empirical distribution of ``values``: the ⌈u·N⌉-th smallest."""
    ordered = np.sort(np.asarray(values, dtype=float))

    def inverse(u):
        index = np.ceil(u * ordered.size).astype(np.int64) - 1
        return ordered[np.clip(index, 0, ordered.size - 1)]

    return inverse


@dataclass(frozen=True)
class QuantileArm:
    """The sample ``level``-quantile of units with quantile function ``inverse``, + ``shift``."""

    level: float
    inverse: object
    shift: float = 0.0

    def treated(self, shift):
        """The arm whose every value is ``shift`` higher."""
        return QuantileArm(self.level, self.inverse, shift)

    def draw(self, rng, reps, sizes):
        """Sample quantile and its estimated per-unit variance p(1 − p)·ŝ², shape (reps, 1)."""
        sizes = np.asarray(sizes)
        if sizes.size != 1:
            raise ValueError("interim looks are not simulated for quantile rows; check the "
                             "row without looks")
        n, p = int(sizes[-1]), self.level
        k = min(max(math.ceil(n * p), 1), n)
        h = hall_sheather(n, p)
        low = min(max(math.floor(n * (p - h)), 1), max(k - 1, 1))
        high = max(min(math.ceil(n * (p + h)), n), min(k + 1, n))
        gaps = [rng.standard_gamma(shape, reps) if shape > 0 else np.zeros(reps)
                for shape in (low, k - low, high - k, n + 1 - high)]
        whole = gaps[0] + gaps[1] + gaps[2] + gaps[3]
        u_low = gaps[0] / whole
        u_k = (gaps[0] + gaps[1]) / whole
        u_high = (gaps[0] + gaps[1] + gaps[2]) / whole
        x_low, x_k, x_high = (self.inverse(u) for u in (u_low, u_k, u_high))
        sparsity = (x_high - x_low) * n / max(high - low, 1)
        return (x_k + self.shift)[:, None], (p * (1 - p) * sparsity * sparsity)[:, None]


def _input(inputs, name, what):
    value = (inputs or {}).get(name)
    if value is None:
        raise ValueError(f"{name} is required to simulate a {what} row")
    number = float(value)
    if not math.isfinite(number):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    return number


def ratio_arms(baseline, inputs):
    """Control arm, treatment arm for a difference, model name of a ratio row.

    ``inputs`` holds ``denominator`` (mean per unit), ``numerator_sd``, ``denominator_sd``
    and ``correlation``; the numerator's mean is ``baseline × denominator``.
    """
    names = ("denominator", "numerator_sd", "denominator_sd", "correlation")
    denominator, sd_x, sd_y, corr = (_input(inputs, name, "ratio") for name in names)
    if denominator <= 0 or sd_x < 0 or sd_y < 0 or not -1 <= corr <= 1:
        raise ValueError("a ratio row needs a denominator mean above 0, sds of at least 0 and "
                         "a correlation between -1 and 1")
    control = RatioArm(baseline * denominator, denominator, sd_x, sd_y, corr)
    return control, control.treated, "bivariate normal"


def quantile_arms(baseline, inputs, history):
    """Control arm, treatment arm for a difference, model name of a quantile row.

    From ``history`` (the empirical distribution) when given; else the log-normal through the
    baseline and a second percentile (``second_level``, ``second_value``), or through the
    baseline with the given ``density`` there.
    """
    from fourfold.engine import quantile

    level = _input(inputs, "level", "quantile")
    if not 0 < level < 1:
        raise ValueError(f"level must be between 0 and 1 (exclusive), got {level!r}")
    if history is not None:
        control = QuantileArm(level, empirical_quantile(history))
        return control, control.treated, "bootstrap (order statistics)"
    if (inputs or {}).get("density") is not None:
        mu, sigma = quantile.lognormal_through_density(level, baseline,
                                                       _input(inputs, "density", "quantile"))
    else:
        mu, sigma, reasons = quantile.lognormal_fit_and_reasons(
            level, baseline, _input(inputs, "second_level", "quantile"),
            _input(inputs, "second_value", "quantile"))
        if reasons.reshape(-1)[0]:
            raise ValueError(str(reasons.reshape(-1)[0]))
    if not np.isfinite(mu) or not np.isfinite(sigma):
        raise ValueError("the quantile and its density do not give a log-normal (the baseline "
                         "must be above 0)")
    control = QuantileArm(level, lognormal_quantile(float(mu), float(sigma)))
    return control, control.treated, "log-normal (order statistics)"
