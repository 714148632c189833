"""Properties every kind and method must have (hypothesis, modest example counts).

n falls as |effect| grows and rises with power and as α shrinks (common practice, no
source); each solver inverts the others: power(sample_size) = target,
detectable_effect(sample_size(e)) = e, significance_level(power(α)) = α.
"""

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fourfold import engine

PAIRS = [(k, m) for k in engine.KINDS for m in engine.METHODS[k]]
SETTINGS = settings(max_examples=25, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


@st.composite
def designs(draw):
    kind, method = draw(st.sampled_from(PAIRS))
    alternative = draw(st.sampled_from(engine.ALTERNATIVES))
    fraction = draw(st.floats(0.02, 0.6))
    if kind == "proportion":
        baseline = draw(st.floats(0.01, 0.95))
        room = min(baseline, 1 - baseline)
        effect = fraction * room
        sd = None
    elif kind == "rate":
        baseline = draw(st.floats(0.005, 5.0))
        effect = fraction * baseline
        sd = draw(st.one_of(st.none(), st.floats(0.5, 3.0).map(lambda k: k * baseline**0.5)))
    else:
        baseline = draw(st.floats(-10.0, 10.0))
        sd = draw(st.floats(0.1, 20.0))
        effect = fraction * sd
    if alternative == "less" or (alternative == "two-sided" and draw(st.booleans())):
        effect = -effect
    return dict(
        kind=kind, method=method, alternative=alternative, baseline=baseline, effect=effect,
        sd=sd, alpha=draw(st.floats(0.005, 0.2)), power=draw(st.floats(0.55, 0.97)),
        ratio=draw(st.floats(0.3, 3.0)),
    )


def _common(d):
    return dict(sd=d["sd"], alternative=d["alternative"], ratio=d["ratio"], method=d["method"])


def _n(d, **change):
    d = {**d, **change}
    return engine.sample_size(d["kind"], d["baseline"], d["effect"], alpha=d["alpha"],
                              power=d["power"], **_common(d))


@SETTINGS
@given(designs())
def test_sample_size_round_trips_through_power_effect_and_alpha(d):
    n = _n(d)
    assert np.isfinite(n) and n > 0
    achieved = engine.power(d["kind"], d["baseline"], d["effect"], n, alpha=d["alpha"],
                            **_common(d))
    assert abs(achieved - d["power"]) < 1e-9
    effect = engine.detectable_effect(d["kind"], d["baseline"], n, alpha=d["alpha"],
                                      power=d["power"], **_common(d))
    # two-sided returns the positive effect; the positive twin of a negative effect differs
    # for kinds whose variance depends on the effect, so compare through the power there.
    if d["alternative"] != "two-sided" or d["effect"] > 0:
        assert abs(effect - d["effect"]) <= 1e-7 * abs(d["effect"])
    else:
        again = engine.power(d["kind"], d["baseline"], effect, n, alpha=d["alpha"],
                             **_common(d))
        assert abs(again - d["power"]) < 1e-9 and effect > 0
    alpha = engine.significance_level(d["kind"], d["baseline"], d["effect"], n,
                                      power=d["power"], **_common(d))
    assert abs(alpha - d["alpha"]) <= 1e-6 * d["alpha"]


@SETTINGS
@given(designs(), st.floats(1.05, 1.8))
def test_sample_size_falls_as_the_effect_grows(d, factor):
    bigger = d["effect"] * factor
    if d["kind"] == "proportion" and not 0 < d["baseline"] + bigger < 1:
        return
    if d["kind"] == "rate" and d["baseline"] + bigger <= 0:
        return
    assert _n(d, effect=bigger) < _n(d)


@SETTINGS
@given(designs(), st.floats(0.005, 0.02), st.floats(0.5, 0.8))
def test_sample_size_rises_with_power_and_as_alpha_shrinks(d, more_power, alpha_factor):
    n = _n(d)
    assert _n(d, power=min(d["power"] + more_power, 0.99)) > n
    assert _n(d, alpha=d["alpha"] * alpha_factor) > n


@SETTINGS
@given(designs(), st.floats(0.1, 0.9))
def test_non_inferiority_margin_lowers_the_size(d, share):
    # A negative margin on a "greater" test moves H0 away from the effect: fewer units.
    if d["alternative"] != "greater":
        return
    margin = -share * d["effect"]
    if d["kind"] == "proportion" and d["baseline"] + margin <= 0:
        return
    kw = dict(alpha=d["alpha"], power=d["power"], **_common(d))
    plain = engine.sample_size(d["kind"], d["baseline"], d["effect"], **kw)
    with_margin = engine.sample_size(d["kind"], d["baseline"], d["effect"], margin=margin, **kw)
    assert with_margin < plain
    achieved = engine.power(d["kind"], d["baseline"], d["effect"], with_margin, margin=margin,
                            alpha=d["alpha"], **_common(d))
    assert abs(achieved - d["power"]) < 1e-9


@SETTINGS
@given(designs())
def test_relative_inputs_equal_absolute_ones(d):
    if abs(d["baseline"]) < 1e-3:
        return
    kw = dict(alpha=d["alpha"], power=d["power"], **_common(d))
    absolute = engine.sample_size(d["kind"], d["baseline"], d["effect"], **kw)
    relative = engine.sample_size(d["kind"], d["baseline"], d["effect"] / d["baseline"],
                                  relative=True, **kw)
    assert abs(relative - absolute) <= 1e-9 * absolute
    mde = engine.detectable_effect(d["kind"], d["baseline"], absolute, relative=True, **kw)
    mde_abs = engine.detectable_effect(d["kind"], d["baseline"], absolute, **kw)
    assert abs(mde * d["baseline"] - mde_abs) <= 1e-9 * abs(mde_abs)


def test_vectorised_call_equals_element_by_element():
    rng = np.random.default_rng(11)
    baseline = rng.uniform(0.02, 0.5, 30)
    effect = baseline * rng.uniform(0.03, 0.3, 30)
    ratio = rng.uniform(0.5, 2.0, 30)
    together = engine.sample_size("proportion", baseline, effect, ratio=ratio)
    one_by_one = [float(engine.sample_size("proportion", b, e, ratio=r))
                  for b, e, r in zip(baseline, effect, ratio, strict=True)]
    np.testing.assert_allclose(together, one_by_one, rtol=1e-12)


FINITE = st.floats(allow_nan=False, allow_infinity=False, width=64)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(PAIRS), st.sampled_from(engine.ALTERNATIVES),
       st.lists(st.tuples(*[FINITE] * 9, st.booleans()), min_size=2, max_size=6))
def test_any_finite_array_input_gives_numbers_or_reasons_never_an_exception(pair, alternative,
                                                                          rows):
    kind, method = pair
    b, e, n, sd, a, pw, r, m, _, rel = (np.array(c) for c in zip(*rows, strict=True))
    kw = dict(sd=sd, alternative=alternative, ratio=r, margin=m, relative=rel, method=method)
    calls = {
        "sample_size": lambda: engine.sample_size(kind, b, e, alpha=a, power=pw, **kw),
        "power": lambda: engine.power(kind, b, e, n, alpha=a, **kw),
        "detectable_effect": lambda: engine.detectable_effect(kind, b, n, alpha=a, power=pw,
                                                              **kw),
        "significance_level": lambda: engine.significance_level(kind, b, e, n, power=pw, **kw),
    }
    for solve, call in calls.items():
        values = call()
        reasons = engine.problems(solve, kind, b, effect=e, n=n, alpha=a, power=pw, **kw)
        assert np.array_equal(np.isnan(values), reasons != "")
        assert np.all(np.isfinite(values) | np.isnan(values))
