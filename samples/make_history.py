"""Write ``quillmoss-history.csv``: SYNTHETIC per-visitor history for the demo plan.

Every number is invented and drawn from a seeded generator; no real shop, visitor or order is
behind any of it. The scenario is the fictional "Quillmoss Garden Supply" checkout test (see the
demo plan ``quillmoss-checkout.json``): one row per visitor of a four-week pre-period, with
columns for each metric of the plan, so that the history import has something to read::

    visitor            synthetic-000001, … (the visitor key; marks every row as synthetic)
    converted          0/1, placed an order (about 3.1 %)
    revenue            order value per visitor, heavy-tailed (mean about 2.35, sd about 15)
    added_to_cart      true/false (about 11.4 %)
    items, orders      items bought and orders placed: items per order is a ratio of sums
    support_contacts   contacts with support, an over-dispersed count (mean about 0.018)
    page_load_s        checkout page load time in seconds (mean about 1.84); a few empty
    pre_revenue        revenue of the same visitor in the period before, for CUPED
    pre_page_load_s    page load time in the period before, for CUPED

Run ``python3 samples/make_history.py`` to rebuild it (same seed, same file).
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

ROWS = 20_000
SEED = 20261201
OUTPUT = Path(__file__).with_name("quillmoss-history.csv")


def generate(rows: int = ROWS, seed: int = SEED) -> dict[str, np.ndarray]:
    """The synthetic columns, drawn from one seeded generator."""
    rng = np.random.default_rng(seed)
    loyal = rng.random(rows) < 0.012  # regular customers: most of them buy in both periods
    propensity = np.where(loyal, rng.uniform(24.0, 30.0, rows), rng.gamma(2.0, 0.36, rows))
    converted = rng.random(rows) < np.minimum(0.031 * propensity, 1.0)
    converted_before = rng.random(rows) < np.minimum(0.031 * propensity, 1.0)

    taste = rng.normal(0.0, 0.6, rows)

    def order_values(size: int) -> np.ndarray:
        base = rng.lognormal(3.95 + taste, 0.25, size)
        big = rng.random(size) < 0.02
        return np.where(big, base * rng.uniform(4.0, 9.0, size), base)

    revenue = np.where(converted, order_values(rows), 0.0)
    pre_revenue = np.where(converted_before, order_values(rows), 0.0)
    orders = converted * (1 + (rng.random(rows) < 0.06))
    items = np.where(orders > 0, orders + rng.poisson(1.6 * orders), 0)
    added = converted | (rng.random(rows) < 0.085)
    support = rng.poisson(rng.gamma(0.25, 0.018 / 0.25, rows))
    device = rng.normal(0.0, 0.26, rows)
    page_load = np.exp(0.555 + device + rng.normal(0.0, 0.18, rows))
    pre_page_load = np.exp(0.555 + device + rng.normal(0.0, 0.18, rows))
    page_load = np.where(rng.random(rows) < 0.004, np.nan, page_load)
    return {
        "visitor": np.array([f"synthetic-{i:06d}" for i in range(1, rows + 1)]),
        "converted": converted.astype(int),
        "revenue": np.round(revenue, 2),
        "added_to_cart": np.where(added, "true", "false"),
        "items": items,
        "orders": orders,
        "support_contacts": support,
        "page_load_s": np.round(page_load, 3),
        "pre_revenue": np.round(pre_revenue, 2),
        "pre_page_load_s": np.round(pre_page_load, 3),
    }


def write(path: Path = OUTPUT, rows: int = ROWS, seed: int = SEED) -> Path:
    """Write the synthetic history CSV (empty cells for missing values)."""
    columns = generate(rows, seed)
    names = list(columns)
    with open(path, "w", newline="", encoding="utf-8") as handle:
        out = csv.writer(handle, lineterminator="\n")
        out.writerow(names)
        for i in range(rows):
            row = []
            for name in names:
                value = columns[name][i]
                row.append("" if isinstance(value, float) and np.isnan(value) else value)
            out.writerow(row)
    return path


if __name__ == "__main__":
    print(f"wrote {write()}")
