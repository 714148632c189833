"""Unit ids as 64-bit hashes, and a table of distinct units in numpy arrays.

Counting distinct units must not keep the ids themselves: a Python set of 10⁷ string ids takes
on the order of a gigabyte. Each id is hashed to a 64-bit integer instead (:func:`hash_ids`,
vectorised over the UTF-8 bytes of a chunk's ids), and :class:`UnitTable` keeps, per distinct
hash, a dense index, the unit's first day and whatever per-unit arrays its user registers
(:mod:`fourfold.history.exposure` keeps the sums of each unit's first days there).

Memory: 8 bytes per unit for the hash, 4 for the first day and at most 8 for the open-addressing
slots (int32, load at most one half), so **10⁷ distinct ids take about 200 MB** (80 MB of
hashes, 40 MB of first days, 64–128 MB of slots, depending on where the table last doubled).
Two different ids share a hash with probability about n²/2⁶⁵ over the whole file (3·10⁻⁶ for
n = 10⁷); the two units would then count as one.

The table holds at most ``limit`` units. Past that, it keeps a *sample* of units chosen by their
hash (level k keeps the units whose bits 32…32+k−1 are all zero, one in 2ᵏ): raising the level
drops half the units and frees their rows, and a dropped unit is never taken back, so a unit in
the table has been followed from its first row. The caller counts distinct units with a sketch
from then on (:mod:`fourfold.history.hll`).

References
----------
Knuth, D. E. (1998). *The Art of Computer Programming* vol. 3, 2nd ed., §6.4 (open addressing
with linear probing; a load of one half keeps probes short).

Steele, G. L., Lea, D. & Flood, C. H. (2014). Fast splittable pseudorandom number generators.
*OOPSLA 2014* (the 64-bit finaliser used to mix the hash, "splitmix64").
"""

from __future__ import annotations

import numpy as np

from fourfold.history.errors import HistoryError

_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)
_SEED = np.uint64(0x9E3779B97F4A7C15)
_ALL = np.uint64(0xFFFFFFFFFFFFFFFF)
SAMPLE_SHIFT = np.uint64(32)


def mix64(h: np.ndarray) -> np.ndarray:
    """The splitmix64 finaliser (a bijection of 64-bit integers that spreads every bit)."""
    h = h ^ (h >> np.uint64(30))
    h = h * _M1
    h = h ^ (h >> np.uint64(27))
    h = h * _M2
    return h ^ (h >> np.uint64(31))


def _arrow_strings(series):
    """The chunk's ids as one pyarrow string array; numbers become their decimal text."""
    import pyarrow as pa

    kind = series.dtype.kind
    if kind in "iub":
        array = pa.array(np.asarray(series))
    elif kind == "f":  # whole numbers read as floats because a cell is empty
        array = pa.array([None if v != v else (str(int(v)) if v.is_integer() else repr(v))
                          for v in np.asarray(series, dtype=np.float64).tolist()])
    else:
        try:
            array = pa.array(series.array, from_pandas=True)
        except (pa.ArrowInvalid, pa.ArrowTypeError):
            array = pa.array([None if v is None or v != v else str(v) for v in series])
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    if not (pa.types.is_string(array.type) or pa.types.is_large_string(array.type)):
        array = array.cast(pa.large_string())
    return array


def hash_ids(series, column: str, where) -> np.ndarray:
    """64-bit hashes of a chunk of unit ids (uint64), equal ids giving equal hashes.

    The UTF-8 bytes of each id are taken 8 at a time and chained through :func:`mix64`
    together with the id's length. Numeric ids hash as their decimal text, so ``17`` read as a
    number in one chunk and as text in another is the same unit.

    Parameters
    ----------
    series : pandas.Series
        The ids of one chunk (text or whole numbers).
    column : str
        The column's name, for messages.
    where : callable
        ``where(i)`` names row ``i`` of the chunk for a message ("line 12").

    Raises
    ------
    HistoryError
        When an id is empty.

    Examples
    --------
    >>> import pandas as pd
    >>> h = hash_ids(pd.Series(["a", "bb", "a", "17"]), "unit", str)
    >>> h.dtype, h[0] == h[2], h[0] == h[1]
    (dtype('uint64'), np.True_, np.False_)
    >>> bool(hash_ids(pd.Series([17]), "unit", str)[0] == h[3])
    True
    """
    import pyarrow as pa

    array = _arrow_strings(series)
    n = len(array)
    if n == 0:
        return np.empty(0, np.uint64)
    buffers = array.buffers()
    valid = np.ones(n, bool)
    if array.null_count:
        valid = np.asarray(array.is_valid().to_numpy(zero_copy_only=False), bool)
    offset_type = np.int64 if pa.types.is_large_string(array.type) else np.int32
    offsets = np.frombuffer(buffers[1], dtype=offset_type, count=n + 1,
                            offset=array.offset * np.dtype(offset_type).itemsize).astype(np.int64)
    lengths = np.diff(offsets)
    empty = ~valid | (lengths == 0)
    if empty.any():
        i = int(np.argmax(empty))
        raise HistoryError(f"column {column!r} is empty on {where(i)}: every row needs a unit")
    data = np.frombuffer(buffers[2], dtype=np.uint8) if buffers[2] is not None else \
        np.empty(0, np.uint8)
    width = int(lengths.max())
    padded = np.zeros(data.size + 8, np.uint8)
    padded[:data.size] = data
    # Every byte offset of `padded` read as a little-endian 64-bit word (unaligned view).
    words = np.ndarray(shape=(padded.size - 7,), dtype="<u8", buffer=padded.data, strides=(1,))
    h = mix64(lengths.astype(np.uint64) ^ _SEED)
    start = offsets[:-1]
    for j in range(0, width, 8):
        rest = np.clip(lengths - j, 0, 8).astype(np.uint64)
        mask = np.where(rest >= 8, _ALL, (np.uint64(1) << (rest * np.uint64(8))) - np.uint64(1))
        live = lengths > j
        word = np.zeros(n, np.uint64)
        word[live] = words[start[live] + j]
        h = np.where(live, mix64(h ^ (word & mask)), h)
    return h


class UnitTable:
    """Distinct unit hashes with a dense index, each unit's first day, and per-unit arrays.

    Parameters
    ----------
    limit : int
        The most units held; past it the table keeps a hashed sample (see the module text).
    initial : int
        Units the arrays have room for at first (they double as needed).

    Examples
    --------
    >>> table = UnitTable(limit=1000)
    >>> keys = np.array([11, 22, 11, 33], dtype=np.uint64)
    >>> index = table.index(keys, np.array([5, 3, 4, 9]))
    >>> index.tolist(), table.size, table.first_days().tolist()
    ([0, 1, 0, 2], 3, [4, 3, 9])
    """

    def __init__(self, limit: int = 1 << 24, initial: int = 1 << 16) -> None:
        if limit < 2:
            raise ValueError(f"limit must be at least 2, not {limit}")
        self.limit = int(limit)
        self.level = 0
        self.size = 0
        self.out_of_order = False
        self._capacity = max(2, min(int(initial), self.limit))
        self._keys = np.zeros(self._capacity, np.uint64)
        self._first = np.zeros(self._capacity, np.int32)
        self._extra: dict[str, tuple[np.ndarray, object]] = {}
        self._slots = np.full(_slots_for(self._capacity), -1, np.int32)

    # -- per-unit arrays ---------------------------------------------------------------

    def add_array(self, name: str, dtype, width: int = 0, fill=0) -> None:
        """Register a per-unit array (shape ``(units,)`` or ``(units, width)``)."""
        shape = (self._capacity, width) if width else (self._capacity,)
        self._extra[name] = (np.full(shape, fill, dtype=dtype), fill)

    def clear_arrays(self) -> None:
        """Set every registered per-unit array back to its fill value."""
        for values, fill in self._extra.values():
            values[...] = fill

    def array(self, name: str) -> np.ndarray:
        """A registered per-unit array (its first :attr:`size` rows are in use)."""
        return self._extra[name][0]

    @property
    def bytes_per_unit(self) -> int:
        """Bytes held per unit at most: hash, first day, slots and the registered arrays."""
        extra = sum(a.nbytes // max(len(a), 1) for a, _ in self._extra.values())
        return 8 + 4 + 8 + extra

    def keys(self) -> np.ndarray:
        """The hashes of the units held."""
        return self._keys[:self.size]

    def first_days(self) -> np.ndarray:
        """Each unit's first day (as given to :meth:`index`)."""
        return self._first[:self.size]

    # -- lookup ------------------------------------------------------------------------

    def sampled(self, keys: np.ndarray) -> np.ndarray:
        """Which hashes belong to the table's sample at its current level."""
        if self.level == 0:
            return np.ones(keys.shape, bool)
        bits = np.uint64((1 << self.level) - 1)
        return ((keys >> SAMPLE_SHIFT) & bits) == 0

    def index(self, keys: np.ndarray, days: np.ndarray, *, add: bool = True,
              on_full=None) -> np.ndarray:
        """Dense index of each key (−1 for a key outside the sample), adding new units.

        A new unit's first day is its earliest day in ``days``; a known unit's first day is
        lowered when a row comes earlier (and :attr:`out_of_order` is set). With
        ``add=False`` unknown keys get −1 and first days are left alone. ``on_full()`` is
        called before the table would grow past :attr:`limit`; it must raise the level (see
        :meth:`raise_level`) or stop.
        """
        unique, inverse = np.unique(keys, return_inverse=True)
        keep = self.sampled(unique)
        found = np.full(unique.size, -1, np.int64)
        if keep.any():
            found[keep] = self._find(unique[keep])
        if add:
            new = keep & (found < 0)
            while new.any() and self.size + int(new.sum()) > self._room:
                if not self._grow(on_full):
                    keep &= self.sampled(unique)
                    found[~keep] = -1
                    found[keep] = self._find(unique[keep])
                    new = keep & (found < 0)
            before = self.size
            if new.any():
                found[new] = self._insert(unique[new])
        index = found[inverse]
        if add:
            rows = index >= 0
            at, day = index[rows], np.asarray(days)[rows].astype(np.int32)
            old = self._first[at]
            fresh = at >= before
            if (day[~fresh] < old[~fresh]).any():
                self.out_of_order = True
            self._first[at[fresh]] = np.iinfo(np.int32).max
            np.minimum.at(self._first, at, day)
        return index

    def _find(self, keys: np.ndarray) -> np.ndarray:
        mask = self._slots.size - 1
        slot = (keys & np.uint64(mask)).astype(np.int64)
        out = np.full(keys.size, -1, np.int64)
        todo = np.arange(keys.size)
        while todo.size:
            held = self._slots[slot[todo]]
            empty = held < 0
            hit = ~empty & (self._keys[np.maximum(held, 0)] == keys[todo])
            out[todo[hit]] = held[hit]
            todo = todo[~empty & ~hit]
            slot[todo] = (slot[todo] + 1) & mask
        return out

    def _insert(self, keys: np.ndarray) -> np.ndarray:
        """Add keys known to be absent (and distinct); their dense indices."""
        index = np.arange(self.size, self.size + keys.size)
        self._keys[index] = keys
        self.size += keys.size
        self._place(keys, index)
        return index

    def _place(self, keys: np.ndarray, index: np.ndarray) -> None:
        mask = self._slots.size - 1
        slot = (keys & np.uint64(mask)).astype(np.int64)
        todo = np.arange(keys.size)
        while todo.size:
            free = self._slots[slot[todo]] < 0
            claim = todo[free]
            # Several keys may reach the same free slot: one write lands, and reading the
            # slots back tells which (no sort needed).
            self._slots[slot[claim]] = index[claim]
            won = self._slots[slot[claim]] == index[claim]
            todo = np.concatenate((todo[~free], claim[~won]))
            slot[todo] = (slot[todo] + 1) & mask

    # -- growth and sampling -------------------------------------------------------------

    @property
    def _room(self) -> int:
        return min(self._capacity, self.limit)

    def _grow(self, on_full) -> bool:
        """Double the arrays, or (at the limit) ask ``on_full`` to thin the sample."""
        if self._capacity >= self.limit:
            if on_full is None:
                raise HistoryError(f"more than {self.limit:,} distinct units")
            on_full()
            return False
        capacity = min(self._capacity * 2, self.limit)
        self._keys = _resized(self._keys, capacity, 0)
        self._first = _resized(self._first, capacity, 0)
        for name, (values, fill) in self._extra.items():
            self._extra[name] = (_resized(values, capacity, fill), fill)
        self._capacity = capacity
        self._rebuild_slots()
        return True

    def raise_level(self) -> None:
        """Keep one unit in two more (by hash) and compact every per-unit array."""
        self.level += 1
        keep = self.sampled(self.keys())
        count = int(keep.sum())
        self._keys[:count] = self._keys[:self.size][keep]
        self._first[:count] = self._first[:self.size][keep]
        for values, fill in self._extra.values():
            values[:count] = values[:self.size][keep]
            values[count:] = fill
        self.size = count
        self._rebuild_slots()

    def _rebuild_slots(self) -> None:
        self._slots = np.full(_slots_for(self._capacity), -1, np.int32)
        self._place(self._keys[:self.size], np.arange(self.size))


def _slots_for(capacity: int) -> int:
    return 1 << max(4, int(capacity * 2 - 1).bit_length())


def _resized(values: np.ndarray, rows: int, fill) -> np.ndarray:
    out = np.full((rows, *values.shape[1:]), fill, dtype=values.dtype)
    out[:len(values)] = values
    return out
