"""Generated history tables for the import tests (invented, seeded data).

A helper module, not a conftest: pytest collects doctests from every module here, and two
modules called ``conftest`` in folders without ``__init__.py`` would clash.
"""

from fractions import Fraction

import mpmath
import numpy as np
import pandas as pd

from fourfold.history import ColumnMap

VISIT_MAPPING = [
    ColumnMap("mean", "spend", pre="pre_spend"),
    ColumnMap("proportion", "bought"),
    ColumnMap("count", "contacts"),
    ColumnMap("ratio", "clicks", denominator="sessions"),
]
"""Every kind of metric the visits of :func:`make_visits` have, with a pre-period column."""


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


def make_visits(units: int = 800, days: int = 30, seed: int = 7) -> pd.DataFrame:
    """Visits of returning units over ``days`` days, in time order (invented, seeded).

    Each unit arrives on a day drawn over the period (some before it, so they are there on
    day 1), comes back at a rate of its own, and each visit has a spend (sometimes empty),
    a purchase flag, contacts and clicks over sessions; ``pre_spend`` is the unit's spend in
    an earlier period, repeated on each of its visits.
    """
    rng = np.random.default_rng(seed)
    start = np.datetime64("2026-03-01T00:00:00")
    arrival = np.maximum(rng.integers(-10, days, units), 0)
    rate = rng.gamma(0.8, 0.35, units)
    taste = rng.normal(0.0, 1.0, units)
    pre = np.round(np.exp(1.0 + taste + rng.normal(0.0, 0.5, units)), 2)
    rows = []
    for u in range(units):
        visit_days = [arrival[u]] + [d for d in range(arrival[u] + 1, days)
                                     if rng.random() < rate[u]]
        for d in visit_days:
            seconds = int(rng.integers(0, 86400))
            rows.append((u, start + np.timedelta64(int(d) * 86400 + seconds, "s")))
    unit = np.array([r[0] for r in rows])
    n = unit.size
    spend = np.round(np.exp(taste[unit] + rng.normal(0.0, 0.8, n)) * (rng.random(n) < 0.3), 2)
    spend[rng.random(n) < 0.05] = np.nan
    sessions = 1 + rng.poisson(1.0, n)
    frame = pd.DataFrame({
        "visitor": [f"synthetic-{u:05d}" for u in unit],
        "time": np.array([r[1] for r in rows]).astype("datetime64[s]").astype(str),
        "spend": spend,
        "pre_spend": pre[unit],
        "bought": (rng.random(n) < 0.1).astype(int),
        "contacts": rng.poisson(0.05, n),
        "clicks": rng.binomial(sessions, 0.3),
        "sessions": sessions,
    })
    frame["time"] = frame["time"].str.replace("T", " ")
    return frame.sort_values("time", kind="stable").reset_index(drop=True)


def exact_moments(numbers: list[float]) -> tuple[float, float]:
    """The mean and sample sd of doubles, exactly with ``fractions`` and mpmath 1.3 (square root
    at 40 digits), rounded once to doubles."""
    exact = [Fraction(v) for v in numbers]
    mean = sum(exact) / len(exact)
    variance = sum((v - mean) ** 2 for v in exact) / (len(exact) - 1)
    with mpmath.workdps(40):
        sd = mpmath.sqrt(mpmath.mpf(variance.numerator) / variance.denominator)
        return float(mpmath.mpf(mean.numerator) / mean.denominator), float(sd)
