"""The hostile-input attack at full strength, on demand.

``python3 tests/bench/fuzz_hostile.py [EXAMPLES]`` runs the property-based tests that feed
Fourfold hostile plan files, history files, arbitrary bytes, warehouse results and typed cell
text (the suite runs them with 40 examples each) with EXAMPLES examples each (default 2,000)
in a fresh process, and prints the time and the peak resident memory of that process. The
tests themselves allow only a right answer or a one-line error, each example within 5 s;
the target here is a peak below 1 GB.
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import time
from pathlib import Path

TESTS = [
    "tests/plan/test_plan_fuzz.py",
    "tests/history/test_history_fuzz.py",
    "tests/ui/test_cell_numbers.py::test_typed_text_gives_a_normal_finite_number_or_a_one_line"
    "_message",
]
TARGET_PEAK_MB = 1024


def main() -> int:
    examples = int(sys.argv[1]) if len(sys.argv) > 1 else 2000
    root = Path(__file__).resolve().parents[2]
    env = dict(os.environ, FOURFOLD_FUZZ_EXAMPLES=str(examples), QT_QPA_PLATFORM="offscreen")
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider",
                           "--hypothesis-show-statistics", *TESTS], cwd=root, env=env)
    seconds = time.perf_counter() - start
    peak_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(f"{examples:,} examples per test: {seconds:.0f} s, peak {peak_mb:.0f} MB "
          f"(target ≤ {TARGET_PEAK_MB} MB), tests {'passed' if done.returncode == 0 else 'FAILED'}")
    ok = done.returncode == 0 and peak_mb <= TARGET_PEAK_MB
    print("PASS" if ok else "FAIL")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
