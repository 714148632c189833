"""Write ``quillmoss-history.csv``: SYNTHETIC visit history for the demo plan.

Every number is invented and drawn from a seeded generator; no real shop, visitor or order is
behind any of it. The scenario is the fictional "Quillmoss Garden Supply" checkout test (see the
demo plan ``quillmoss-checkout.json``): one row per visit of a four-week pre-period (from
Monday 2 March 2026), so that the history import has something to read — per visit, and per
visitor over the first days of each visitor's exposure::

    visitor            synthetic-000001, … (the visitor key; marks every row as synthetic)
    time               when the visit started, e.g. 2026-03-02 09:41:07
    converted          0/1, placed an order on this visit (about 3.1 %)
    revenue            order value of the visit, heavy-tailed (mean about 2.35, sd about 15)
    added_to_cart      true/false (about 11.4 %)
    items, orders      items bought and orders placed: items per order is a ratio of sums
    support_contacts   contacts with support, an over-dispersed count (mean about 0.018)
    page_load_s        checkout page load time in seconds (mean about 1.84); a few empty
    pre_revenue        revenue of the same visitor in the period before, for CUPED (repeated
                       on each of the visitor's visits)
    pre_page_load_s    the visitor's page load time in the period before, for CUPED

Visitors come back: a few regulars visit most days, most visitors once or twice; some were
already regulars before the period (so day 1 brings many of them at once) and new visitors
keep arriving, a little more at weekends. So distinct visitors grow much more slowly than
visits — the reach curve the import finds.

Run ``python3 samples/make_history.py`` to rebuild it (same seed, same file).
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

VISITORS = 8_000
DAYS = 28
SEED = 20261201
START = np.datetime64("2026-03-02T00:00:00")  # a Monday
OUTPUT = Path(__file__).with_name("quillmoss-history.csv")


def visits(visitors: int, days: int, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Who visits on which second: the visitor index and the start of each visit."""
    weekend = np.isin(np.arange(days) % 7, (5, 6))
    arrival_weight = np.where(weekend, 1.3, 1.0)
    already = rng.random(visitors) < 0.18  # regulars from before the period
    arrival = np.where(already, 0, rng.choice(days, visitors,
                                              p=arrival_weight / arrival_weight.sum()))
    # Daily chance of coming back: most visitors rarely, a few nearly every day.
    back = np.minimum(rng.beta(0.35, 6.0, visitors) * np.where(already, 3.0, 1.0), 0.95)
    day = np.arange(days)
    returns = rng.random((visitors, days)) < back[:, None] * np.where(weekend, 1.2, 1.0)
    present = (day[None, :] > arrival[:, None]) & returns
    present[np.arange(visitors), arrival] = True
    who, when = np.nonzero(present)
    # Time of day: a morning and an evening peak.
    hours = np.where(rng.random(who.size) < 0.45, rng.normal(10.5, 2.0, who.size),
                     rng.normal(20.0, 2.2, who.size)) % 24
    seconds = when * 86_400 + (hours * 3600).astype(np.int64)
    order = np.argsort(seconds, kind="stable")
    return who[order], seconds[order]


def generate(visitors: int = VISITORS, days: int = DAYS,
             seed: int = SEED) -> dict[str, np.ndarray]:
    """The synthetic columns, drawn from one seeded generator."""
    rng = np.random.default_rng(seed)
    loyal = rng.random(visitors) < 0.012  # regular customers: most of them buy in both periods
    propensity = np.where(loyal, rng.uniform(24.0, 30.0, visitors),
                          rng.gamma(2.0, 0.36, visitors))
    taste = rng.normal(0.0, 0.6, visitors)
    device = rng.normal(0.0, 0.26, visitors)
    who, seconds = visits(visitors, days, rng)
    rows = who.size

    def order_values(size: int, person: np.ndarray) -> np.ndarray:
        base = rng.lognormal(3.95 + taste[person], 0.25, size)
        big = rng.random(size) < 0.02
        return np.where(big, base * rng.uniform(4.0, 9.0, size), base)

    chance = np.minimum(0.031 * propensity, 1.0)
    converted = rng.random(rows) < chance[who]
    converted_before = rng.random(visitors) < np.minimum(2.0 * chance, 1.0)
    revenue = np.where(converted, order_values(rows, who), 0.0)
    everyone = np.arange(visitors)
    pre_revenue = np.where(converted_before, order_values(visitors, everyone), 0.0)
    orders = converted * (1 + (rng.random(rows) < 0.06))
    items = np.where(orders > 0, orders + rng.poisson(1.6 * orders), 0)
    added = converted | (rng.random(rows) < 0.085)
    support = rng.poisson(rng.gamma(0.25, 0.018 / 0.25, rows))
    page_load = np.exp(0.555 + device[who] + rng.normal(0.0, 0.18, rows))
    pre_page_load = np.exp(0.555 + device + rng.normal(0.0, 0.18, visitors))
    page_load = np.where(rng.random(rows) < 0.004, np.nan, page_load)
    stamps = (START + seconds.astype("timedelta64[s]")).astype(str)
    return {
        "visitor": np.array([f"synthetic-{i + 1:06d}" for i in who]),
        "time": np.char.replace(stamps, "T", " "),
        "converted": converted.astype(int),
        "revenue": np.round(revenue, 2),
        "added_to_cart": np.where(added, "true", "false"),
        "items": items,
        "orders": orders,
        "support_contacts": support,
        "page_load_s": np.round(page_load, 3),
        "pre_revenue": np.round(pre_revenue[who], 2),
        "pre_page_load_s": np.round(pre_page_load[who], 3),
    }


def write(path: Path = OUTPUT, visitors: int = VISITORS, days: int = DAYS,
          seed: int = SEED) -> Path:
    """Write the synthetic history CSV (empty cells for missing values)."""
    columns = generate(visitors, days, seed)
    names = list(columns)
    rows = len(columns["visitor"])
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
