"""The time column of a history file as whole day numbers.

A time cell is a date or a timestamp — ISO 8601 text (``2026-03-01``, ``2026-03-01 08:15:00``,
``2026-03-01T08:15:00+01:00``) or a date/timestamp column of a Parquet file — or a whole day
number (``1``, ``2``, … or days since any origin). Text counts the calendar date as written
(the first ten characters; an offset does not move it); a timestamp with a time zone counts its
date in UTC. Day numbers count as given. One file holds one of the two forms: dates, or day
numbers. An empty or unreadable cell is an error naming its line.
"""

from __future__ import annotations

import datetime as dt

import numpy as np

from fourfold.history.errors import HistoryError

DATES = "dates"
NUMBERS = "day numbers"
_EPOCH = dt.date(1970, 1, 1)


class DayReader:
    """Reads the time column chunk by chunk, holding the file to one form (dates or numbers).

    Examples
    --------
    >>> import pandas as pd
    >>> days = DayReader("time")
    >>> days(pd.Series(["2026-03-01 23:59:00", "2026-03-02T00:01:00Z"]), str).tolist()
    [20513, 20514]
    >>> days.form
    'dates'
    """

    def __init__(self, column: str) -> None:
        self.column = column
        self.form: str | None = None

    def __call__(self, series, where) -> np.ndarray:
        """Day numbers (int64) of a chunk; ``where(i)`` names row ``i`` for messages."""
        import pyarrow as pa

        try:
            array = pa.array(series, from_pandas=True)
        except (pa.ArrowInvalid, pa.ArrowTypeError):
            array = pa.array([None if v is None or v != v else str(v) for v in series])
        if isinstance(array, pa.ChunkedArray):
            array = array.combine_chunks()
        if array.null_count:
            i = int(np.argmax(~np.asarray(array.is_valid().to_numpy(zero_copy_only=False))))
            raise HistoryError(f"column {self.column!r} is empty on {where(i)}: every row "
                               "needs a time")
        kind = array.type
        if pa.types.is_integer(kind) or pa.types.is_floating(kind):
            return self._numbers(array.to_numpy(zero_copy_only=False), where)
        if pa.types.is_timestamp(kind) or pa.types.is_date(kind):
            self._hold(DATES, where)
            return self._from_timestamps(array)
        if pa.types.is_string(kind) or pa.types.is_large_string(kind):
            return self._from_text(array, where)
        raise HistoryError(f"column {self.column!r} holds {kind}, which is neither a date, a "
                           "timestamp nor a day number")

    def _hold(self, form: str, where, row: int = 0) -> None:
        if self.form is None:
            self.form = form
        elif self.form != form:
            raise HistoryError(f"column {self.column!r} mixes {self.form} and {form} "
                               f"({form} from {where(row)} on)")

    def _numbers(self, values: np.ndarray, where) -> np.ndarray:
        x = np.asarray(values, dtype=np.float64)
        bad = ~np.isfinite(x) | (x != np.round(x)) | (np.abs(x) > 1e7)
        if bad.any():
            i = int(np.argmax(bad))
            raise HistoryError(f"column {self.column!r} has {x[i]:g} on {where(i)}, which is "
                               "not a whole day number")
        self._hold(NUMBERS, where)
        return x.astype(np.int64)

    @staticmethod
    def _from_timestamps(array) -> np.ndarray:
        import pyarrow as pa
        import pyarrow.compute as pc

        if pa.types.is_timestamp(array.type) and array.type.tz is not None:
            array = pc.cast(array, pa.timestamp(array.type.unit))  # the UTC instant
        return pc.cast(pc.cast(array, pa.date32()), pa.int32()).to_numpy().astype(np.int64)

    def _from_text(self, array, where) -> np.ndarray:
        import pyarrow as pa
        import pyarrow.compute as pc

        text = pc.utf8_trim_whitespace(array)
        if self.form == NUMBERS or (self.form is None and _all_whole(text)):
            try:
                numbers = pc.cast(text, "int64").to_numpy()
            except Exception:  # pyarrow's invalid-cast error; name the first bad cell
                numbers = None
            if numbers is not None:
                return self._numbers(numbers, where)
        length = pc.utf8_length(text).to_numpy()
        # What may follow the date: nothing, or a time after "T" or a space.
        after = pc.is_in(pc.utf8_slice_codeunits(text, 10, 11),
                         value_set=pa.array(["", "T", "t", " "]))
        shape = (length >= 10) & after.to_numpy(zero_copy_only=False)
        encoded = pc.utf8_slice_codeunits(text, 0, 10).dictionary_encode()
        codes = encoded.indices.to_numpy(zero_copy_only=False)
        parsed = np.array([_iso_day(day) for day in encoded.dictionary.to_pylist()],
                          dtype=np.int64)
        days = parsed[codes] if parsed.size else np.empty(0, np.int64)
        bad = ~shape | (days == _NOT_A_DAY)
        if bad.any():
            i = int(np.argmax(bad))
            raise HistoryError(
                f"column {self.column!r} has {str(array[i].as_py())[:40]!r} on {where(i)}, "
                "which is not a date (YYYY-MM-DD, maybe followed by a time) nor a day number"
            )
        self._hold(DATES, where)
        return days


_NOT_A_DAY = np.iinfo(np.int64).min


def _iso_day(text: str) -> int:
    try:
        if len(text) != 10 or text[4] != "-" or text[7] != "-":
            return _NOT_A_DAY
        return (dt.date.fromisoformat(text) - _EPOCH).days
    except ValueError:
        return _NOT_A_DAY


def _all_whole(text) -> bool:
    import pyarrow.compute as pc

    return bool(pc.all(pc.match_substring_regex(text, r"^[+-]?[0-9]+$")).as_py())
