"""Design helpers: multiple-comparison α, variance factors, units and days."""

import numpy as np
import pytest

from fourfold import engine


def test_bonferroni_and_sidak():
    # Bonferroni α/k and Šidák 1 − (1 − α)^(1/k) (Šidák 1967, JASA 62:626).
    k = np.array([1, 2, 3, 10])
    np.testing.assert_allclose(engine.adjusted_alpha(0.05, k, "bonferroni"), 0.05 / k)
    np.testing.assert_allclose(engine.adjusted_alpha(0.05, k, "sidak"),
                               1 - (1 - 0.05) ** (1 / k), rtol=1e-12)
    np.testing.assert_allclose(engine.adjusted_alpha(0.05, k, "none"), 0.05)
    # Šidák is never stricter than Bonferroni, and equal at k = 1.
    assert np.all(engine.adjusted_alpha(0.05, k, "sidak") >= engine.adjusted_alpha(
        0.05, k, "bonferroni"))
    # Two treatment arms against control at family-wise 0.05 (common practice, no source).
    assert float(engine.adjusted_alpha(0.05, 2, "sidak")) == pytest.approx(0.025321, abs=5e-7)


def test_adjusted_alpha_bad_input():
    with pytest.raises(ValueError, match="method must be one of 'none', 'bonferroni', 'sidak'"):
        engine.adjusted_alpha(0.05, 2, "holm")
    with pytest.raises(ValueError, match="comparisons must be at least 1"):
        engine.adjusted_alpha(0.05, 0, "sidak")
    with pytest.raises(ValueError, match="alpha must be between 0 and 1"):
        engine.adjusted_alpha(1.5, 2, "bonferroni")
    out = engine.adjusted_alpha([0.05, 1.5], [2, 2], "bonferroni")
    assert out[0] == 0.025 and np.isnan(out[1])


def test_variance_factor_cuped_kish_and_unequal_clusters():
    # CUPED: variance × (1 − ρ²) (Deng, Xu, Kohavi & Walker 2013).
    np.testing.assert_allclose(engine.variance_factor(rho=[0.0, 0.5, 0.9]),
                               [1.0, 0.75, 0.19], rtol=1e-12)
    # Kish (1965) design effect 1 + (m − 1)·ICC for equal clusters.
    assert float(engine.variance_factor(cluster_size=21.0, icc=0.02)) == pytest.approx(1.4)
    # Eldridge, Ashby & Kerry (2006): 1 + ((cv² + 1)·m − 1)·ICC with unequal sizes.
    assert float(engine.variance_factor(cluster_size=20.0, icc=0.05, cluster_cv=0.5)) == (
        pytest.approx(1 + (1.25 * 20 - 1) * 0.05))
    both = engine.variance_factor(rho=0.6, cluster_size=5.0, icc=0.1)
    assert float(both) == pytest.approx(0.64 * 1.4)


def test_variance_factor_scales_the_sample_size():
    # n is proportional to the variance, so sd·√factor multiplies n by the factor.
    f = float(engine.variance_factor(rho=0.45, cluster_size=3.0, icc=0.08))
    base = engine.sample_size("mean", 2.35, 0.12, sd=14.8)
    adjusted = engine.sample_size("mean", 2.35, 0.12, sd=14.8 * np.sqrt(f))
    assert adjusted == pytest.approx(f * base, rel=1e-9)


def test_variance_factor_bad_input():
    with pytest.raises(ValueError, match="rho must be between -1 and 1"):
        engine.variance_factor(rho=1.0)
    with pytest.raises(ValueError, match="cluster_size must be at least 1"):
        engine.variance_factor(cluster_size=0.5)
    with pytest.raises(ValueError, match="icc must be between 0 and 1"):
        engine.variance_factor(icc=-0.1)
    with pytest.raises(ValueError, match="cluster_cv must be at least 0"):
        engine.variance_factor(cluster_cv=-1.0)
    assert np.isnan(engine.variance_factor(rho=[0.2, 1.2])[1])


def test_total_units_and_days():
    # Quillmoss demo (invented): two treatment arms, 42,000 visitors a day, 60 % in the test.
    total = engine.total_units(201_017.0, 1.0, 2)
    assert float(total) == 603_051.0
    days = engine.duration_days(total, 42_000.0, share=0.6)
    assert float(days) == np.ceil(603_051 / 25_200)
    assert float(engine.duration_days(total, 42_000.0, share=0.6, whole_weeks=True)) == 28.0
    assert float(engine.total_units(1000.0, 0.5, 1)) == 1500.0


def test_duration_exact_days_are_not_rounded_up():
    days = engine.duration_days([4200.0, 4200.5, 0.0], 420.0)
    assert days.tolist() == [10.0, 11.0, 0.0]
    weeks = engine.duration_days([4200.0, 7 * 420.0, 7 * 420.0 + 1], 420.0, whole_weeks=True)
    assert weeks.tolist() == [14.0, 7.0, 14.0]


def test_units_and_days_bad_input():
    with pytest.raises(ValueError, match="daily_units must be greater than 0"):
        engine.duration_days(1000.0, 0.0)
    with pytest.raises(ValueError, match="share must be greater than 0 and at most 1"):
        engine.duration_days(1000.0, 100.0, share=1.5)
    with pytest.raises(ValueError, match="arms must be at least 1"):
        engine.total_units(1000.0, 1.0, 0)
    with pytest.raises(ValueError, match="ratio must be greater than 0"):
        engine.total_units(1000.0, 0.0, 1)
    out = engine.duration_days([1000.0, np.nan, -5.0], 100.0)
    assert out[0] == 10.0 and np.isnan(out[1]) and np.isnan(out[2])
