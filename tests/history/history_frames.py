"""Generated history tables for the import tests (invented, seeded data).

A helper module, not a conftest: pytest collects doctests from every module here, and two
modules called ``conftest`` in folders without ``__init__.py`` would clash.
"""

import numpy as np
import pandas as pd


def make_frame(rows: int = 3000, seed: int = 4) -> pd.DataFrame:
    """A small per-unit table with every kind of column and some empty cells."""
    rng = np.random.default_rng(seed)
    taste = rng.normal(0.0, 1.0, rows)
    spend = np.round(np.exp(1.0 + taste + rng.normal(0.0, 0.8, rows)), 2)
    pre_spend = np.round(np.exp(1.0 + taste + rng.normal(0.0, 0.8, rows)), 2)
    spend[rng.random(rows) < 0.03] = np.nan
    sessions = 1 + rng.poisson(3.0, rows)
    clicks = rng.binomial(sessions, 0.3).astype(float)
    clicks[rng.random(rows) < 0.01] = np.nan
    return pd.DataFrame({
        "unit": [f"synthetic-{i}" for i in range(rows)],
        "spend": spend,
        "pre_spend": pre_spend,
        "bought": rng.random(rows) < 0.2,
        "contacts": rng.poisson(rng.gamma(0.5, 0.2, rows)),
        "clicks": clicks,
        "sessions": sessions,
    })


def write_csv(folder, frame: pd.DataFrame, name: str = "history.csv"):
    """Write ``frame`` as a CSV history file in ``folder``; returns its path."""
    path = folder / name
    frame.to_csv(path, index=False)
    return path
