"""Timing helper shared by the benchmark scripts in this folder (imported as ``timing``: a
script's own folder is on ``sys.path`` when it runs)."""

from __future__ import annotations

import statistics
import time


def median_ms(fn, repeat: int = 200) -> float:
    """Median wall time of ``fn()`` in milliseconds, over ``repeat`` calls after one warm-up."""
    fn()
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times) * 1e3
