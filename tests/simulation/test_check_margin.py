"""A margin row under a fixed runtime is simulated at the margin it rules out.

Reference: the simulated replicates themselves (the row's own one-sided test run on each), the
closed-form power being 0.8 by construction at the solved margin; agreement within the
simulation's interval (the check's own verdict).
"""

from fourfold.plan import load, sample_path
from fourfold.plan.evaluation import compute
from fourfold.simulation import check_metric


def test_a_guardrail_with_a_runtime_agrees_at_the_tightest_margin():
    plan = load(sample_path())
    plan.settings.runtime_days = 14.0
    result = compute(plan)
    row = result.rows[5]  # page load time, "less", no true change
    assert row.solved == "detectable_margin" and 0 < row.margin_abs < plan.metrics[5].margin
    check = check_metric(plan, 5, result=result, reps=2000, seed=1)
    assert check["verdict"] == "agrees", check["message"]
