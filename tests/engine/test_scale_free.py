"""A mean row is scale-free: multiplying baseline, sd, and an absolute effect and margin by the
same number leaves units, power and α unchanged and multiplies a detectable effect (n per arm
= 2σ²(z₁₋α/₂ + z₁₋β)²/δ² depends on σ/δ only; Lehr 1992). So the engine must solve it at any
scale a double holds, from subnormal numbers to 1e308, and leave ordinary rows as they are.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold import engine
from fourfold.engine.checks import prepare

SCALES = [1e-320, 1e-300, 1e-200, 1e-40, 1e40, 1e200, 1e300, 1e308]


@pytest.mark.parametrize("method", ["z", "t"])
@pytest.mark.parametrize("scale", SCALES)
def test_units_power_and_alpha_do_not_depend_on_the_scale(method, scale):
    # baseline = sd = scale at 1e308: the issue's case (n ≈ 6,300 at a 5 % lift)
    reference = engine.sample_size("mean", 1.0, 0.05, sd=1.0, relative=True, method=method)
    n = engine.sample_size("mean", scale, 0.05, sd=scale, relative=True, method=method)
    assert float(n) == pytest.approx(float(reference), rel=1e-9, abs=0)
    if scale < 1e-307:
        return  # 0.05 × a subnormal number is not 0.05 of it (a few bits of precision left)
    effect = 0.05 * scale  # absolute, with an absolute margin of the same size
    n_abs = engine.sample_size("mean", scale, effect, sd=scale, margin=-effect,
                               alternative="greater", method=method)
    reference_abs = engine.sample_size("mean", 1.0, 0.05, sd=1.0, margin=-0.05,
                                       alternative="greater", method=method)
    assert float(n_abs) == pytest.approx(float(reference_abs), rel=1e-9, abs=0)
    assert float(engine.power("mean", scale, effect, 6000.0, sd=scale, method=method)) == \
        pytest.approx(float(engine.power("mean", 1.0, 0.05, 6000.0, sd=1.0, method=method)),
                      rel=1e-12, abs=0)
    assert float(engine.significance_level("mean", scale, effect, 6000.0, sd=scale,
                                           method=method)) == pytest.approx(
        float(engine.significance_level("mean", 1.0, 0.05, 6000.0, sd=1.0, method=method)),
        rel=1e-9, abs=0)


@pytest.mark.parametrize("scale", SCALES)
def test_a_detectable_effect_scales_with_the_row(scale):
    unit = float(engine.detectable_effect("mean", 1.0, 6280.0, sd=1.0))
    absolute = float(engine.detectable_effect("mean", scale, 6280.0, sd=scale))
    relative = float(engine.detectable_effect("mean", scale, 6280.0, sd=scale, relative=True))
    assert absolute == pytest.approx(unit * scale, rel=1e-9, abs=0)
    assert relative == pytest.approx(unit, rel=1e-9, abs=0)


def test_the_issues_row_finds_its_sample_size():
    n = float(engine.sample_size("mean", 1e308, 0.05, sd=1e308, relative=True))
    assert 6270 < n < 6290  # 2 · (1.96 + 0.8416)² / 0.05² = 6,279.1 (Lehr 1992 form)


@settings(max_examples=60, deadline=None)
@given(baseline=st.floats(-1e25, 1e25), sd=st.floats(1e-25, 1e25),
       effect=st.floats(-1e25, 1e25), relative=st.booleans())
def test_ordinary_rows_are_solved_unscaled(baseline, sd, effect, relative):
    # the same arithmetic as before the scaling existed: bit for bit, nothing rescaled
    p = prepare("sample_size", "mean", baseline, effect=effect, sd=sd, relative=relative)
    assert p.unit is None


def test_scaling_goes_element_by_element():
    baseline = np.array([1.0, 1e308, 3.0])
    n = engine.sample_size("mean", baseline, 0.05, sd=baseline, relative=True)
    assert n[0] == n[2] and n[1] == pytest.approx(n[0], rel=1e-9, abs=0)
