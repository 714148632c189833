"""Group sequential designs checked against published tables and scipy.

Reference values and their sources:
- Jennison, C. & Turnbull, B. W. (2000) *Group Sequential Methods with Applications to Clinical
  Trials*, ch. 2: Table 2.1 (Pocock C_P(K, α)), Table 2.2 (Pocock R_P(K, α, β)), Table 2.3
  (O'Brien–Fleming C_B(K, α)), Table 2.4 (O'Brien–Fleming R_B(K, α, β)), two-sided α = 0.05,
  equally spaced looks — values from memory, checked to 3 decimals.
- Lan–DeMets O'Brien–Fleming-type boundaries, K = 5 equal spacing, two-sided α = 0.05
  (4.877, 3.357, 2.680, 2.290, 2.031) — widely tabled, from memory.
- Lan–DeMets Pocock-type boundaries, K = 5, two-sided α = 0.05 (2.44, 2.43, 2.41, 2.40, 2.39),
  DeMets & Lan (1994) *Statistics in Medicine* 13:1341–1352 — from memory, 2 decimals.
- Armitage, McPherson & Rowe (1969) *JRSS A* 132:235–244: repeated tests at nominal 0.05 —
  from memory, 3 decimals.
- scipy 1.17 (``scipy.stats.norm``, ``scipy.stats.multivariate_normal``): exact two-look
  probabilities from the bivariate normal, independent of the recursion under test.
"""

import math
import subprocess
import sys

import numpy as np
import pytest
import scipy
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import multivariate_normal, norm

from fourfold.engine.sequential import SPENDING, boundaries, design, peeking_alpha, power_at

SCIPY_VERSION = scipy.__version__  # 1.17.1 when these checks were written

POCOCK_C = {2: 2.178, 3: 2.289, 4: 2.361, 5: 2.413}  # J&T 2000 Table 2.1, from memory
POCOCK_R = {  # J&T 2000 Table 2.2, from memory
    0.8: {2: 1.110, 3: 1.166, 4: 1.202, 5: 1.229},
    0.9: {2: 1.100, 3: 1.151, 4: 1.183, 5: 1.207},
}
OBF_C = {2: 1.977, 3: 2.004, 4: 2.024, 5: 2.040}  # J&T 2000 Table 2.3, from memory
OBF_R = {  # J&T 2000 Table 2.4, from memory
    0.8: {2: 1.008, 3: 1.017, 4: 1.024, 5: 1.028},
    0.9: {2: 1.007, 3: 1.016, 4: 1.022, 5: 1.026},
}


@pytest.mark.parametrize("looks", sorted(POCOCK_C))
def test_pocock_constants_and_inflation(looks):
    d = design(looks, spending="pocock")
    assert np.allclose(d.upper, d.upper[0])
    assert round(float(d.upper[0]), 3) == POCOCK_C[looks]
    for power, table in POCOCK_R.items():
        assert round(design(looks, spending="pocock", power=power).inflation, 3) == table[looks]


@pytest.mark.parametrize("looks", sorted(OBF_C))
def test_obrien_fleming_constants_and_inflation(looks):
    d = design(looks, spending="obrien-fleming")
    k = np.arange(1, looks + 1)
    assert np.allclose(d.upper, d.upper[-1] * np.sqrt(looks / k))
    assert round(float(d.upper[-1]), 3) == OBF_C[looks]
    for power, table in OBF_R.items():
        got = design(looks, spending="obrien-fleming", power=power).inflation
        assert round(got, 3) == table[looks]


def test_lan_demets_obrien_fleming_five_looks():
    d = design(5, spending="ld-obrien-fleming")
    assert np.round(d.upper, 3).tolist() == [4.877, 3.357, 2.680, 2.290, 2.031]


def test_lan_demets_pocock_five_looks():
    d = design(5, spending="ld-pocock")
    assert np.round(d.upper, 2).tolist() == [2.44, 2.43, 2.41, 2.40, 2.39]


@pytest.mark.parametrize(
    ("looks", "rate"), [(2, 0.083), (3, 0.107), (4, 0.126), (5, 0.142), (10, 0.193)]
)
def test_peeking_rates_of_armitage_mcpherson_rowe(looks, rate):
    assert round(peeking_alpha(looks), 3) == rate


def test_peeking_two_looks_matches_bivariate_normal():
    # P(|Z1| < c, |Z2| < c) with corr(Z1, Z2) = sqrt(1/2); scipy's bivariate normal.
    c = norm.ppf(0.99)
    rho = math.sqrt(0.5)
    inside = multivariate_normal([0, 0], [[1, rho], [rho, 1]]).cdf([c, c], lower_limit=[-c, -c])
    assert peeking_alpha(2, nominal=0.02) == pytest.approx(1 - inside, abs=1e-7)


def _two_look_probabilities(t1, c1, c2, drift):
    """Upper-crossing probability of a two-sided two-look design, from scipy's bivariate normal."""
    rho = math.sqrt(t1)
    mvn = multivariate_normal([drift * rho, drift], [[1, rho], [rho, 1]])
    first = norm.sf(c1 - drift * rho)
    second = mvn.cdf([c1, 40.0], lower_limit=[-c1, c2])
    return first + second


@pytest.mark.parametrize("spending", SPENDING)
@pytest.mark.parametrize("t1", [0.3, 0.5, 0.8])
def test_two_looks_against_bivariate_normal(spending, t1):
    d = design(2, spending=spending, timing=[t1, 1.0])
    c1, c2 = d.upper
    assert _two_look_probabilities(t1, c1, c2, 0.0) == pytest.approx(0.025, abs=1e-7)
    assert _two_look_probabilities(t1, c1, c2, d.drift) == pytest.approx(0.8, abs=1e-7)


@pytest.mark.parametrize("spending", SPENDING)
@pytest.mark.parametrize("futility", [None, "ld-obrien-fleming"])
def test_totals(spending, futility):
    d = design(4, spending=spending, futility=futility, alpha=0.1, power=0.85)
    assert d.alpha_spent[-1] == pytest.approx(0.1, abs=1e-9)
    assert np.all(np.diff(d.alpha_spent) > 0)
    assert d.stop_h0.sum() == pytest.approx(1.0, abs=1e-9)
    assert d.stop_h1.sum() == pytest.approx(1.0, abs=1e-9)
    assert d.efficacy_h1.sum() == pytest.approx(0.85, abs=1e-9)
    assert d.nominal_p == pytest.approx(2 * norm.sf(d.upper), rel=1e-12)
    assert d.inflation > 1.0
    assert d.expected_h1 < d.inflation


def test_spending_functions_are_followed():
    # Spending functions as defined by Lan & DeMets (1983) and Hwang, Shih & DeCani (1990).
    t = np.array([0.2, 0.45, 0.7, 1.0])
    side = 0.025
    expect = {
        "ld-obrien-fleming": 2 * 2 * norm.sf(norm.isf(side / 2) / np.sqrt(t)),
        "ld-pocock": 2 * side * np.log(1 + (math.e - 1) * t),
        "hsd": 2 * side * (1 - np.exp(2.5 * t)) / (1 - math.exp(2.5)),
    }
    for spending, cumulative in expect.items():
        gamma = -2.5 if spending == "hsd" else None
        d = design(4, spending=spending, timing=t, gamma=gamma)
        assert d.alpha_spent == pytest.approx(cumulative, abs=1e-9)
    linear = design(4, spending="hsd", gamma=0.0, timing=t)
    assert linear.alpha_spent == pytest.approx(0.05 * t, abs=1e-9)


@pytest.mark.parametrize("spending", SPENDING)
@pytest.mark.parametrize("alternative", ["two-sided", "greater"])
def test_one_look_is_the_fixed_design(spending, alternative):
    d = design(1, spending=spending, alternative=alternative, alpha=0.05, power=0.9)
    side = 0.025 if alternative == "two-sided" else 0.05
    assert d.upper[0] == pytest.approx(norm.isf(side), rel=1e-10)
    assert d.nominal_p[0] == pytest.approx(0.05, rel=1e-10)
    assert d.drift == pytest.approx(norm.isf(side) + norm.ppf(0.9), rel=1e-10)
    assert d.inflation == pytest.approx(1.0, abs=1e-10)
    assert d.expected_h0 == pytest.approx(1.0) and d.expected_h1 == pytest.approx(1.0)


@pytest.mark.parametrize("spending", SPENDING)
def test_inflation_grows_with_looks(spending):
    # Common practice, no source: more looks cost more maximum size for the same power.
    inflation = [design(k, spending=spending).inflation for k in (1, 2, 3, 5, 8, 12)]
    assert np.all(np.diff(inflation) > 0)


def test_two_sided_splits_alpha_evenly():
    two = design(4, alpha=0.05)
    for alternative in ("greater", "less"):
        one = design(4, alpha=0.025, alternative=alternative)
        assert one.upper == pytest.approx(two.upper, rel=1e-9)
        assert one.nominal_p == pytest.approx(two.nominal_p / 2, rel=1e-9)
        assert one.inflation == pytest.approx(two.inflation, rel=1e-7)


def test_futility_is_non_binding_and_meets_at_the_end():
    plain = design(5)
    d = design(5, futility="ld-pocock")
    assert d.upper == pytest.approx(plain.upper, rel=1e-12)
    assert d.lower[-1] == pytest.approx(d.upper[-1])
    assert np.all(d.lower[:-1] < d.upper[:-1])
    assert np.all(np.diff(d.lower) > 0)
    assert d.inflation > plain.inflation
    assert d.expected_h0 < plain.expected_h0
    assert plain.lower is None


def test_futility_boundary_spends_beta():
    # β-spending: P(stop for futility by look k | H1) = β · ln(1 + (e − 1) t_k) (Lan & DeMets
    # 1983 Pocock-type function) at every look before the last.
    t = np.array([0.25, 0.5, 0.75, 1.0])
    d = design(4, futility="ld-pocock", power=0.8, timing=t)
    futile = np.cumsum(d.stop_h1 - d.efficacy_h1)[:-1]
    assert futile == pytest.approx(0.2 * np.log(1 + (math.e - 1) * t[:-1]), abs=1e-9)


def test_two_look_futility_against_bivariate_normal():
    t1 = 0.5
    d = design(2, timing=[t1, 1.0], futility="ld-obrien-fleming", power=0.8)
    (c1, c2), (l1, _) = d.upper, d.lower
    rho = math.sqrt(t1)
    mvn = multivariate_normal([d.drift * rho, d.drift], [[1, rho], [rho, 1]])
    power = norm.sf(c1 - d.drift * rho) + mvn.cdf([c1, 40.0], lower_limit=[l1, c2])
    assert power == pytest.approx(0.8, abs=1e-7)


def test_close_looks_against_trivariate_normal():
    # Three looks 0.01 apart near the end (the closest allowed): scipy's multivariate normal.
    t = np.array([0.97, 0.98, 1.0])
    d = design(3, spending="hsd", gamma=1.0, timing=t)
    cov = np.sqrt(np.minimum.outer(t, t) / np.maximum.outer(t, t))
    mvn = multivariate_normal(np.zeros(3), cov, maxpts=2_000_000, abseps=1e-10, releps=1e-10)
    inside = mvn.cdf(d.upper, lower_limit=-d.upper)
    assert 1 - inside == pytest.approx(0.05, abs=1e-6)


@settings(max_examples=15, deadline=None)
@given(
    st.lists(st.floats(0.05, 0.95), min_size=1, max_size=5, unique=True),
    st.sampled_from(SPENDING),
    st.sampled_from([None, "hsd"]),
)
def test_uneven_timing_keeps_alpha_and_power(cuts, spending, futility):
    timing = sorted(cuts) + [1.0]
    gaps = np.diff([0.0, *timing])
    if gaps.min() < 0.02:
        timing = list(np.linspace(0, 1, len(timing) + 1)[1:])
    d = design(len(timing), spending=spending, timing=timing, futility=futility)
    assert d.alpha_spent[-1] == pytest.approx(0.05, abs=1e-8)
    assert d.efficacy_h1.sum() == pytest.approx(0.8, abs=1e-8)
    assert d.stop_h0.sum() == pytest.approx(1.0, abs=1e-8)


def test_designs_made_on_two_threads_at_once_are_those_made_alone():
    # the recursion keeps its kernels' space per thread (common practice, no source: a
    # design is a pure function of its arguments, whatever else runs beside it)
    from concurrent.futures import ThreadPoolExecutor

    asked = [dict(looks=looks, alpha=alpha, futility=futility)
             for looks in (3, 7, 12) for alpha in (0.05, 0.01)
             for futility in (None, "ld-pocock")]
    alone = [design(**kwargs) for kwargs in asked]
    with ThreadPoolExecutor(2) as pool:
        together = list(pool.map(lambda kwargs: design(**kwargs), asked * 3))
    for made, again in zip(alone * 3, together, strict=True):
        assert (made.drift, made.inflation) == (again.drift, again.inflation)
        np.testing.assert_array_equal(made.stop_h1, again.stop_h1)


def test_results_are_read_only():
    d = design(3)
    with pytest.raises(ValueError):
        d.upper[0] = 1.0


BAD_ARGUMENTS = [
        ({"looks": 0}, "looks"),
        ({"looks": 21}, "looks"),
        ({"looks": 2.5}, "looks"),
        ({"looks": True}, "looks"),
        ({"looks": 3, "alpha": 0.0}, "alpha"),
        ({"looks": 3, "alpha": 1.2}, "alpha"),
        ({"looks": 3, "power": 1.0}, "power"),
        ({"looks": 3, "power": 0.02}, "power"),
        ({"looks": 3, "alternative": "both"}, "alternative"),
        ({"looks": 3, "spending": "haybittle"}, "spending"),
        ({"looks": 3, "futility": "pocock"}, "futility"),
        ({"looks": 3, "timing": [0.5, 1.0]}, "timing"),
        ({"looks": 3, "timing": [0.5, 0.4, 1.0]}, "timing"),
        ({"looks": 3, "timing": [0.0, 0.5, 1.0]}, "timing"),
        ({"looks": 3, "timing": [0.3, 0.6, 0.9]}, "timing"),
        ({"looks": 3, "timing": "soon"}, "timing"),
        ({"looks": 3, "timing": [0.5, 0.505, 1.0]}, "timing"),
        ({"looks": 3, "gamma": 1.0}, "gamma"),
        ({"looks": 3, "spending": "hsd", "gamma": 41.0}, "gamma"),
        ({"looks": 3, "spending": "hsd", "gamma": "steep"}, "gamma"),
]


@pytest.mark.parametrize(("kwargs", "word"), BAD_ARGUMENTS)
def test_design_rejects_bad_arguments(kwargs, word):
    kwargs = dict(kwargs)
    looks = kwargs.pop("looks")
    with pytest.raises(ValueError, match=word):
        design(looks, **kwargs)


@pytest.mark.parametrize(("kwargs", "word"),
                         [(kwargs, word) for kwargs, word in BAD_ARGUMENTS if word != "futility"])
def test_boundaries_reject_what_the_design_rejects(kwargs, word):
    """A design that cannot be made has no boundaries either (a power not above the
    one-sided α among them, though the boundaries do not depend on the power)."""
    kwargs = dict(kwargs)
    looks = kwargs.pop("looks")
    with pytest.raises(ValueError, match=word):
        boundaries(looks, **kwargs)


@pytest.mark.parametrize("spending", SPENDING)
@pytest.mark.parametrize("alternative", ["two-sided", "greater"])
@pytest.mark.parametrize("timing", [None, (0.3, 0.55, 1.0)])
def test_boundaries_give_the_designs_powers(spending, alternative, timing):
    """The boundaries alone (without the design's drift) are the design's, and so is the
    power of their test at every drift, to the last bit."""
    made = design(3, alpha=0.03, power=0.85, alternative=alternative, spending=spending,
                  timing=timing)
    bare = boundaries(3, alpha=0.03, power=0.85, alternative=alternative, spending=spending,
                      timing=timing)
    np.testing.assert_array_equal(bare.upper, made.upper)
    np.testing.assert_array_equal(bare.fractions, made.fractions)
    for drift in (0.0, 1.3, made.drift, 4.0):
        assert power_at(bare, drift) == power_at(made, drift)


@pytest.mark.parametrize(("looks", "nominal"), [(0, 0.05), (101, 0.05), (3, 0.0), (3, 1.5)])
def test_peeking_rejects_bad_arguments(looks, nominal):
    with pytest.raises(ValueError, match="looks|nominal"):
        peeking_alpha(looks, nominal)


@pytest.mark.parametrize("futility", [None, "ld-pocock"])
def test_power_at_reproduces_the_design_and_h0(futility):
    d = design(6, futility=futility, power=0.9)
    assert power_at(d, d.drift) == pytest.approx(0.9, abs=1e-9)
    drifts = np.linspace(0.0, 5.0, 11)
    assert np.all(np.diff([power_at(d, x) for x in drifts]) > 0)
    if futility is None:
        assert power_at(d, 0.0) == pytest.approx(0.025, abs=1e-9)


def test_power_at_against_bivariate_normal():
    d = design(2, spending="pocock", timing=[0.4, 1.0])
    c1, c2 = d.upper
    assert power_at(d, 2.0) == pytest.approx(_two_look_probabilities(0.4, c1, c2, 2.0), abs=1e-7)


@pytest.mark.parametrize("futility", [None, "ld-pocock"])
@pytest.mark.parametrize("looks", [2, 5])
def test_power_at_is_a_probability_at_any_drift(looks, futility):
    # A power is at most 1 (a probability; common practice, no source): the grid's sum of
    # crossing probabilities overshoots 1 by about 1e-8 at large drifts and is capped.
    d = design(looks, futility=futility)
    powers = [power_at(d, x) for x in np.linspace(3.0, 40.0, 75)]
    assert max(powers) <= 1.0
    assert powers[-1] == 1.0


@pytest.mark.parametrize("drift", [math.nan, math.inf, "far"])
def test_power_at_rejects_bad_drift(drift):
    with pytest.raises(ValueError, match="drift"):
        power_at(design(2), drift)


def test_import_stays_off_scipy_stats():
    code = "import sys, fourfold.engine.sequential; print('scipy.stats' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
