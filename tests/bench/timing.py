"""Helpers shared by the benchmark scripts in this folder (imported as ``timing``: a
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


def forget_designs() -> None:
    """Empty every cache of group sequential designs, so that the next computation meets its
    designs for the first time (as after a change of the number of looks)."""
    from fourfold.engine import sequential as engine_sequential
    from fourfold.plan import sequential, tradeoffs

    for cached in (engine_sequential._boundaries, sequential.shared_design,
                   sequential.shared_boundaries, sequential._power_of, sequential.peeking_text,
                   tradeoffs._inflation, tradeoffs._node_inflations):
        cached.cache_clear()


def repeated_sample(rows: int):
    """A plan of ``rows`` rows: the sample plan's rows repeated, named ``Metric i``, with the
    sample's settings (no scenarios)."""
    import dataclasses

    from fourfold.plan import Plan, load, sample_path

    sample = load(sample_path())
    return Plan(sample.settings, [
        dataclasses.replace(sample.metrics[i % len(sample.metrics)], name=f"Metric {i}")
        for i in range(rows)])
