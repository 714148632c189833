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
_S30, _S27, _S31 = np.uint64(30), np.uint64(27), np.uint64(31)
_MASKS = np.array([(1 << (8 * k)) - 1 for k in range(8)] + [(1 << 64) - 1], dtype=np.uint64)
"""``_MASKS[k]`` keeps the low k bytes of a little-endian word (all of it for k = 8)."""
SAMPLE_SHIFT = np.uint64(32)


def mix64(h: np.ndarray) -> np.ndarray:
    """The splitmix64 finaliser (a bijection of 64-bit integers that spreads every bit)."""
    h = h ^ (h >> np.uint64(30))
    h = h * _M1
    h = h ^ (h >> np.uint64(27))
    h = h * _M2
    return h ^ (h >> np.uint64(31))


def _mix_in_place(h: np.ndarray, spare: np.ndarray) -> np.ndarray:
    """:func:`mix64` of ``h``, written over ``h`` (``spare``: scratch of its shape), so that
    hashing a chunk makes no temporary arrays.

    Examples
    --------
    >>> h = np.arange(5, dtype=np.uint64)
    >>> bool((_mix_in_place(h.copy(), np.empty_like(h)) == mix64(h)).all())
    True
    """
    np.right_shift(h, _S30, out=spare)
    h ^= spare
    h *= _M1
    np.right_shift(h, _S27, out=spare)
    h ^= spare
    h *= _M2
    np.right_shift(h, _S31, out=spare)
    h ^= spare
    return h


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
    if pa.types.is_binary(array.type):
        array = array.cast(pa.large_binary())  # ids as bytes: hashed as they are
    elif not (pa.types.is_string(array.type) or pa.types.is_large_string(array.type)
              or pa.types.is_large_binary(array.type)):
        array = array.cast(pa.large_string())
    buffers = array.buffers()
    n = len(array)
    valid = np.ones(n, bool)
    if array.null_count:
        valid = np.asarray(array.is_valid().to_numpy(zero_copy_only=False), bool)
    offset_type = np.int32 if pa.types.is_string(array.type) else np.int64
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
    width, shortest = int(lengths.max()), int(lengths.min())
    # Every byte offset of `padded` read as a little-endian 64-bit word (unaligned view).
    words = np.ndarray(shape=(padded.size - 7,), dtype="<u8", buffer=padded.data, strides=(1,))
    h = lengths.astype(np.uint64)
    h ^= _SEED
    spare = np.empty_like(h)
    _mix_in_place(h, spare)
    for j in range(0, width, 8):
        if j < shortest:  # every id has bytes here
            word = words[start + j]
            if j + 8 > shortest:  # some ids end inside this word: keep only their bytes
                word &= _MASKS[np.minimum(lengths - j, 8)]
            h ^= word
            _mix_in_place(h, spare)
            continue
        live = np.flatnonzero(lengths > j)  # the ids that go on past byte j
        part = h[live]
        part ^= words[start[live] + j] & _MASKS[np.minimum(lengths[live] - j, 8)]
        h[live] = _mix_in_place(part, np.empty_like(part))
    return h


class UnitTable:
    """Distinct unit hashes with a dense index, each unit's first day and matrices of numbers.

    The matrices are its users' (:meth:`add_matrix`): a row of numbers per unit in each, so
    the updates a file row makes to its unit's row touch one place in memory.

    The keys and matrices are reserved for ``limit`` units at once, as zero pages that the
    system backs with memory only where units are written (rows are filled from the top), so
    growing never copies them and a matrix no row writes to takes no memory; the slots of the
    hash table double as units arrive. The matrices lie one after another in one array
    (:attr:`flat`), so that one ``np.add.at`` call can update several of them.

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
        self._widths: list[int] = []
        self._first: np.ndarray | None = None
        self._keys: np.ndarray | None = None
        self._flat: np.ndarray | None = None
        self._matrices: list[np.ndarray] = []
        self._slots = np.full(_slots_for(1 << 15), -1, np.int32)

    # -- per-unit numbers ------------------------------------------------------------------

    def add_matrix(self, width: int) -> int:
        """Add a matrix of ``width`` zeros per unit; its number.

        Every number starts at zero, so fresh memory is not written before it is used.

        Examples
        --------
        >>> table = UnitTable(limit=4)
        >>> table.add_matrix(2), table.add_matrix(3)
        (0, 1)
        >>> table.matrix(1).shape, table.offset(1)
        ((4, 3), 8)
        """
        if self._flat is not None:
            raise RuntimeError("add matrices before the first unit")
        self._widths.append(int(width))
        return len(self._widths) - 1

    def clear_columns(self) -> None:
        """Set every matrix back to zero (first days stay)."""
        self._reserve()
        for values in self._matrices:
            values[:self.size] = 0.0

    def matrix(self, number: int) -> np.ndarray:
        """The units' rows of matrix ``number``, shape (limit, width); the first
        :attr:`size` rows are in use."""
        self._reserve()
        return self._matrices[number]

    @property
    def flat(self) -> np.ndarray:
        """Every matrix, one after another, as one array."""
        self._reserve()
        return self._flat

    def offset(self, number: int) -> int:
        """Where matrix ``number`` starts in :attr:`flat`."""
        self._reserve()
        return self.limit * sum(self._widths[:number])

    def _reserve(self) -> None:
        if self._flat is None:
            self._keys = np.zeros(self.limit, np.uint64)
            self._first = np.zeros(self.limit, np.int32)
            self._flat = np.zeros(self.limit * sum(self._widths))
            self._matrices = []
            start = 0
            for width in self._widths:
                end = start + self.limit * width
                self._matrices.append(self._flat[start:end].reshape(self.limit, width))
                start = end

    @property
    def bytes_per_unit(self) -> int:
        """Bytes held per unit at most: hash, first day, slots and the unit's rows."""
        return 8 + 4 + 16 + 8 * sum(self._widths)

    @property
    def nbytes(self) -> int:
        """Bytes the table holds now: the keys, first days and matrices reserved for
        :attr:`limit` units (the system backs only the pages written) and the slots."""
        reserved = 0 if self._flat is None else \
            self._keys.nbytes + self._first.nbytes + self._flat.nbytes
        return reserved + self._slots.nbytes

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
        return self.locate(keys, days, add=add, on_full=on_full)[0]

    def locate(self, keys: np.ndarray, days: np.ndarray, *, add: bool = True,
               on_full=None) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`index`, and each row's days since its unit's first day as it stands once
        the chunk is in (int32; 0 for a row outside the sample).

        Examples
        --------
        >>> table = UnitTable(limit=1000)
        >>> index, since = table.locate(np.array([7, 8, 7], dtype=np.uint64),
        ...                             np.array([3, 4, 5]))
        >>> index.tolist(), since.tolist()
        ([0, 1, 0], [0, 0, 2])
        """
        self._reserve()
        if self.level == 0:
            keep, found = None, self._find(keys)
        else:
            keep = self.sampled(keys)
            found = np.full(keys.size, -1, np.int64)
            found[keep] = self._find(keys[keep])
        if add:
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
        held = None if keep is None and add else found >= 0
        every = held is None or bool(held.all())
        at = found if every else found[held]
        code = earliest(days if every else np.asarray(days)[held])
        first = self._first[at]
        if add:
            # New units (first 0) and rows before a unit's first day lower first days.
            earlier = np.flatnonzero(code > first)
            moved = bool((first[earlier] > 0).any())
            self.out_of_order |= moved
            units = at[earlier]
            np.maximum.at(self._first, units, code[earlier])
            if moved:  # a known unit's first day came earlier: read every row's again
                first = self._first[at]
            else:  # only new units' first days are new
                first[earlier] = self._first[units]
        first -= code  # code difference = days since the first day
        if every:
            return found, first
        since = np.zeros(keys.size, np.int32)
        since[held] = first
        return found, since

    def _find(self, keys: np.ndarray) -> np.ndarray:
        mask = self._slots.size - 1
        slot = (keys & np.uint64(mask)).view(np.int64)
        # The first probe finds nearly every key (the table is at most half full). An empty
        # slot (−1) reads the last reserved key, which `filled` then sets aside.
        out = self._slots[slot]
        filled = out >= 0
        same = self._keys[out] == keys
        same &= filled
        todo = np.flatnonzero(filled ^ same)
        out[todo] = -1  # a slot held by another key: probe on
        while todo.size:
            slot[todo] = (slot[todo] + 1) & mask
            held = self._slots[slot[todo]]
            filled = held >= 0
            same = self._keys[held] == keys[todo]
            same &= filled
            out[todo[same]] = held[same]
            todo = todo[filled ^ same]
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
    days = np.asarray(days, dtype=np.int64)
    return np.subtract(np.int64(_EARLY), days, out=np.empty(days.shape, np.int32),
                       casting="same_kind")


def latest(codes: np.ndarray) -> np.ndarray:
    """The days of :func:`earliest` codes (int64)."""
    return _EARLY - np.asarray(codes, dtype=np.int64)


def _slots_for(units: int) -> int:
    """Slots for a load of a quarter to a half (at least 2¹⁵): the table is rebuilt at a
    half, so slots take 8 to 16 bytes per unit."""
    return 1 << max(15, int(4 * units - 1).bit_length())
