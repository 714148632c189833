"""A stored simulation check for plan tests (invented numbers in the shape of
``fourfold.simulation.check.check_metric``'s dict)."""


STORED_CHECK = {
    "power": 0.84, "low": 0.82, "high": 0.86, "false_positive": 0.049,
    "false_positive_low": 0.04, "false_positive_high": 0.06, "reps": 4000, "seed": 7,
    "n_control": 9000, "n_treatment": 9000, "effect": -0.5, "alpha": 0.02, "model": "normal",
    "test": "two-sample t", "looks": 1, "expected_fraction": 1.0, "analytic_power": 0.85,
    "inputs": {"kind": "mean", "method": "t", "baseline": 41.5, "sd": 12.25, "effect": -0.5,
               "alpha": 0.02, "alternative": "less", "margin": 0.75, "n_control": 9000.0,
               "ratio": 1.5, "looks": 3},
    "verdict": "agrees", "message": "Simulated power 84.0 % agrees with the closed form.",
}
