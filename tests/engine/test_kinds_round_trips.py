"""The ratio and quantile kinds through every solver, and back (common practice, no source).

Each grid point solves for the sample size, then puts it back: power at that n is the
target, the detectable effect at that n is the effect, the α at that n is α. Relative and
absolute effects, margins (non-inferiority on either side) and unequal splits included. The
closed form is checked against Lehr's formula 2σ²(z₁₋α/₂ + z₁₋β)²/δ² (Lehr 1992, Statistics in
Medicine 11:1099) at equal allocation, computed with scipy 1.17.
"""

import itertools

import numpy as np
import pytest
from scipy import stats

from fourfold import engine
from fourfold.engine import quantile, ratio

SDS = {
    "ratio": float(ratio.unit_sd(2.6, 0.034, 0.61, 0.19, 0.8)),
    "quantile": float(quantile.unit_sd(0.95, float(quantile.lognormal_density(
        0.95, 3.1, 0.5, 1.7)))),
}
BASELINES = {"ratio": 2.6, "quantile": 3.1}
CASES = [
    # (alternative, effect, margin, relative)
    ("two-sided", 0.04, 0.0, True),
    ("two-sided", -0.04, 0.0, True),
    ("greater", 0.0, -0.02, True),       # non-inferiority when higher is better
    ("less", 0.0, 0.05, False),          # must not get worse by more than 0.05 (absolute)
    ("less", -0.1, 0.0, False),
]


@pytest.mark.parametrize("kind", ["ratio", "quantile"])
@pytest.mark.parametrize("case,split", list(itertools.product(CASES, [1.0, 0.5, 2.0])))
def test_every_solver_round_trips(kind, case, split):
    alternative, effect, margin, relative = case
    baseline = BASELINES[kind]
    kw = dict(sd=SDS[kind], alternative=alternative, ratio=split, relative=relative,
              margin=margin)
    n = float(engine.sample_size(kind, baseline, effect, alpha=0.05, power=0.8, **kw))
    assert np.isfinite(n) and n > 0
    assert float(engine.power(kind, baseline, effect, n, alpha=0.05, **kw)) == pytest.approx(
        0.8, abs=1e-9)
    found = float(engine.detectable_effect(kind, baseline, n, alpha=0.05, power=0.8, **kw))
    if alternative != "two-sided" or effect > 0:
        assert found == pytest.approx(effect, abs=1e-7 * max(abs(effect), abs(margin)))
    else:  # two-sided reports the positive effect of the same size
        assert found == pytest.approx(-effect, rel=1e-7)
    alpha = float(engine.significance_level(kind, baseline, effect, n, power=0.8, **kw))
    assert alpha == pytest.approx(0.05, rel=1e-6)


@pytest.mark.parametrize("kind", ["ratio", "quantile"])
def test_sample_size_is_lehrs_formula_with_the_kinds_sd(kind):
    # One tail at α/2 (the engine's two-sided n also counts the far tail, a hair smaller).
    sd, baseline = SDS[kind], BASELINES[kind]
    delta = 0.03 * baseline
    lehr = 2 * sd**2 * (stats.norm.isf(0.025) + stats.norm.ppf(0.8)) ** 2 / delta**2
    n = engine.sample_size(kind, baseline, 0.03, sd=sd, relative=True, alpha=0.025,
                           alternative="greater")
    assert float(n) == pytest.approx(lehr, rel=1e-12)
