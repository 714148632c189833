"""The arms of a simulated experiment, from a row's kind, baseline and sd, or from history.

:func:`arms` gives the control arm, a function that gives the treatment arm for a true
difference, and the name of the model the units are drawn from.
"""

from __future__ import annotations

import numpy as np

from fourfold.simulation.arguments import finite
from fourfold.simulation.kind_arms import quantile_arms, ratio_arms
from fourfold.simulation.models import BinomialArm, CountArm, NormalArm
from fourfold.simulation.resample import DIRECT_MAX, EmpiricalArm, bin_history


def history_values(history, kind):
    if kind == "proportion":
        raise ValueError(
            "history applies to mean, rate and quantile metrics; a proportion is fully "
            "described by its baseline"
        )

    values = np.asarray(history, dtype=float).ravel()
    if values.size < 2:
        raise ValueError("history must hold at least 2 values")
    if not np.all(np.isfinite(values)):
        raise ValueError("history must hold finite numbers only (no nan or inf)")
    if np.ptp(values) == 0:
        raise ValueError("history must not be constant (its variance is zero)")
    return values


def arms(kind, baseline, sd, history, history_effect, n_largest, kind_inputs=None):
    """Control arm and a function giving the treatment arm for a true difference.

    Ratio and quantile rows take their own inputs from ``kind_inputs`` (see
    :mod:`fourfold.simulation.kind_arms`).
    """
    if kind == "ratio":
        if history is not None:
            raise ValueError(
                "history applies to mean, rate and quantile metrics; a ratio row is simulated "
                "from its numerator's and denominator's means, sds and correlation"
            )
        return ratio_arms(baseline, kind_inputs)
    if kind == "quantile":
        if history_effect != "shift":
            raise ValueError("a quantile row's treatment shifts the values: history_effect "
                             "must be 'shift'")
        values = None if history is None else history_values(history, kind)
        return quantile_arms(baseline, kind_inputs, values)
    if history is not None:
        values = history_values(history, kind)
        bins = bin_history(values)
        centre = float(values.mean())
        control = EmpiricalArm(values, bins)
        if history_effect == "lift":
            if centre == 0:
                raise ValueError("history_effect 'lift' needs a history whose mean is not 0")

            def treatment(diff):
                return EmpiricalArm(values, bins, scale=1.0 + diff / centre)
        else:

            def treatment(diff):
                return EmpiricalArm(values, bins, shift=diff)

        model = "bootstrap" if n_largest <= DIRECT_MAX else "bootstrap (binned)"
        return control, treatment, model
    if kind == "mean":
        if sd is None:
            raise ValueError("sd is required for a mean metric (per-unit standard deviation)")
        sd = finite("sd", sd)
        if sd <= 0:
            raise ValueError(f"sd must be positive, got {sd!r}")
        return NormalArm(baseline, sd), lambda diff: NormalArm(baseline + diff, sd), "normal"
    if kind == "proportion":
        if not 0.0 < baseline < 1.0:
            raise ValueError(f"baseline must be a proportion between 0 and 1, got {baseline!r}")

        def treatment(diff):
            p = baseline + diff
            if not 0.0 <= p <= 1.0:
                raise ValueError(
                    f"baseline + effect (or margin) gives a treatment proportion of {p:.6g}, "
                    "outside [0, 1]"
                )
            return BinomialArm(p)

        return BinomialArm(baseline), treatment, "binomial"
    if baseline <= 0:
        raise ValueError(f"baseline must be a positive mean count per unit, got {baseline!r}")
    phi = 1.0
    if sd is not None:
        sd = finite("sd", sd)
        if sd <= 0:
            raise ValueError(f"sd must be positive, got {sd!r}")
        phi = sd * sd / baseline

    def treatment(diff):
        lam = baseline + diff
        if lam < 0:
            raise ValueError(
                f"baseline + effect (or margin) gives a negative rate ({lam:.6g} per unit)"
            )
        return CountArm(lam, phi)

    model = "poisson" if phi == 1.0 else ("negative binomial" if phi > 1 else "normal counts")
    return CountArm(baseline, phi), treatment, model
