"""Give the demo plan's reach-curve scenario its traffic from the SYNTHETIC sample history.

Run after ``make_history.py`` (from the project's folder, with Fourfold installed)::

    python3 samples/make_sample_traffic.py

1. The real command line reads ``quillmoss-history.csv`` with its visitor and time columns and
   writes ``quillmoss-history.json``::

       fourfold history samples/quillmoss-history.csv --unit visitor --time time \\
           --proportion converted --mean revenue --pre revenue:pre_revenue \\
           --proportion added_to_cart --ratio items:orders --count support_contacts --json

   It holds the reach curve (distinct visitors by first day) and every metric's figures over
   each visitor's first 7, 14, 21 and 28 days. Page load time is left out: a visit's load
   time summed over a visitor's days is no per-visitor metric.
2. The history stands for a sample of the shop's visitors: its curve is scaled so that an
   average day's distinct visitors are the plan's 42,000 (the factor, rounded to two
   decimals, is named in the curve's source).
3. The scenario *Returning visitors, ramp-up to all traffic* of ``quillmoss-checkout.json``
   takes that curve (through :func:`fourfold.plan.traffic_files.read_reach`, as the traffic
   dialog's *Load file…* does) and its conversion, revenue, add-to-cart, items-per-order and
   support-contact rows follow their windows (:func:`~fourfold.plan.traffic_files
   .history_windows`, as the history import applies them). Everything else in the plan stays.

Same history, same output: every number is invented (see ``make_history.py``).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pandas as pd

from fourfold.atomic import write_bytes
from fourfold.plan import load, save
from fourfold.plan.traffic_files import history_windows, read_reach

HERE = Path(__file__).resolve().parent
HISTORY = HERE / "quillmoss-history.csv"
OUTPUT = HERE / "quillmoss-history.json"
PLAN = HERE / "quillmoss-checkout.json"
SCENARIO = "Returning visitors, ramp-up to all traffic"
METRICS = ["--proportion", "converted", "--mean", "revenue", "--pre", "revenue:pre_revenue",
           "--proportion", "added_to_cart", "--ratio", "items:orders",
           "--count", "support_contacts"]
ROWS = {"conversion": "converted", "revenue": "revenue", "add-to-cart": "added_to_cart",
        "items-per-order": "items:orders", "support-contacts": "support_contacts"}
"""The plan's row ids and the history metric whose windows each follows."""


def history_json(path: Path = HISTORY) -> str:
    """What ``fourfold history … --json`` prints for the sample history."""
    command = [sys.executable, "-m", "fourfold", "history", str(path), "--unit", "visitor",
               "--time", "time", *METRICS, "--json"]
    return subprocess.run(command, check=True, capture_output=True, text=True).stdout


def scale(path: Path, daily_units: float) -> float:
    """The plan's daily units over the history's distinct visitors on an average day."""
    visits = pd.read_csv(path, usecols=["visitor", "time"])
    per_day = visits.groupby(visits["time"].str[:10])["visitor"].nunique()
    return round(daily_units / per_day.mean(), 2)


def main() -> None:
    text = history_json()
    write_bytes(OUTPUT, text.encode("utf-8"))
    data = json.loads(text)
    plan = load(PLAN)
    factor = scale(HISTORY, plan.settings.daily_units)
    scenario = next(s for s in plan.scenarios if s.name == SCENARIO)
    scenario.settings["reach"] = tuple((day, float(round(units * factor)))
                                       for day, units in read_reach(OUTPUT))
    scenario.settings["reach_source"] = (
        f"{OUTPUT.name} (synthetic sample), distinct visitors by first day × {factor:g} "
        f"({plan.settings.daily_units:,.0f} visitors a day)")
    for row_id, name in ROWS.items():
        scenario.rows[row_id] = {"windowed": True, "windows": history_windows(data, name)}
    save(plan, PLAN)
    print(f"wrote {OUTPUT} and the scenario {SCENARIO!r} of {PLAN}")


if __name__ == "__main__":
    main()
