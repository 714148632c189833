"""The engine's shortcuts against a straightforward evaluation of the same quantity.

* Proportions whose margin is 0 skip the Farrington–Manning cubic (the pooled proportion is
  the restricted estimate there): checked against scipy's bounded maximum of the binomial
  likelihood under H0 (Farrington & Manning 1990, *Statistics in Medicine* 9:1447–1454;
  scipy 1.17), for arrays that mix zero and non-zero margins.
* A root search whose start already meets the tolerance stops there: the sample size it
  returns is the one the power function was evaluated at, and it equals scipy's ``brentq``
  on that power function (scipy 1.17).
* The search goes on for the other elements as a subset: arrays that mix both equal
  element-by-element calls.
"""

import numpy as np
import pytest
import scipy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq, minimize_scalar

from fourfold import engine
from fourfold.engine import roots, solve
from fourfold.engine.proportion import restricted

SCIPY_VERSION = scipy.__version__
SETTINGS = settings(max_examples=20, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


def _likelihood_maximum(pc, pt, margin, ratio):
    """The control proportion under H0 that maximises the expected binomial likelihood."""
    def nll(q):
        qt = q + margin
        return -(pc * np.log(q) + (1 - pc) * np.log1p(-q)
                 + ratio * (pt * np.log(qt) + (1 - pt) * np.log1p(-qt)))

    lo, hi = max(1e-12, -margin + 1e-12), min(1 - 1e-12, 1 - margin - 1e-12)
    return minimize_scalar(nll, bounds=(lo, hi), method="bounded",
                           options={"xatol": 1e-12}).x


@st.composite
def restricted_rows(draw):
    pc = draw(st.floats(0.01, 0.9))
    pt = draw(st.floats(0.01, 0.9))
    ratio = draw(st.sampled_from([0.5, 1.0, 2.0, 3.0]))
    zero = draw(st.booleans())
    share = draw(st.floats(-0.9, 0.9))
    margin = 0.0 if zero else share * (1 - pc if share > 0 else pc)
    return pc, pt, margin, ratio


@SETTINGS
@given(st.lists(restricted_rows(), min_size=1, max_size=6))
def test_restricted_estimates_with_and_without_margin_maximise_the_likelihood(rows):
    pc, pt, margin, ratio = (np.array(column) for column in zip(*rows, strict=True))
    c0, t0 = restricted(pc, pt, margin, ratio)
    for k in range(pc.size):
        best = _likelihood_maximum(pc[k], pt[k], margin[k], ratio[k])
        assert c0[k] == pytest.approx(best, abs=1e-7)
        assert t0[k] - c0[k] == pytest.approx(margin[k], abs=1e-12)
        alone = restricted(pc[k], pt[k], margin[k], ratio[k])
        assert (float(alone[0]), float(alone[1])) == (c0[k], t0[k])


Z_PAIRS = [(k, m) for k in engine.KINDS for m in engine.METHODS[k] if m != "t"]


@st.composite
def designs(draw, pairs=Z_PAIRS):
    kind, method = draw(st.sampled_from(pairs))
    alternative = draw(st.sampled_from(engine.ALTERNATIVES))
    fraction = draw(st.floats(0.01, 0.5))
    sd = None
    if kind == "proportion":
        baseline = draw(st.floats(0.01, 0.9))
        effect = fraction * min(baseline, 1 - baseline)
    elif kind == "rate":
        baseline = draw(st.floats(0.005, 5.0))
        effect = fraction * baseline
    else:
        baseline, sd = draw(st.floats(-10.0, 10.0)), draw(st.floats(0.1, 20.0))
        effect = fraction * sd
    if alternative == "less" or (alternative == "two-sided" and draw(st.booleans())):
        effect = -effect
    margin = 0.0
    if alternative != "two-sided" and draw(st.booleans()):
        margin = -0.5 * effect  # non-inferiority (greater) or non-superiority (less)
    return dict(kind=kind, method=method, alternative=alternative, baseline=baseline,
                effect=effect, sd=sd, margin=margin, alpha=draw(st.floats(0.005, 0.2)),
                power=draw(st.floats(0.55, 0.97)), ratio=draw(st.sampled_from([0.5, 1.0, 2.0])))


def _power(d, n):
    return engine.power(d["kind"], d["baseline"], d["effect"], n, sd=d["sd"], alpha=d["alpha"],
                        alternative=d["alternative"], ratio=d["ratio"], margin=d["margin"],
                        method=d["method"])


def _sample_size(d):
    return engine.sample_size(d["kind"], d["baseline"], d["effect"], sd=d["sd"],
                              alpha=d["alpha"], power=d["power"], alternative=d["alternative"],
                              ratio=d["ratio"], margin=d["margin"], method=d["method"])


@SETTINGS
@given(designs(pairs=[*Z_PAIRS, ("mean", "t")]))
def test_the_returned_sample_size_is_one_the_power_function_was_evaluated_at(d):
    seen = []
    original = solve.power_of

    def recording(*args):
        power = original(*args)
        seen.extend(zip(np.atleast_1d(args[4]).tolist(), np.atleast_1d(power).tolist(),
                        strict=True))
        return power

    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(solve, "power_of", recording)
        n = float(_sample_size(d))
    ftol = 1e-10 if d["method"] == "t" else 1e-13
    assert any(at == n and abs(power - d["power"]) <= ftol for at, power in seen)


@SETTINGS
@given(designs())
def test_z_sample_size_equals_a_full_root_search_on_the_power(d):
    n = float(_sample_size(d))
    assert abs(float(_power(d, n)) - d["power"]) <= 1e-13
    reference = np.exp(brentq(lambda y: float(_power(d, np.exp(y))) - d["power"],
                              np.log(n) - 2.0, np.log(n) + 2.0, xtol=1e-15, rtol=1e-15))
    assert n == pytest.approx(reference, rel=1e-10)


def test_an_array_mixing_starts_at_the_root_and_searched_elements_equals_single_calls():
    rng = np.random.default_rng(3)
    size = 40
    baseline = rng.uniform(0.02, 0.5, size)
    effect = baseline * rng.uniform(0.02, 0.3, size)
    # an effect so small that the search runs into the 1e18 limit, and t rows at tiny n
    effect[[3, 17]] = 1e-12
    for method in ("pooled", "pooled-cc", "arcsine"):
        together = engine.sample_size("proportion", baseline, effect, method=method)
        alone = [engine.values_and_reasons("sample_size", "proportion", b, effect=e,
                                           method=method)[0].item()
                 for b, e in zip(baseline, effect, strict=True)]
        np.testing.assert_array_equal(together, alone)
        assert np.isnan(together[[3, 17]]).all()
        assert np.isfinite(np.delete(together, [3, 17])).all()
    sd = rng.uniform(0.5, 2.0, size)
    big = rng.uniform(0.3, 3.0, size)
    together = engine.sample_size("mean", 0.0, big, sd=sd, method="t")
    alone = [float(engine.sample_size("mean", 0.0, e, sd=s, method="t"))
             for e, s in zip(big, sd, strict=True)]
    np.testing.assert_array_equal(together, alone)


def test_find_root_stops_only_at_starts_inside_the_limits_that_meet_ftol():
    target = np.array([2.0, 3.0, 5.0, 7.0])
    calls = []

    def f(y, idx):
        calls.append(idx.tolist())
        return np.exp(y) - target[idx]

    start = np.log(target)
    start[1] += 0.5  # searched
    y_min = np.full(4, -5.0)
    y_max = np.full(4, 5.0)
    y_min[2] = start[2]  # at the lower limit: not taken as the root without a search
    y, status = roots.find_root(f, start, 0.1, y_min, y_max)
    np.testing.assert_allclose(np.exp(y), target, rtol=1e-12)
    assert status.tolist() == [roots.OK] * 4
    assert calls[0] == [0, 1, 2, 3]
    assert all(0 not in idx and 3 not in idx for idx in calls[1:])
    assert any(1 in idx for idx in calls[1:]) and any(2 in idx for idx in calls[1:])
    # f > 0 already at the lower limit: BELOW, as a full search reports it
    y, status = roots.find_root(lambda y, idx: y + 1e-14, np.zeros(1), 0.1, np.zeros(1),
                                np.ones(1))
    assert status.tolist() == [roots.BELOW] and np.isnan(y).all()
