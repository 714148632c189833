"""Generated history files for the import tests (invented, seeded data)."""

import numpy as np
import pandas as pd
import pytest


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


@pytest.fixture
def frame_maker():
    return make_frame


@pytest.fixture
def frame() -> pd.DataFrame:
    return make_frame()


@pytest.fixture
def history_csv(tmp_path, frame):
    path = tmp_path / "history.csv"
    frame.to_csv(path, index=False)
    return path
