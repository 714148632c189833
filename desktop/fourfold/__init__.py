"""Fourfold: plan the sample size of online controlled experiments.

Fix three of sample size, effect, α and power; solve the fourth.
"""

__version__ = "0.1.0"

CAUTION = (
    "A sample-size plan is only as good as its assumptions (baseline, variance, effect, "
    "traffic). For clinical, medical or other high-stakes trials it is no substitute for a "
    "qualified statistician, an ethics board and the applicable regulations."
)
