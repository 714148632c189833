"""Input checks shared by the four solvers: broadcasting, ranges, per-element reasons.

Every numeric argument is broadcast to one shape.  Each element gets a reason string,
``""`` where it can be computed; the reasons are short, plain sentences that name the
argument and its allowed range, fit for a table-cell tooltip.  A scalar call raises
``ValueError`` with that sentence instead.

Examples
--------
>>> p = prepare("sample_size", "proportion", 1.2, effect=0.01)
>>> p.reasons[0]
'baseline must be between 0 and 1 (exclusive) for a proportion'
"""

import math
from dataclasses import dataclass

import numpy as np

from . import catalog, mean, proportion, quantile, rate, ratio
from .margin import ONE_SIDED

KIND_MODULES = {"mean": mean, "proportion": proportion, "rate": rate, "ratio": ratio,
                "quantile": quantile}

_NEEDS = {
    "sample_size": ("effect", "alpha", "power"),
    "power": ("effect", "n", "alpha"),
    "detectable_effect": ("n", "alpha", "power"),
    "significance_level": ("effect", "n", "power"),
    "detectable_margin": ("effect", "n", "alpha", "power"),
}


@dataclass(frozen=True)
class Prepared:
    """Flattened, broadcast inputs of one call and the reason per element.

    ``effect`` and ``margin`` are absolute (already multiplied by the baseline when the
    call was relative); arrays not needed by the solve hold nan.  ``ok`` marks the elements
    that can be computed (those whose reason is ``""``).  ``unit``, when not None, gives per
    element the power of two that a mean row's baseline, sd, effect and margin were divided
    by (see :func:`_unit_exponents`); an absolute effect solved for is multiplied back.
    """

    solve: str
    kind: str
    method: str
    alternative: str
    shape: tuple
    scalar: bool
    baseline: np.ndarray
    effect: np.ndarray
    n: np.ndarray
    sd: np.ndarray | None
    alpha: np.ndarray
    power: np.ndarray
    ratio: np.ndarray
    margin: np.ndarray
    relative: np.ndarray
    reasons: np.ndarray
    ok: np.ndarray
    unit: np.ndarray | None = None


_SD_REQUIRED = {
    "mean": "the per-unit standard deviation",
    "ratio": "its delta-method sd per unit, from fourfold.engine.ratio.unit_sd",
    "quantile": "the sample quantile's sd per unit, from fourfold.engine.quantile.unit_sd",
}

_ORDER = ("baseline", "effect", "n", "alpha", "power", "ratio", "margin", "sd")
"""The order in which the inputs are converted (the first one that is not a number raises)."""

_FINITE = {name: f"{name} must be a finite number" for name in _ORDER}


def _as_float(name, value):
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number or an array of numbers") from None


def _first_reasons(size, flags, messages):
    """The message of the first true flag per element (``""`` where none is) and the ok mask.

    ``flags`` is a boolean array with one row per check, in the order of ``messages``.
    """
    hit = flags.any(axis=0)
    if not hit.any():
        return np.full(size, "", dtype=object), ~hit
    code = np.where(hit, flags.argmax(axis=0) + 1, 0)
    return np.array(["", *messages], dtype=object)[code], ~hit


def prepare(
    solve,
    kind,
    baseline,
    *,
    effect=None,
    n=None,
    sd=None,
    alpha=0.05,
    power=0.8,
    alternative="two-sided",
    ratio=1.0,
    relative=False,
    margin=0.0,
    method=None,
):
    """Broadcast and check the inputs of ``solve``; see the module docstring.

    Raises
    ------
    ValueError
        For a name that is not allowed (kind, method, alternative, solve) or an input the
        solve needs that is missing; these are never per-element.
    """
    if solve not in catalog.SOLVES:
        raise ValueError(f"solve must be one of {catalog.quoted(catalog.SOLVES)}, not {solve!r}")
    method, alternative = catalog.resolve(kind, method, alternative)
    needs = _NEEDS[solve]
    given = {"effect": effect, "n": n, "alpha": alpha, "power": power}
    for name in needs:
        if given[name] is None:
            raise ValueError(f"{name} is required to solve for {solve.replace('_', ' ')}")
    if kind in _SD_REQUIRED and sd is None:
        raise ValueError(f"sd is required for a {kind} ({_SD_REQUIRED[kind]})")
    has_sd = sd is not None and kind != "proportion"
    raw = dict(given, baseline=baseline, ratio=ratio, margin=margin, sd=sd)
    converted = {name: _as_float(name, raw[name]) for name in _ORDER
                 if name in needs or name in ("baseline", "ratio", "margin")
                 or (name == "sd" and has_sd)}
    # The checked inputs in the order of their "must be a finite number" checks.
    used = ("baseline", "ratio", "margin", *needs, *(("sd",) if has_sd else ()))
    rel = np.asarray(relative, dtype=bool)
    scalar = rel.ndim == 0 and all(a.ndim == 0 for a in converted.values())
    shape = () if scalar else np.broadcast_shapes(rel.shape,
                                                  *(a.shape for a in converted.values()))
    size = math.prod(shape)
    block = np.empty((len(used), size))
    rows = block.reshape((len(used), *shape))
    for row, name in enumerate(used):
        rows[row] = converted[name]
    flat = dict(zip(used, block, strict=True))
    rel = np.full(size, bool(rel)) if rel.ndim == 0 else np.broadcast_to(rel, shape).ravel()
    nothing = np.full(size, np.nan)

    with np.errstate(all="ignore"):
        unit = _unit_exponents(kind, flat, rel) if kind == "mean" else None
        if unit is not None:
            flat = _in_units(flat, rel, unit)
        b = flat["baseline"]
        scale = np.where(rel, b, 1.0)
        effect_abs = flat["effect"] * scale if "effect" in needs else nothing
        margin_abs = flat["margin"] * scale
        flags, messages = _checks(solve, kind, method, alternative, needs, flat, rel,
                                  effect_abs, margin_abs, ~np.isfinite(block), used)
        reasons, ok = _first_reasons(size, flags, messages)
    return Prepared(
        solve=solve,
        kind=kind,
        method=method,
        alternative=alternative,
        shape=shape,
        scalar=scalar,
        baseline=b,
        effect=effect_abs,
        n=flat.get("n", nothing),
        sd=flat.get("sd"),
        alpha=flat.get("alpha", nothing),
        power=flat.get("power", nothing),
        ratio=flat["ratio"],
        margin=margin_abs,
        relative=rel,
        reasons=reasons,
        ok=ok,
        unit=unit,
    )


_SAFE_EXPONENT = 100
"""A mean row whose numbers all lie within 2^±100 of 1 is solved as it is."""


def _unit_exponents(kind, flat, rel):
    """Per element, the power of two a mean row's numbers are measured in (None: all 0).

    A mean row is scale-free: baseline, sd and absolute effect and margin can all be divided
    by one number without changing units, power or α. Rows whose numbers reach beyond 2^±100
    (e.g. a baseline and sd of 1e308, whose products overflow on the way) are solved in units
    of the power of two nearest their largest number; the division is exact, and rows within
    the range are not touched.
    """
    sizes = [np.abs(flat["baseline"])]
    if "sd" in flat:
        sizes.append(np.abs(flat["sd"]))
    for name in ("effect", "margin"):
        if name in flat:
            sizes.append(np.where(rel, 0.0, np.abs(flat[name])))
    top = np.max(np.nan_to_num(np.array(sizes), nan=0.0, posinf=0.0), axis=0)
    exponent = np.frexp(top)[1]
    far = (top > 0) & (np.abs(exponent) > _SAFE_EXPONENT)
    return np.where(far, exponent, 0) if far.any() else None


def _in_units(flat, rel, unit):
    """``flat`` with baseline, sd and absolute effect and margin divided by 2^unit."""
    scaled = dict(flat, baseline=np.ldexp(flat["baseline"], -unit))
    if "sd" in flat:
        scaled["sd"] = np.ldexp(flat["sd"], -unit)
    for name in ("effect", "margin"):
        if name in flat:
            scaled[name] = np.where(rel, flat[name], np.ldexp(flat[name], -unit))
    return scaled


def _checks(solve, kind, method, alternative, needs, flat, rel, eff, mar, not_finite, used):
    """Every check in order: a boolean array (one row per check) and the messages."""
    checks = []
    if "alpha" in needs:
        a = flat["alpha"]
        checks.append((~((a > 0) & (a < 1)), "alpha must be between 0 and 1 (exclusive)"))
    if "power" in needs:
        p = flat["power"]
        checks.append((~((p > 0) & (p < 1)), "power must be between 0 and 1 (exclusive)"))
    checks.append((~(flat["ratio"] > 0), "ratio must be greater than 0"))
    if "n" in needs:
        checks.append((~(flat["n"] > 0), "n must be greater than 0"))
        if method == "t":
            n, r = flat["n"], flat["ratio"]
            many = (n > 1) & (n * r > 1) & (n * (1 + r) >= 3)
            message = "n must give more than 1 unit in each arm and 3 in all for the t method"
            checks.append((~many, message))
    b = flat["baseline"]
    checks.append((rel & (b == 0), "baseline must not be 0 for a relative effect or margin"))
    if "effect" in needs:
        checks.append((~np.isfinite(eff), "effect × baseline must be a finite number"))
    checks.append((~np.isfinite(mar), "margin × baseline must be a finite number"))
    checks.extend(
        KIND_MODULES[kind].domain(b, eff if "effect" in needs else None, mar, flat.get("sd"))
    )
    if solve in ("sample_size", "significance_level"):
        if alternative == "greater":
            message = "effect must be greater than the margin for a 'greater' test"
            checks.append((~(eff > mar), message))
        elif alternative == "less":
            checks.append((~(eff < mar), "effect must be less than the margin for a 'less' test"))
        else:
            checks.append((eff == mar, "effect must differ from the margin for a two-sided test"))
    if solve in ("sample_size", "detectable_effect", "detectable_margin"):
        checks.append((~(flat["power"] > flat["alpha"]), "power must be greater than alpha"))
    if solve == "detectable_margin" and alternative == "two-sided":
        checks.append((np.ones_like(b, dtype=bool), ONE_SIDED))
    shape = (b.size,)
    flags = np.concatenate((not_finite, np.array(
        [bad if bad.shape == shape else np.broadcast_to(bad, shape) for bad, _ in checks])))
    return flags, [_FINITE[name] for name in used] + [message for _, message in checks]
