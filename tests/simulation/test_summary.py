"""Report rows of stored checks (what the PDF prints), on the invented Quillmoss demo plan.

The reference is the stored check itself (computed by check_metric, which tests/simulation
verifies against statsmodels 0.15.0 and published tables); here only the wording and the
stale/flag rules are checked.
"""

from fourfold.plan import load, sample_path
from fourfold.plan.evaluation import compute
from fourfold.simulation import check_metric
from fourfold.simulation.summary import HEADER, report_messages, report_rows


def test_rows_name_power_interval_replicates_and_seed():
    plan = load(sample_path())
    plan.metrics[2].simulation = check_metric(plan, 2, reps=400, seed=11)
    rows = report_rows(plan, compute(plan))
    assert len(rows) == 1 and len(rows[0]) == len(HEADER)
    number, name, closed, simulated, _fp, reps, model, verdict = rows[0]
    check = plan.metrics[2].simulation
    assert (number, name) == ("3", plan.metrics[2].name)
    assert closed == f"{100 * check['analytic_power']:.1f} %"
    assert simulated.startswith(f"{100 * check['power']:.1f} % (")
    assert reps == "400, seed 11"
    assert model == "binomial, two-proportion z (pooled)"
    assert verdict in ("agrees", "just outside (may be chance)")


def test_flagged_and_stale_checks_get_their_message():
    plan = load(sample_path())
    check = check_metric(plan, 1, reps=400, seed=1)
    check.update(power=0.5, low=0.45, high=0.55, verdict="below",
                 message="Simulated power is below the closed form.")
    plan.metrics[1].simulation = check
    plan.metrics[3].simulation = check_metric(plan, 3, reps=400, seed=1)
    plan.metrics[3].sd = 20.0
    messages = dict(report_messages(plan))
    assert messages["2. Revenue per visitor"].startswith("Simulated power is below")
    assert messages["4. Items per order"].endswith("run it again.")
    assert report_rows(plan)[1][-1].startswith("stale")
