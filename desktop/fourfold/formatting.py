"""Numbers as people read and type them in the plan table.

Display: thousands separators, about three significant digits, a real minus sign, percentages
with a space before the sign ("+5.0 %"), "—" where there is no value. Parsing accepts what people
paste from spreadsheets and type in a meeting: "1,234", "1e6", "42k", "3.1%", "−0.5", "5 pp".

Nothing here computes statistics; it only turns numbers into text and back.
"""

from __future__ import annotations

import math
import re

from fourfold.errors import FourfoldError

DASH = "—"
MINUS = "\u2212"

_GROUPED = re.compile(r"^\d{1,3}(,\d{3})+(\.\d*)?$")
_SUFFIX = {"k": 1e3, "m": 1e6}


class ParseError(FourfoldError, ValueError):
    """Text that cannot be read as a number; the message says what was expected."""


def _missing(value: float | None) -> bool:
    return value is None or not math.isfinite(value)


def _trim(text: str, keep: int) -> str:
    """Drop trailing zeros after the decimal point but keep ``keep`` decimals."""
    if "." not in text:
        return text
    head, tail = text.split(".")
    tail = tail.rstrip("0")
    tail = tail + "0" * max(0, keep - len(tail))
    return f"{head}.{tail}" if tail else head


def _signed(text: str, value: float, signed: bool) -> str:
    if value < 0:
        return MINUS + text.lstrip("-")
    return ("+" + text) if signed and value > 0 else text


def format_number(value: float | None, sig: int = 3, signed: bool = False) -> str:
    """Format a number with about ``sig`` significant digits and thousands separators.

    Parameters
    ----------
    value : float or None
        The number; ``None``, nan and infinities show as "—".
    sig : int
        Significant digits kept below 1,000 (larger numbers show as whole numbers).
    signed : bool
        Show "+" before positive numbers (for effects).

    Returns
    -------
    str

    Examples
    --------
    >>> format_number(1234567.8)
    '1,234,568'
    >>> format_number(2.3456)
    '2.35'
    >>> format_number(-0.000123)
    '−0.000123'
    >>> format_number(None)
    '—'
    """
    if _missing(value):
        return DASH
    magnitude = abs(value)
    if magnitude >= 10 ** (sig - 1) or magnitude == 0:
        text = f"{value:,.0f}"
    else:
        decimals = sig - 1 - math.floor(math.log10(magnitude))
        text = _trim(f"{value:,.{decimals}f}", 0)
    return _signed(text, value, signed)


def format_count(value: float | None) -> str:
    """Format a number of units: rounded up to a whole unit, with thousands separators.

    Examples
    --------
    >>> format_count(12345.2)
    '12,346'
    >>> format_count(float("nan"))
    '—'
    """
    if _missing(value):
        return DASH
    return f"{math.ceil(value - 1e-9):,d}"


def whole_days(value: float | None) -> float:
    """Days as Fourfold shows them everywhere: rounded up to a whole day (a test runs whole
    days), forgiving floating-point dust just above a whole number; nan when missing.

    Examples
    --------
    >>> whole_days(29.03), whole_days(28.000000001), whole_days(None)
    (30.0, 28.0, nan)
    """
    if _missing(value):
        return math.nan
    return float(math.ceil(value - 1e-9 * max(1.0, abs(value))))


def format_days(value: float | None) -> str:
    """Days as a whole number, rounded up (:func:`whole_days`), with thousands separators.

    Examples
    --------
    >>> format_days(29.03), format_days(35.0), format_days(float("nan"))
    ('30', '35', '—')
    """
    days = whole_days(value)
    return DASH if math.isnan(days) else f"{days:,.0f}"


def format_percent(value: float | None, signed: bool = False, suffix: str = "%") -> str:
    """Format a fraction as a percentage, e.g. 0.05 → "+5.0 %".

    Parameters
    ----------
    value : float or None
        A fraction (0.05 means 5 %).
    signed : bool
        Show "+" before positive values.
    suffix : str
        "%" for percentages, "pp" for percentage points.

    Examples
    --------
    >>> format_percent(0.05, signed=True)
    '+5.0 %'
    >>> format_percent(0.031)
    '3.1 %'
    >>> format_percent(0.00155, signed=True, suffix="pp")
    '+0.155 pp'
    """
    if _missing(value):
        return DASH
    percent = value * 100.0
    magnitude = abs(percent)
    if magnitude >= 100:
        text = f"{percent:,.0f}"
    elif magnitude == 0:
        text = "0.0"
    else:
        decimals = max(1, 2 - math.floor(math.log10(magnitude)))
        text = _trim(f"{percent:.{decimals}f}", 1)
    return f"{_signed(text, percent, signed)} {suffix}"


def parse_number(text: str, percent: bool = False, label: str = "value") -> float:
    """Read a number typed or pasted by a person.

    Parameters
    ----------
    text : str
        E.g. "1,234", "1e6", "42k", "3.1%", "+5 %", "−0.5", "0.2 pp".
    percent : bool
        The cell is shown in percent: a bare number means percent ("5" → 0.05). In other cells
        a trailing "%" or "pp" divides by 100 ("3.1%" → 0.031).
    label : str
        What the value is, for the error message.

    Returns
    -------
    float

    Raises
    ------
    ParseError
        When the text is empty or not a number.

    Examples
    --------
    >>> parse_number("1,234")
    1234.0
    >>> parse_number("3.1%")
    0.031
    >>> parse_number("+5", percent=True)
    0.05
    >>> parse_number("42k")
    42000.0
    """
    raw = text
    text = text.strip().replace("\u2009", "").replace("\u00a0", "").replace(MINUS, "-")
    scale = 0.01 if percent else 1.0
    lowered = text.lower()
    for tail in ("%", "pp"):
        if lowered.endswith(tail):
            text, lowered, scale = text[: -len(tail)].strip(), lowered[: -len(tail)].strip(), 0.01
            break
    else:
        if lowered[-1:] in _SUFFIX and not percent:
            scale = _SUFFIX[lowered[-1]]
            text = text[:-1].strip()
    sign = ""
    if text[:1] in "+-" and text:
        sign, text = text[0], text[1:].strip()
    if "," in text:
        if not _GROUPED.match(text):
            raise ParseError(
                f"{label}: {raw.strip()!r} is not a number (use a point for decimals; "
                "commas only between thousands, e.g. 1,234.5)"
            )
        text = text.replace(",", "")
    try:
        number = float(sign + text)
    except ValueError:
        shown = raw.strip()
        if not shown:
            raise ParseError(f"{label}: enter a number") from None
        raise ParseError(f"{label}: {shown!r} is not a number") from None
    if not math.isfinite(number):
        raise ParseError(f"{label}: {raw.strip()!r} is not a finite number")
    return round(number * scale, 15) if scale != 1.0 else number
