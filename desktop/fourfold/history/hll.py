"""HyperLogLog: distinct units by day in fixed memory, for histories too large to count exactly.

Each unit's 64-bit hash (:func:`fourfold.history.ids.hash_ids`) picks one of m = 2ᵖ registers
with its top p bits and offers the register the position of the first 1-bit among the other
64 − p bits; a register keeps the largest position offered. The harmonic mean of 2^register
over the registers, times α_m·m², estimates the number of distinct hashes (Flajolet et al.
2007); while many registers are still zero, linear counting m·ln(m/zeros) is used instead
(the paper's small-range correction). With 64-bit hashes no large-range correction is needed
(Heule, Nunkesser & Hall 2013).

:class:`DailySketch` keeps one set of registers per calendar day. The units reached by day d
are the union of the days up to d, and the union of sketches is the element-wise maximum of
their registers, so the reach curve is a running maximum over the days followed by one
estimate per day.

Error: the relative standard error of an estimate is 1.04/√m — with the default p = 14
(16,384 registers, 16 KiB a day), **0.81 %**; about 95 % of estimates fall within ±1.6 % of
the true count. Each day's estimate is of a nested union, and the curve is made non-decreasing
(a running maximum of the estimates), as the true curve is.

References
----------
Flajolet, P., Fusy, É., Gandouet, O. & Meunier, F. (2007). HyperLogLog: the analysis of a
near-optimal cardinality estimation algorithm. *AofA 2007*, DMTCS proc. AH, 127–146.

Heule, S., Nunkesser, M. & Hall, A. (2013). HyperLogLog in practice: algorithmic engineering
of a state of the art cardinality estimation algorithm. *EDBT 2013*, 683–692.
"""

from __future__ import annotations

import math

import numpy as np

DEFAULT_PRECISION = 14


def relative_error(precision: int = DEFAULT_PRECISION) -> float:
    """The relative standard error 1.04/√m of an estimate with m = 2^precision registers.

    Examples
    --------
    >>> round(relative_error(14), 4)
    0.0081
    """
    return 1.04 / math.sqrt(1 << precision)


def ranks(keys: np.ndarray, precision: int = DEFAULT_PRECISION) -> tuple[np.ndarray, np.ndarray]:
    """Register index (top ``precision`` bits) and rank (1 + leading zeros of the rest)."""
    keys = np.asarray(keys, dtype=np.uint64)
    register = (keys >> np.uint64(64 - precision)).astype(np.int64)
    rest = keys << np.uint64(precision)
    high = (rest >> np.uint64(32)).astype(np.float64)
    low = (rest & np.uint64(0xFFFFFFFF)).astype(np.float64)
    # frexp's exponent is the bit length of a whole number below 2⁵³, exactly.
    high_bits = np.frexp(high)[1]
    low_bits = np.frexp(low)[1]
    zeros = np.where(high_bits > 0, 32 - high_bits, 64 - low_bits)
    rank = np.minimum(zeros, 64 - precision) + 1
    return register, rank.astype(np.uint8)


def estimate(registers: np.ndarray) -> np.ndarray:
    """Distinct-count estimates of register rows (shape ``(..., m)``).

    Examples
    --------
    >>> registers = np.zeros((1, 1 << 14), np.uint8)
    >>> estimate(registers).tolist()
    [0.0]
    """
    registers = np.asarray(registers)
    m = registers.shape[-1]
    alpha = 0.7213 / (1.0 + 1.079 / m)
    raw = alpha * m * m / np.sum(np.ldexp(1.0, -registers.astype(np.int32)), axis=-1)
    zeros = np.sum(registers == 0, axis=-1)
    linear = m * np.log(m / np.maximum(zeros, 1))
    return np.where((raw <= 2.5 * m) & (zeros > 0), linear, raw)


class DailySketch:
    """HyperLogLog registers per day: add (day, hash) pairs, read the cumulative reach.

    Examples
    --------
    >>> from fourfold.history.ids import mix64
    >>> sketch = DailySketch()
    >>> keys = mix64(np.arange(1, 20_001, dtype=np.uint64))
    >>> sketch.add(np.repeat([0, 1], 10_000), keys)
    >>> sketch.add(np.array([1]), keys[:1])              # a returning unit
    >>> [bool(abs(n / true - 1) < 0.03) for n, true in zip(sketch.reach(0, 2), (10_000, 20_000))]
    [True, True]
    """

    def __init__(self, precision: int = DEFAULT_PRECISION) -> None:
        if not 4 <= precision <= 18:
            raise ValueError(f"precision must be between 4 and 18, not {precision}")
        self.precision = precision
        self._days: dict[int, np.ndarray] = {}

    @property
    def relative_error(self) -> float:
        """The relative standard error of each estimate."""
        return relative_error(self.precision)

    @property
    def nbytes(self) -> int:
        """Memory held by the registers."""
        return len(self._days) << self.precision

    def add(self, days: np.ndarray, keys: np.ndarray) -> None:
        """Offer each hash to the registers of its day (days as whole numbers)."""
        days = np.asarray(days, dtype=np.int64)
        if days.size == 0:
            return
        register, rank = ranks(keys, self.precision)
        for day in np.unique(days).tolist():
            rows = days == day
            registers = self._days.get(day)
            if registers is None:
                registers = self._days[day] = np.zeros(1 << self.precision, np.uint8)
            np.maximum.at(registers, register[rows], rank[rows])

    def reach(self, first_day: int, days: int) -> np.ndarray:
        """Estimated distinct units seen on days ``first_day … first_day + k − 1``, for
        k = 1 … ``days`` (non-decreasing)."""
        running = np.zeros(1 << self.precision, np.uint8)
        rows = np.empty((days, running.size), np.uint8)
        for k in range(days):
            registers = self._days.get(first_day + k)
            if registers is not None:
                np.maximum(running, registers, out=running)
            rows[k] = running
        return np.maximum.accumulate(estimate(rows))
