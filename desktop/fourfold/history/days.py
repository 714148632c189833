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
from fourfold.history.ids import utf8_cells

DATES = "dates"
NUMBERS = "day numbers"


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
        import pandas as pd

        series = pd.Series(series) if not isinstance(series, pd.Series) else series
        missing = series.isna().to_numpy()
        if missing.any():
            raise HistoryError(f"column {self.column!r} is empty on "
                               f"{where(int(np.argmax(missing)))}: every row needs a time")
        kind = series.dtype.kind
        if kind in "iuf":
            return self._numbers(series.to_numpy(np.float64), where)
        if kind == "M":
            self._hold(DATES, where)
            if getattr(series.dtype, "tz", None) is not None:
                series = series.dt.tz_convert("UTC").dt.tz_localize(None)
            return series.to_numpy().astype("datetime64[D]").astype(np.int64)
        if len(series) and isinstance(series.iloc[0], dt.date):  # dates from a Parquet file
            return self(pd.Series(pd.to_datetime(series.to_numpy(dtype=object))), where)
        text = series if isinstance(series.dtype, pd.StringDtype) else series.astype(str)
        return self._from_text(text, where)

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

    def _from_text(self, text, where) -> np.ndarray:
        if self.form == NUMBERS or (self.form is None and _all_whole(text)):
            import pandas as pd

            numbers = pd.to_numeric(text.str.strip(), errors="coerce").to_numpy(np.float64)
            if not np.isnan(numbers).any():
                return self._numbers(numbers, where)
        days, bad = _iso_days(text)
        if bad.any():  # perhaps spaces around the dates
            days, bad = _iso_days(text.str.strip())
        if bad.any():
            i = int(np.argmax(bad))
            raise HistoryError(
                f"column {self.column!r} has {str(text.iloc[i])[:40]!r} on {where(i)}, "
                "which is not a date (YYYY-MM-DD, maybe followed by a time) nor a day number"
            )
        self._hold(DATES, where)
        return days


_DIGITS = [0, 1, 2, 3, 5, 6, 8, 9]
_MONTH_DAYS = np.array([0, 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


def _iso_days(text) -> tuple[np.ndarray, np.ndarray]:
    """Days since 1970-01-01 of text cells starting ``YYYY-MM-DD`` (then nothing, or a time
    after ``T`` or a space), read from the cells' bytes; and which cells are not such dates.

    A log in time order repeats each date over many rows: the date is parsed once per run of
    cells that start with the same ten bytes.
    """
    starts, length, _, data = utf8_cells(text)
    if starts.size == 0:
        return np.empty(0, np.int64), np.empty(0, bool)
    words = np.ndarray(shape=(data.size - 7,), dtype="<u8", buffer=data.data, strides=(1,))
    pairs = np.ndarray(shape=(data.size - 1,), dtype="<u2", buffer=data.data, strides=(1,))
    head, tail = words[starts], pairs[starts + 8]
    new = np.empty(starts.size, bool)
    new[0] = True
    new[1:] = (head[1:] != head[:-1]) | (tail[1:] != tail[:-1])
    first = np.flatnonzero(new)
    days, wrong = _parse_dates(data, starts[first])
    runs = np.diff(np.append(first, starts.size))
    after = data[starts + 10]
    bad = (np.repeat(wrong, runs) | (length < 10)
           | ((length > 10) & (after != ord("T")) & (after != ord("t")) & (after != ord(" "))))
    return np.repeat(days, runs), bad


def _parse_dates(data: np.ndarray, starts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Days of the ``YYYY-MM-DD`` at each start, and which are not such dates."""
    cells = data[starts[:, None] + np.arange(10)]
    digits = cells[:, _DIGITS] - np.uint8(ord("0"))  # wraps below "0", so one test: < 10
    bad = (digits > 9).any(axis=1) | (cells[:, 4] != ord("-")) | (cells[:, 7] != ord("-"))
    digits = digits.astype(np.int64)
    year = digits[:, 0] * 1000 + digits[:, 1] * 100 + digits[:, 2] * 10 + digits[:, 3]
    month = digits[:, 4] * 10 + digits[:, 5]
    day = digits[:, 6] * 10 + digits[:, 7]
    leap = (year % 4 == 0) & ((year % 100 != 0) | (year % 400 == 0))
    month_ok = (month >= 1) & (month <= 12)
    last = _MONTH_DAYS[np.where(month_ok, month, 0)] + (leap & (month == 2))
    bad |= ~month_ok | (day < 1) | (day > last)
    return _days_from_civil(year, month, day), bad


def _days_from_civil(year, month, day):
    """Days since 1970-01-01 of proleptic Gregorian dates (Hinnant's ``days_from_civil``).

    Examples
    --------
    >>> _days_from_civil(np.array([1970, 2000, 2026]), np.array([1, 3, 3]),
    ...                  np.array([1, 1, 2])).tolist()
    [0, 11017, 20514]
    """
    year = year - (month <= 2)
    era = year // 400
    year_of_era = year - era * 400
    day_of_year = (153 * (month + np.where(month > 2, -3, 9)) + 2) // 5 + day - 1
    day_of_era = year_of_era * 365 + year_of_era // 4 - year_of_era // 100 + day_of_year
    return era * 146097 + day_of_era - 719468


def _all_whole(text) -> bool:
    return bool(text.str.fullmatch(r"\s*[+-]?[0-9]+\s*").all())
