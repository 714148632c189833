"""Random streams per block of replicates, chunked runs with progress and cancellation.

Replicates are grouped in blocks of :data:`BLOCK`. Block ``i`` of a scenario draws from its
own generator, seeded by child ``i`` of ``SeedSequence(seed).spawn(...)[scenario]``, so the
result of a run depends on the seed and the number of replicates only, never on how many
blocks are processed between two progress reports (the chunk) or on how many threads run
them.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from fourfold.errors import FourfoldError

BLOCK = 250
"""Replicates per random stream; fixed, so that results do not depend on the chunk size."""


class SimulationCancelled(FourfoldError):
    """The user cancelled a simulation; nothing was computed or stored."""


def block_sizes(reps):
    """Sizes of the blocks that make up ``reps`` replicates.

    Examples
    --------
    >>> block_sizes(600)
    [250, 250, 100]
    """
    full, rest = divmod(int(reps), BLOCK)
    return [BLOCK] * full + ([rest] if rest else [])


def scenario_generators(seed, scenarios, reps):
    """One list of generators per scenario, one generator per block.

    Parameters
    ----------
    seed : int
        Non-negative integer seed.
    scenarios : int
        Number of independent scenarios (e.g. 2: under H1 and under H0).
    reps : int
        Replicates per scenario.

    Returns
    -------
    list of list of numpy.random.Generator

    Examples
    --------
    >>> gens = scenario_generators(7, 2, 300)
    >>> [len(g) for g in gens]
    [2, 2]
    """
    count = len(block_sizes(reps))
    roots = np.random.SeedSequence(int(seed)).spawn(scenarios)
    return [[np.random.Generator(np.random.PCG64(c)) for c in root.spawn(count)] for root in roots]


def default_workers():
    """Threads used for a run: the machine's cores, at most 4 (numpy's samplers drop the GIL)."""
    return max(1, min(4, os.cpu_count() or 1))


def run_chunked(jobs, *, chunk, workers, progress=None, cancelled=None):
    """Run ``jobs`` (callables returning a result and carrying a ``size``) in chunks.

    Parameters
    ----------
    jobs : list of (int, callable)
        ``(replicates, job)`` pairs; ``job()`` returns the block's result.
    chunk : int
        Replicates between two progress reports (rounded up to whole blocks).
    workers : int
        Threads that run the blocks of one chunk.
    progress : callable, optional
        ``progress(done, total)`` after each chunk, in replicates.
    cancelled : callable, optional
        ``cancelled() -> bool``, asked before each chunk; ``True`` stops the run.

    Returns
    -------
    list
        The jobs' results in order.

    Raises
    ------
    SimulationCancelled
        When ``cancelled()`` returned ``True``; no result is returned.
    """
    total = sum(size for size, _ in jobs)
    per_chunk = max(1, -(-int(chunk) // BLOCK))
    results = []
    done = 0
    pool = ThreadPoolExecutor(max_workers=workers) if workers > 1 and len(jobs) > 1 else None
    try:
        for start in range(0, len(jobs), per_chunk):
            if cancelled is not None and cancelled():
                raise SimulationCancelled("simulation cancelled")
            part = jobs[start : start + per_chunk]
            if pool is None:
                results.extend(job() for _, job in part)
            else:
                results.extend(pool.map(lambda item: item[1](), part))
            done += sum(size for size, _ in part)
            if progress is not None:
                progress(done, total)
    finally:
        if pool is not None:
            pool.shutdown(wait=True)
    return results
