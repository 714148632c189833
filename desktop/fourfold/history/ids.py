"""Unit ids as 64-bit hashes, and a table of distinct units in numpy arrays.

Counting distinct units must not keep the ids themselves: a Python set of 10⁷ string ids takes
on the order of a gigabyte. Each id is hashed to a 64-bit integer instead (:func:`hash_ids`,
vectorised over the UTF-8 bytes of a chunk's ids), and :class:`UnitTable` keeps, per distinct
hash, a dense index, the unit's first day and whatever per-unit arrays its user registers
(:mod:`fourfold.history.exposure` keeps the sums of each unit's first days there).

Memory: 8 bytes per unit for the hash, 4 for the first day and 8 to 16 for the slots of the
open-addressing table (int32, rebuilt when half full), so **10⁷ distinct ids take 200 to
280 MB** (80 MB of hashes, 40 MB of first days, 80–160 MB of slots). Two different ids share a
hash with probability about n²/2⁶⁵ over the whole file (3·10⁻⁶ for n = 10⁷); the two units
would then count as one.

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


def _texts(series):
    """The chunk's cells as text: numbers as their decimal text (whole floats without ".0")."""
    import pandas as pd

    kind = series.dtype.kind
    if kind == "f":  # whole numbers read as floats because a cell is empty
        x = series.to_numpy(np.float64)
        return pd.Series([None if v != v else (str(int(v)) if v.is_integer() else repr(v))
                          for v in x.tolist()], dtype=object)
    if kind in "iub":
        return series.astype(str)
    return series


def utf8_cells(series, pad: int = 16):
    """The UTF-8 bytes of a chunk of text cells, without copying the cells one by one.

    Returns ``(starts, lengths, valid, data)``: where each cell's bytes start in ``data`` and
    how many there are (int64), which cells are not null, and the bytes followed by ``pad``
    zero bytes (so that a fixed-width read past a cell's end stays inside the array). With
    pyarrow the cells' own buffers are used; without it numpy encodes the cells to
    fixed-width bytes.

    Examples
    --------
    >>> import pandas as pd
    >>> starts, lengths, valid, data = utf8_cells(pd.Series(["ab", "é"]))
    >>> lengths.tolist(), bytes(data[starts[1]:starts[1] + lengths[1]]).decode()
    ([2, 2], 'é')
    """
    series = _texts(series)
    try:
        import pyarrow as pa
    except ImportError:
        return _numpy_cells(series, pad)
    try:
        array = pa.array(series.array if hasattr(series, "array") else series,
                         from_pandas=True)
    except (pa.ArrowInvalid, pa.ArrowTypeError):
        array = pa.array([None if v is None or v != v else str(v) for v in series])
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    if not (pa.types.is_string(array.type) or pa.types.is_large_string(array.type)):
        array = array.cast(pa.large_string())
    buffers = array.buffers()
    n = len(array)
    valid = np.ones(n, bool)
    if array.null_count:
        valid = np.asarray(array.is_valid().to_numpy(zero_copy_only=False), bool)
    offset_type = np.int64 if pa.types.is_large_string(array.type) else np.int32
    offsets = np.frombuffer(buffers[1], dtype=offset_type, count=n + 1,
                            offset=array.offset * np.dtype(offset_type).itemsize).astype(np.int64)
    data = np.frombuffer(buffers[2], dtype=np.uint8) if buffers[2] is not None else \
        np.empty(0, np.uint8)
    padded = np.zeros(data.size + pad, np.uint8)
    padded[:data.size] = data
    return offsets[:-1], np.diff(offsets), valid, padded


def _numpy_cells(series, pad: int):
    import pandas as pd

    values = series.to_numpy(dtype=object)
    valid = ~pd.isna(values)
    texts = np.where(valid, values, "").astype(str)
    encoded = np.char.encode(texts, "utf-8") if texts.size else np.empty(0, "S1")
    width = max(encoded.dtype.itemsize, 1)
    raw = np.frombuffer(encoded.tobytes(), np.uint8).reshape(-1, width)
    filled = raw != 0
    lengths = np.where(filled.any(axis=1), width - np.argmax(filled[:, ::-1], axis=1), 0)
    padded = np.zeros(raw.size + pad, np.uint8)
    padded[:raw.size] = raw.ravel()
    # Each cell starts at a multiple of the width; its bytes past its length are zeros.
    return np.arange(len(values), dtype=np.int64) * width, lengths.astype(np.int64), valid, \
        padded


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
    n = len(series)
    if n == 0:
        return np.empty(0, np.uint64)
    start, lengths, valid, padded = utf8_cells(series)
    empty = ~valid | (lengths == 0)
    if empty.any():
        i = int(np.argmax(empty))
        raise HistoryError(f"column {column!r} is empty on {where(i)}: every row needs a unit")
    width = int(lengths.max())
    # Every byte offset of `padded` read as a little-endian 64-bit word (unaligned view).
    words = np.ndarray(shape=(padded.size - 7,), dtype="<u8", buffer=padded.data, strides=(1,))
    h = mix64(lengths.astype(np.uint64) ^ _SEED)
    shortest = int(lengths.min())
    for j in range(0, width, 8):
        if j + 8 <= shortest:  # a whole word of every id: no masks, no choices
            h = mix64(h ^ words[start + j])
            continue
        rest = np.clip(lengths - j, 0, 8).astype(np.uint64)
        mask = np.where(rest >= 8, _ALL, (np.uint64(1) << (rest * np.uint64(8))) - np.uint64(1))
        if j < shortest:  # every id has bytes here
            h = mix64(h ^ (words[start + j] & mask))
            continue
        live = lengths > j
        word = np.zeros(n, np.uint64)
        word[live] = words[start[live] + j]
        h = np.where(live, mix64(h ^ (word & mask)), h)
    return h


class UnitTable:
    """Distinct unit hashes with a dense index, each unit's first day and a row of numbers.

    The columns of the rows are its users' (:meth:`add_columns`); a unit's numbers sit side
    by side, so the updates a file row makes to its unit touch one place in memory.

    The keys and rows are reserved for ``limit`` units at once, as zero pages that the system
    backs with memory only where units are written (rows are filled from the top), so growing
    never copies them; the slots of the hash table double as units arrive.

    Parameters
    ----------
    limit : int
        The most units held; past it the table keeps a hashed sample (see the module text).

    Examples
    --------
    >>> table = UnitTable(limit=1000)
    >>> keys = np.array([11, 22, 11, 33], dtype=np.uint64)
    >>> index = table.index(keys, np.array([5, 3, 4, 9]))
    >>> index.tolist(), table.size, table.first_days().tolist()
    ([0, 1, 0, 2], 3, [4, 3, 9])
    """

    def __init__(self, limit: int = 1 << 24) -> None:
        if limit < 2:
            raise ValueError(f"limit must be at least 2, not {limit}")
        self.limit = int(limit)
        self.level = 0
        self.size = 0
        self.out_of_order = False
        self._widths = [0, 0]
        self._first: np.ndarray | None = None
        self._keys: np.ndarray | None = None
        self._matrices: list[np.ndarray] | None = None
        self._slots = np.full(_slots_for(1 << 15), -1, np.int32)

    # -- per-unit numbers ------------------------------------------------------------------

    def add_columns(self, count: int, matrix: int = 0) -> int:
        """Add ``count`` columns of zeros to every unit's row of ``matrix`` (0: the numbers
        every file row updates; 1: numbers few rows update, kept apart so that they do not
        thin out the others in memory); the first new column's number.

        Every column starts at zero, so fresh memory is not written before it is used.
        """
        if self._matrices is not None:
            raise RuntimeError("add columns before the first unit")
        start = self._widths[matrix]
        self._widths[matrix] += count
        return start

    def clear_columns(self) -> None:
        """Set every added column back to zero (first days stay)."""
        for values in self._all():
            values[:self.size] = 0.0

    @property
    def rows(self) -> np.ndarray:
        """The units' rows of matrix 0, shape (limit, width); the first :attr:`size` are in
        use."""
        return self.matrix(0)

    def matrix(self, number: int) -> np.ndarray:
        """The units' rows of matrix ``number`` (see :meth:`add_columns`)."""
        return self._all()[number]

    def _all(self) -> list[np.ndarray]:
        self._reserve()
        return self._matrices

    def _reserve(self) -> None:
        if self._matrices is None:
            self._keys = np.zeros(self.limit, np.uint64)
            self._first = np.zeros(self.limit, np.int32)
            self._matrices = [np.zeros((self.limit, width)) for width in self._widths]

    @property
    def bytes_per_unit(self) -> int:
        """Bytes held per unit at most: hash, first day, slots and the unit's rows."""
        return 8 + 4 + 16 + 8 * sum(self._widths)

    def keys(self) -> np.ndarray:
        """The hashes of the units held."""
        return self._keys[:self.size] if self._keys is not None else np.empty(0, np.uint64)

    def first_days(self, index: np.ndarray | None = None) -> np.ndarray:
        """The first day (as given to :meth:`index`, int64) of every unit, or of the units at
        ``index``."""
        self._reserve()
        codes = self._first[:self.size] if index is None else self._first[index]
        return latest(codes)

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
        called before the table would hold more than :attr:`limit` units; it must raise the
        level (see :meth:`raise_level`) or stop.
        """
        self._reserve()
        if self.level == 0:
            keep, found = None, self._find(keys)
        else:
            keep = self.sampled(keys)
            found = np.full(keys.size, -1, np.int64)
            found[keep] = self._find(keys[keep])
        if not add:
            return found
        new = found < 0 if keep is None else keep & (found < 0)
        if new.any():
            unique, inverse = np.unique(keys[new], return_inverse=True)
            while self.size + unique.size > self.limit:
                if on_full is None:
                    raise HistoryError(f"more than {self.limit:,} distinct units")
                on_full()
                keep = self.sampled(keys)
                found[~keep] = -1
                found[keep] = self._find(keys[keep])
                new = keep & (found < 0)
                unique, inverse = np.unique(keys[new], return_inverse=True)
            found[new] = self._insert(unique)[inverse]
        held = found >= 0
        if held.all():
            at, code = found, earliest(days)
        else:
            at, code = found[held], earliest(np.asarray(days)[held])
        known = self._first[at]
        earlier = code > known  # new units (known 0) and rows before a unit's first day
        if (earlier & (known > 0)).any():
            self.out_of_order = True
        np.maximum.at(self._first, at[earlier], code[earlier])
        return found

    def _find(self, keys: np.ndarray) -> np.ndarray:
        mask = self._slots.size - 1
        slot = (keys & np.uint64(mask)).astype(np.int64)
        # The first probe finds nearly every key (the table is at most half full).
        held = self._slots[slot]
        out = np.where((held >= 0) & (self._keys[np.maximum(held, 0)] == keys), held, -1)
        todo = np.flatnonzero((out < 0) & (held >= 0))
        while todo.size:
            slot[todo] = (slot[todo] + 1) & mask
            held = self._slots[slot[todo]]
            empty = held < 0
            hit = ~empty & (self._keys[np.maximum(held, 0)] == keys[todo])
            out[todo[hit]] = held[hit]
            todo = todo[~empty & ~hit]
        return out

    def _insert(self, keys: np.ndarray) -> np.ndarray:
        """Add keys known to be absent (and distinct); their dense indices."""
        index = np.arange(self.size, self.size + keys.size)
        self._keys[index] = keys
        self.size += keys.size
        if 2 * self.size > self._slots.size:
            self._rebuild_slots()
        else:
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

    def raise_level(self) -> None:
        """Keep one unit in two more (by hash) and compact the keys and rows."""
        self.level += 1
        keep = self.sampled(self.keys())
        count = int(keep.sum())
        self._keys[:count] = self._keys[:self.size][keep]
        self._first[:count] = self._first[:self.size][keep]
        self._first[count:self.size] = 0
        for values in self._matrices:
            values[:count] = values[:self.size][keep]
            values[count:self.size] = 0.0
        self.size = count
        self._rebuild_slots()

    def _rebuild_slots(self) -> None:
        self._slots = np.full(_slots_for(self.size), -1, np.int32)
        self._place(self._keys[:self.size], np.arange(self.size))


_EARLY = np.int32(1 << 30)


def earliest(days: np.ndarray) -> np.ndarray:
    """int32 codes of whole day numbers (|day| < 2³⁰) under which the largest code is the
    earliest day and every code is positive, so that zeros mean "no day yet" and
    ``np.maximum.at`` keeps the earliest.

    Examples
    --------
    >>> latest(np.maximum(earliest(np.array([5])), earliest(np.array([3])))).tolist()
    [3]
    """
    return (_EARLY - np.asarray(days, dtype=np.int64)).astype(np.int32)


def latest(codes: np.ndarray) -> np.ndarray:
    """The days of :func:`earliest` codes (int64)."""
    return _EARLY - np.asarray(codes, dtype=np.int64)


def _slots_for(units: int) -> int:
    """Slots for a load of a quarter to a half (at least 2¹⁵): the table is rebuilt at a
    half, so slots take 8 to 16 bytes per unit."""
    return 1 << max(15, int(4 * units - 1).bit_length())
