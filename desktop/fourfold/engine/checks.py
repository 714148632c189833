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

from dataclasses import dataclass

import numpy as np

from . import catalog, mean, proportion, rate

KIND_MODULES = {"mean": mean, "proportion": proportion, "rate": rate}

_NEEDS = {
    "sample_size": ("effect", "alpha", "power"),
    "power": ("effect", "n", "alpha"),
    "detectable_effect": ("n", "alpha", "power"),
    "significance_level": ("effect", "n", "power"),
}


@dataclass(frozen=True)
class Prepared:
    """Flattened, broadcast inputs of one call and the reason per element.

    ``effect`` and ``margin`` are absolute (already multiplied by the baseline when the
    call was relative); arrays not needed by the solve hold nan.
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

    @property
    def ok(self):
        """Boolean mask of the elements that can be computed."""
        return self.reasons == ""


def _as_float(name, value):
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number or an array of numbers") from None


def _first_reasons(size, checks):
    code = np.zeros(size, dtype=np.intp)
    for number, (bad, _) in enumerate(checks, start=1):
        code[np.broadcast_to(bad, (size,)) & (code == 0)] = number
    messages = np.array(["", *(message for _, message in checks)], dtype=object)
    return messages[code]


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
    given = {"effect": effect, "n": n, "alpha": alpha, "power": power}
    for name in _NEEDS[solve]:
        if given[name] is None:
            raise ValueError(f"{name} is required to solve for {solve.replace('_', ' ')}")
    if kind == "mean" and sd is None:
        raise ValueError("sd is required for a mean (the per-unit standard deviation)")
    if kind == "proportion":
        sd = None
    needs = _NEEDS[solve]
    raw = {
        "baseline": baseline,
        "effect": effect if "effect" in needs else np.nan,
        "n": n if "n" in needs else np.nan,
        "alpha": alpha if "alpha" in needs else np.nan,
        "power": power if "power" in needs else np.nan,
        "ratio": ratio,
        "margin": margin,
    }
    if sd is not None:
        raw["sd"] = sd
    arrays = {name: _as_float(name, value) for name, value in raw.items()}
    rel = np.asarray(relative, dtype=bool)
    scalar = all(a.ndim == 0 for a in arrays.values()) and rel.ndim == 0
    shape = np.broadcast_shapes(*(a.shape for a in arrays.values()), rel.shape)
    flat = {k: np.broadcast_to(a, shape).ravel().astype(float) for k, a in arrays.items()}
    rel = np.broadcast_to(rel, shape).ravel()

    with np.errstate(all="ignore"):
        reasons = _check(solve, kind, method, alternative, needs, flat, rel, sd is not None)
        b = flat["baseline"]
        scale = np.where(rel, b, 1.0)
        effect_abs = flat["effect"] * scale
        margin_abs = flat["margin"] * scale
    return Prepared(
        solve=solve,
        kind=kind,
        method=method,
        alternative=alternative,
        shape=shape,
        scalar=scalar,
        baseline=b,
        effect=effect_abs,
        n=flat["n"],
        sd=flat.get("sd"),
        alpha=flat["alpha"],
        power=flat["power"],
        ratio=flat["ratio"],
        margin=margin_abs,
        relative=rel,
        reasons=reasons,
    )


def _check(solve, kind, method, alternative, needs, flat, rel, has_sd):
    checks = []
    used = ["baseline", "ratio", "margin", *needs] + (["sd"] if has_sd else [])
    for name in used:
        checks.append((~np.isfinite(flat[name]), f"{name} must be a finite number"))
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
    scale = np.where(rel, b, 1.0)
    eff = flat["effect"] * scale
    mar = flat["margin"] * scale
    if "effect" in needs:
        checks.append((~np.isfinite(eff), "effect × baseline must be a finite number"))
    checks.append((~np.isfinite(mar), "margin × baseline must be a finite number"))
    sdv = flat.get("sd")
    checks.extend(
        KIND_MODULES[kind].domain(b, eff if "effect" in needs else None, mar, sdv)
    )
    if solve in ("sample_size", "significance_level"):
        if alternative == "greater":
            message = "effect must be greater than the margin for a 'greater' test"
            checks.append((~(eff > mar), message))
        elif alternative == "less":
            checks.append((~(eff < mar), "effect must be less than the margin for a 'less' test"))
        else:
            checks.append((eff == mar, "effect must differ from the margin for a two-sided test"))
    if solve in ("sample_size", "detectable_effect"):
        checks.append((~(flat["power"] > flat["alpha"]), "power must be greater than alpha"))

    return _first_reasons(flat["baseline"].size, checks)
