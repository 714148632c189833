"""The engine against published tables and worked examples.

Values recalled rather than read off the page say "from memory"; each of them is also
cross-checked against the formula it comes from, computed with scipy 1.17.1.
"""

import numpy as np
import pytest
from scipy import stats

from fourfold import engine


@pytest.mark.parametrize("d,table_n", [(0.2, 393), (0.5, 64), (0.8, 26)])
def test_cohen_table_2_4_1_n_per_group(d, table_n):
    # Cohen (1988) 2nd ed., Table 2.4.1: n per group, two-sided α = 0.05, power 0.80
    # (from memory).  The table rounds; the exact t stays within one unit of it.
    n = engine.sample_size("mean", 0.0, d, sd=1.0, method="t")
    assert abs(n - table_n) < 1.0
    at_table = engine.power("mean", 0.0, d, [table_n - 1.0, float(table_n)], sd=1.0, method="t")
    assert at_table[0] < 0.80 < at_table[1] + 0.001


@pytest.mark.parametrize("alpha,power,coefficient", [
    (0.05, 0.80, 15.7),   # Lehr (1992) Stat Med 11:1099, "sixteen s-squared over d-squared"
    (0.05, 0.90, 21.0),   # Lehr (1992): power 0.90 gives 21
    (0.01, 0.80, 23.4),   # z = 2.576 at α = 0.01 two-sided: 2(2.576 + 0.842)² = 23.4
])
def test_lehr_coefficients(alpha, power, coefficient):
    n = engine.sample_size("mean", 0.0, 1.0, sd=1.0, alpha=alpha, power=power)
    assert round(float(n), 1) == coefficient
    formula = 2 * (stats.norm.isf(alpha / 2) + stats.norm.ppf(power)) ** 2
    # Lehr's formula ignores the far tail of the two-sided test; the engine keeps it, so
    # it sits a hair below the formula and equals it for one tail at α/2.
    assert formula * (1 - 1e-4) < n < formula
    one_tail = engine.sample_size("mean", 0.0, 1.0, sd=1.0, alpha=alpha / 2, power=power,
                                  alternative="greater")
    assert one_tail == pytest.approx(formula, rel=1e-12)


def test_lehr_scales_with_the_variance_over_the_squared_difference():
    # Lehr (1992): n per arm = 16 s²/d² — quadruple s² or halve d and n quadruples.
    n = engine.sample_size("mean", 2.35, np.array([0.4, 0.2, 0.4]), sd=np.array([1.0, 1.0, 2.0]))
    assert n[1] == pytest.approx(4 * n[0], rel=1e-9)
    assert n[2] == pytest.approx(4 * n[0], rel=1e-9)


def test_fleiss_two_proportions_with_and_without_continuity_correction():
    # Fleiss's worked example of two proportions 0.60 vs 0.75, two-sided α = 0.05, power
    # 0.80: 152 per group without and 165 with the continuity correction (from memory;
    # Fleiss, Levin & Paik 2003, ch. 4).  Cross-checked below against the formulas.
    n = engine.sample_size("proportion", 0.60, 0.15, method="pooled")
    n_cc = engine.sample_size("proportion", 0.60, 0.15, method="pooled-cc")
    assert int(np.ceil(n)) == 152
    assert int(np.ceil(n_cc)) == 165
    z_a, z_b = stats.norm.isf(0.025), stats.norm.ppf(0.8)
    p_bar = 0.675
    formula = (z_a * np.sqrt(2 * p_bar * (1 - p_bar))
               + z_b * np.sqrt(0.6 * 0.4 + 0.75 * 0.25)) ** 2 / 0.15**2
    formula_cc = formula / 4 * (1 + np.sqrt(1 + 4 / (formula * 0.15))) ** 2
    assert n == pytest.approx(formula, rel=1e-5)
    assert n_cc == pytest.approx(formula_cc, rel=1e-5)


def test_fleiss_unequal_allocation():
    # Fleiss, Tytun & Ury (1980): with r = n2/n1 the corrected size is
    # n' = n/4 · (1 + √(1 + 2(r+1)/(r·n·|Δ|)))²; check it at r = 2, one-sided α = 0.05.
    pc, pt, r = 0.10, 0.16, 2.0
    z_a, z_b = stats.norm.isf(0.05), stats.norm.ppf(0.9)
    p_bar = (pc + r * pt) / (1 + r)
    n0 = (z_a * np.sqrt(p_bar * (1 - p_bar) * (1 + 1 / r))
          + z_b * np.sqrt(pc * (1 - pc) + pt * (1 - pt) / r)) ** 2 / (pt - pc) ** 2
    expected = n0 / 4 * (1 + np.sqrt(1 + 2 * (r + 1) / (r * n0 * (pt - pc)))) ** 2
    got = engine.sample_size("proportion", pc, pt - pc, power=0.9, ratio=r,
                             alternative="greater", method="pooled-cc")
    assert got == pytest.approx(expected, rel=1e-9)


def test_farrington_manning_restricted_estimates_maximise_the_likelihood():
    # Farrington & Manning (1990) Stat Med 9:1447: the closed form is the maximum of the
    # binomial likelihood under p_t − p_c = margin; check against scipy's bounded search.
    from scipy.optimize import minimize_scalar

    from fourfold.engine.proportion import restricted

    for pc, pt, margin, r in [(0.1, 0.12, 0.01, 1.0), (0.3, 0.25, -0.05, 2.0),
                              (0.03, 0.031, -0.005, 0.5), (0.5, 0.6, 0.2, 3.0)]:
        def nll(q, pc=pc, pt=pt, margin=margin, r=r):
            qt = q + margin
            return -(pc * np.log(q) + (1 - pc) * np.log1p(-q)
                     + r * (pt * np.log(qt) + (1 - pt) * np.log1p(-qt)))

        lo, hi = max(1e-12, -margin + 1e-12), min(1 - 1e-12, 1 - margin - 1e-12)
        best = minimize_scalar(nll, bounds=(lo, hi), method="bounded",
                               options={"xatol": 1e-12}).x
        c0, t0 = restricted(pc, pt, margin, r)
        assert float(c0) == pytest.approx(best, abs=1e-7)
        assert float(t0 - c0) == pytest.approx(margin, abs=1e-12)


def test_quillmoss_checkout_conversion_is_in_the_right_range():
    # Demo scenario (invented): 3.1 % conversion, +5 % relative MDE.  By Lehr's rule the
    # size is about 16·p(1−p)/Δ² ≈ 2.0e5 per arm (common practice, no source).
    n = engine.sample_size("proportion", 0.031, 0.05, relative=True)
    rule = 16 * 0.031 * 0.969 / (0.031 * 0.05) ** 2
    assert n == pytest.approx(rule, rel=0.05)


def test_non_inferiority_proportion_follows_farrington_manning_sample_size():
    # Farrington & Manning (1990), sample size for H0: p_t − p_c = margin (one-sided):
    # n = (z_α·s₀ + z_β·s₁)²/(Δ − margin)², s₀ at the restricted maximum-likelihood pair.
    # The restricted pair is found here by scipy's bounded search, not the closed form.
    from scipy.optimize import minimize_scalar

    pc, pt, margin, r, alpha, power = 0.114, 0.114, -0.01, 1.0, 0.025, 0.9

    def nll(q):
        qt = q + margin
        return -(pc * np.log(q) + (1 - pc) * np.log1p(-q)
                 + r * (pt * np.log(qt) + (1 - pt) * np.log1p(-qt)))

    q = minimize_scalar(nll, bounds=(-margin + 1e-9, 1 - 1e-9), method="bounded",
                        options={"xatol": 1e-13}).x
    s0 = np.sqrt(q * (1 - q) + (q + margin) * (1 - q - margin) / r)
    s1 = np.sqrt(pc * (1 - pc) + pt * (1 - pt) / r)
    expected = (stats.norm.isf(alpha) * s0 + stats.norm.ppf(power) * s1) ** 2 / margin**2
    got = engine.sample_size("proportion", pc, pt - pc, alpha=alpha, power=power, ratio=r,
                             margin=margin, alternative="greater", method="pooled")
    assert got == pytest.approx(expected, rel=1e-7)
