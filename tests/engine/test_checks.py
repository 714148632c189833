"""Bad input: scalar calls raise ValueError naming the argument; arrays give nan + a reason.

The messages are the engine's own; the rules behind them are facts of the trade (a
proportion lies in (0, 1), α and power in (0, 1), sd > 0): common practice, no source.
"""

import numpy as np
import pytest

from fourfold import engine

SOLVES = ("sample_size", "power", "detectable_effect", "significance_level")


def _call(solve, kind, baseline, **kw):
    fn = getattr(engine, solve)
    if solve == "sample_size":
        kw.pop("n", None)
        return fn(kind, baseline, kw.pop("effect"), **kw)
    if solve == "power":
        kw.pop("power", None)
        return fn(kind, baseline, kw.pop("effect"), kw.pop("n"), **kw)
    if solve == "detectable_effect":
        kw.pop("effect", None)
        return fn(kind, baseline, kw.pop("n"), **kw)
    kw.pop("alpha", None)
    return fn(kind, baseline, kw.pop("effect"), kw.pop("n"), **kw)


BAD = [
    # (kind, inputs, solves where it is wrong, words the message must contain)
    ("mean", dict(sd=0.0), SOLVES, "sd must be greater than 0"),
    ("mean", dict(sd=-1.0), SOLVES, "sd must be greater than 0"),
    ("proportion", dict(baseline=1.2), SOLVES,
     "baseline must be between 0 and 1 (exclusive) for a proportion"),
    ("proportion", dict(baseline=0.0), SOLVES, "baseline must be between 0 and 1"),
    ("proportion", dict(baseline=0.95, effect=0.1), ("sample_size", "power",
                                                     "significance_level"),
     "baseline + effect (the treatment proportion) must be between 0 and 1"),
    ("rate", dict(baseline=-0.1), SOLVES, "baseline must be greater than 0 for a rate"),
    ("rate", dict(baseline=0.02, effect=-0.03), ("sample_size", "power"),
     "baseline + effect (the treatment rate) must be greater than 0"),
    ("mean", dict(alpha=1.0), ("sample_size", "power", "detectable_effect"),
     "alpha must be between 0 and 1 (exclusive)"),
    ("mean", dict(alpha=0.0), ("sample_size", "power", "detectable_effect"),
     "alpha must be between 0 and 1 (exclusive)"),
    ("mean", dict(power=1.0), ("sample_size", "detectable_effect", "significance_level"),
     "power must be between 0 and 1 (exclusive)"),
    ("mean", dict(power=0.04), ("sample_size", "detectable_effect"),
     "power must be greater than alpha"),
    ("mean", dict(effect=0.0), ("sample_size", "significance_level"),
     "effect must differ from the margin"),
    ("mean", dict(effect=-0.1, alternative="greater"), ("sample_size", "significance_level"),
     "effect must be greater than the margin for a 'greater' test"),
    ("mean", dict(effect=0.1, alternative="less"), ("sample_size",),
     "effect must be less than the margin for a 'less' test"),
    ("mean", dict(effect=0.01, margin=0.02, alternative="greater"), ("sample_size",),
     "effect must be greater than the margin"),
    ("mean", dict(n=0.0), ("power", "detectable_effect", "significance_level"),
     "n must be greater than 0"),
    ("mean", dict(n=1.0, method="t"), ("power", "detectable_effect", "significance_level"),
     "for the t method"),
    ("mean", dict(ratio=0.0), SOLVES, "ratio must be greater than 0"),
    ("mean", dict(baseline=np.inf), SOLVES, "baseline must be a finite number"),
    ("mean", dict(effect=np.nan), ("sample_size", "power"), "effect must be a finite number"),
    ("mean", dict(baseline=0.0, relative=True), SOLVES, "baseline must not be 0"),
]

DEFAULTS = dict(alpha=0.05, power=0.8, ratio=1.0, margin=0.0)
GOOD = dict(mean=dict(DEFAULTS, baseline=2.35, effect=0.3, sd=14.8 / 10, n=500.0),
            proportion=dict(DEFAULTS, baseline=0.031, effect=0.004, n=50_000.0),
            rate=dict(DEFAULTS, baseline=0.018, effect=0.002, n=80_000.0))


@pytest.mark.parametrize("kind,bad,solves,words", BAD)
def test_scalar_bad_input_raises_and_array_gives_nan_with_the_same_reason(kind, bad, solves,
                                                                         words):
    for solve in solves:
        kw = dict(GOOD[kind], alpha=0.05, power=0.8)
        kw.update(bad)
        baseline = kw.pop("baseline")
        with pytest.raises(ValueError, match=None) as info:
            _call(solve, kind, baseline, **dict(kw))
        assert words in str(info.value), (solve, str(info.value))
        # The same input as one element of an array: nan there, the good element computed.
        good = dict(GOOD[kind])
        if bad.get("alternative") == "less":
            good["effect"] = -good["effect"]
        arrays = {k: np.array([good.get(k, v), v]) if np.ndim(v) == 0 and not isinstance(
            v, str) and k != "relative" else v for k, v in {**good, **bad}.items()}
        if "relative" in bad:
            arrays["relative"] = np.array([False, True])
        b = arrays.pop("baseline")
        values = _call(solve, kind, b, **dict(arrays))
        assert np.isnan(values[1]) and np.isfinite(values[0])
        reasons = engine.problems(solve, kind, b, **{k: v for k, v in arrays.items()})
        assert reasons[0] == "" and words in reasons[1]


@pytest.mark.parametrize("name,value,words", [
    ("kind", "share", "kind must be one of 'mean', 'proportion', 'rate', 'ratio', 'quantile'"),
    ("method", "welch", "method must be one of 'z', 't' for a mean"),
    ("alternative", "bigger", "alternative must be one of 'two-sided', 'greater', 'less'"),
])
def test_unknown_names_raise_even_for_arrays(name, value, words):
    kw = dict(kind="mean", method=None, alternative="two-sided")
    kw[name] = value
    with pytest.raises(ValueError) as info:
        engine.sample_size(kw["kind"], [1.0, 2.0], 0.1, sd=1.0, method=kw["method"],
                           alternative=kw["alternative"])
    assert words in str(info.value)
    reasons = engine.problems("sample_size", kw["kind"], [1.0, 2.0], effect=0.1, sd=1.0,
                              method=kw["method"], alternative=kw["alternative"])
    assert reasons.shape == (2,) and all(words in r for r in reasons)


def test_missing_sd_for_a_mean_and_missing_inputs():
    with pytest.raises(ValueError, match="sd is required for a mean"):
        engine.sample_size("mean", 1.0, 0.1)
    with pytest.raises(ValueError, match="n is required to solve for power"):
        engine.power("mean", 1.0, 0.1, None, sd=1.0)
    reasons = engine.problems("power", "mean", [1.0, 2.0], effect=0.1, sd=1.0)
    assert list(reasons) == ["n is required to solve for power"] * 2
    with pytest.raises(ValueError, match="solve must be one of"):
        engine.problems("duration", "mean", 1.0, effect=0.1, sd=1.0)


def test_unreachable_detectable_effect_is_nan_with_a_reason_not_a_bound():
    # 100 visitors per arm cannot detect any fall of a 3.1 % conversion with power 0.8:
    # even p_t = 0 falls short.  No bound of the search is passed off as the answer.
    value = engine.detectable_effect("proportion", [0.031, 0.031], [100.0, 30_000.0],
                                     alternative="less")
    assert np.isnan(value[0]) and -0.031 < value[1] < 0
    reasons = engine.problems("detectable_effect", "proportion", 0.031, n=100.0,
                              alternative="less")
    assert "no effect within the possible range" in reasons.item()
    with pytest.raises(ValueError, match="no effect within the possible range"):
        engine.detectable_effect("proportion", 0.031, 100.0, alternative="less")


def test_problems_broadcasts_and_is_empty_where_computable():
    reasons = engine.problems("sample_size", "proportion", np.array([[0.1], [0.5]]),
                              effect=np.array([0.01, 0.6, -0.2]))
    assert reasons.shape == (2, 3)
    assert reasons[0, 0] == reasons[1, 0] == reasons[0, 1] == reasons[1, 2] == ""
    assert "treatment proportion" in reasons[0, 2] and "treatment proportion" in reasons[1, 1]


def test_results_are_float_arrays_zero_d_for_scalars():
    n = engine.sample_size("mean", 1.0, 0.1, sd=1.0)
    assert isinstance(n, np.ndarray) and n.shape == () and n.dtype == float
    assert engine.power("rate", 0.5, 0.05, [100.0, 1000.0]).shape == (2,)


EXTREMES = np.array([0.0, 1e-300, -1e-300, 1e-12, 1e-8, 0.01, 0.05, 0.5, 0.8, 0.999999, 1.0,
                     2.0, 1e6, 1e300, -1e300, -1.0, -0.5])


@pytest.mark.filterwarnings("error")
def test_no_exception_or_warning_escapes_for_any_finite_input_on_the_array_path():
    rng = np.random.default_rng(7)
    size = 400

    def draw(low, high):
        plain = rng.uniform(low, high, size)
        return np.where(rng.random(size) < 0.3, rng.choice(EXTREMES, size), plain)

    kw = dict(alpha=draw(-0.2, 1.2), power=draw(-0.2, 1.2), ratio=draw(-0.5, 4.0),
              margin=draw(-0.1, 0.1), relative=rng.random(size) < 0.3)
    baseline = draw(-0.5, 1.5)
    effect = draw(-0.5, 0.5)
    n = np.where(rng.random(size) < 0.3, rng.choice(EXTREMES, size),
                 10 ** rng.uniform(-1, 7, size))
    for kind in engine.KINDS:
        for method in engine.METHODS[kind]:
            for alternative in engine.ALTERNATIVES:
                common = dict(kw, sd=draw(-1, 5), method=method, alternative=alternative)
                out = [
                    engine.sample_size(kind, baseline, effect, **common),
                    engine.power(kind, baseline, effect, n, **{k: v for k, v in common.items()
                                                              if k != "power"}),
                    engine.detectable_effect(kind, baseline, n, **common),
                    engine.significance_level(kind, baseline, effect, n,
                                              **{k: v for k, v in common.items()
                                                 if k != "alpha"}),
                ]
                for solve, values in zip(SOLVES, out, strict=True):
                    reasons = engine.problems(solve, kind, baseline, effect=effect, n=n,
                                              **common)
                    # nan exactly where a reason is given
                    assert np.array_equal(np.isnan(values), reasons != ""), (kind, method,
                                                                            solve)
