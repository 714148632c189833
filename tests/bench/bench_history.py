"""Benchmark of the history import: rows per second and peak memory on a 5-million-row file.

Run on demand: ``python3 tests/bench/bench_history.py [ROWS]``. It writes a synthetic
4-column CSV (seeded, invented values) to a temporary folder, then in fresh subprocesses
measures

* the reference: pandas ``read_csv`` of the whole file into memory (no statistics at all);
* ``fourfold.history.read_history`` of the same file (mean + pre-period ρ, a proportion and a
  count), without and with a cap (the cap adds a first pass over the capped columns);

and prints each one's seconds, rows/s, peak resident memory (``ru_maxrss`` of its own process)
and the throughput ratio against the reference. Targets: ratio ≥ 0.8 without a cap, peak
≤ 300 MB.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

ROWS = 5_000_000
TARGET_RATIO = 0.8
TARGET_PEAK_MB = 300

_RUN = r"""
import json, resource, sys, time
path, what = sys.argv[1], sys.argv[2]
start = time.perf_counter()
if what == "pandas":
    import pandas as pd
    rows = len(pd.read_csv(path))
else:
    from fourfold.history import ColumnMap, read_history
    cap = 99.9 if what == "fourfold-cap" else None
    summary = read_history(path, [ColumnMap("mean", "spend", pre="pre_spend", cap=cap),
                                  ColumnMap("proportion", "bought"),
                                  ColumnMap("count", "contacts")])
    rows = summary.rows
seconds = time.perf_counter() - start
peak_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print(json.dumps({"rows": rows, "seconds": seconds, "peak_mb": peak_kb / 1024}))
"""


def write_file(path: Path, rows: int) -> None:
    """A synthetic per-unit history written in blocks (memory stays small)."""
    rng = np.random.default_rng(20261201)
    block = 500_000
    with open(path, "w", encoding="utf-8") as handle:
        handle.write("spend,bought,contacts,pre_spend\n")
        for start in range(0, rows, block):
            size = min(block, rows - start)
            taste = rng.normal(0.0, 1.0, size)
            spend = np.round(np.exp(1.0 + taste + rng.normal(0.0, 0.8, size)), 2)
            pre = np.round(np.exp(1.0 + taste + rng.normal(0.0, 0.8, size)), 2)
            bought = (rng.random(size) < 0.2).astype(int)
            contacts = rng.poisson(0.3, size)
            table = np.column_stack([spend, bought, contacts, pre])
            np.savetxt(handle, table, fmt=["%.2f", "%d", "%d", "%.2f"], delimiter=",")


def measure(path: Path, what: str) -> dict:
    out = subprocess.run([sys.executable, "-c", _RUN, str(path), what], check=True,
                         capture_output=True, text=True)
    return json.loads(out.stdout)


def main(rows: int = ROWS) -> int:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "history.csv"
        print(f"writing {rows:,} rows …", flush=True)
        write_file(path, rows)
        print(f"file: {path.stat().st_size / 2**20:.0f} MB")
        reference = measure(path, "pandas")
        results = {"pandas read_csv (reference)": reference,
                   "fourfold read_history": measure(path, "fourfold"),
                   "fourfold read_history, cap 99.9": measure(path, "fourfold-cap")}
    ref_speed = reference["rows"] / reference["seconds"]
    ok = True
    for name, result in results.items():
        speed = result["rows"] / result["seconds"]
        ratio = speed / ref_speed
        print(f"{name:34s} {result['seconds']:7.2f} s  {speed:12,.0f} rows/s  "
              f"peak {result['peak_mb']:6.0f} MB  ratio {ratio:4.2f}")
    plain = results["fourfold read_history"]
    ratio = (plain["rows"] / plain["seconds"]) / ref_speed
    peak = max(r["peak_mb"] for n, r in results.items() if n.startswith("fourfold"))
    print(f"target: ratio ≥ {TARGET_RATIO} (got {ratio:.2f}), peak ≤ {TARGET_PEAK_MB} MB "
          f"(got {peak:.0f} MB)")
    ok = ratio >= TARGET_RATIO and peak <= TARGET_PEAK_MB
    print("PASS" if ok else "MISS")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(int(sys.argv[1]) if len(sys.argv) > 1 else ROWS))
