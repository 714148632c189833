"""Benchmark of the PDF report with one long unbroken word in its description.

Run on demand: ``python3 tests/bench/bench_pdf_words.py [MEGABYTES]``. It exports the sample
plan with a description of MEGABYTES (default 1) of ordinary words — the reference — and with
the same number of characters as one word without a space, and prints the median seconds of
three exports of each and the ratio. Qt's line breaking searches a long word quadratically;
the report breaks long words into pieces first (``fourfold.export.pdf.flow.clean``), so the
word should cost about what the words cost. Target: ratio ≤ 1.5.
"""

from __future__ import annotations

import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

TARGET_RATIO = 1.5


def seconds(plan, path: Path, repeat: int = 3) -> float:
    from fourfold.export.pdf import write_pdf

    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        write_pdf(plan, path)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> int:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from fourfold.plan import load, sample_path

    size = int(float(sys.argv[1]) * 1_000_000) if len(sys.argv) > 1 else 1_000_000
    plan = load(sample_path())
    with tempfile.TemporaryDirectory() as folder:
        out = Path(folder) / "report.pdf"
        plan.settings.description = ("seed " * (size // 5 + 1))[:size]
        words = seconds(plan, out)
        plan.settings.description = "s" * size
        word = seconds(plan, out)
    ratio = word / words
    print(f"{size:,} characters of ordinary words  {words:6.2f} s  (reference)")
    print(f"{size:,} characters in one word        {word:6.2f} s  ratio {ratio:.2f}")
    print(f"target: ratio ≤ {TARGET_RATIO} (got {ratio:.2f})")
    print("PASS" if ratio <= TARGET_RATIO else "FAIL")
    return 0 if ratio <= TARGET_RATIO else 1


if __name__ == "__main__":
    sys.exit(main())
