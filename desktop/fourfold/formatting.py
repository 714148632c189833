"""Numbers as people read and type them in the plan table.

Display: thousands separators, about three significant digits, a real minus sign, percentages
with a space before the sign ("+5.0 %"), "—" where there is no value. Parsing accepts what people
paste from spreadsheets and type in a meeting: "1,234", "1e6", "42k", "3.1%", "−0.5", "5 pp".

Nothing here computes statistics; it only turns numbers into text and back.
"""

from __future__ import annotations

import math
import re
import sys
import unicodedata
from decimal import Decimal

from fourfold.errors import FourfoldError

DASH = "—"
MINUS = "\u2212"

_GROUPED = re.compile(r"^[0-9]{1,3}(,[0-9]{3})+(\.[0-9]*)?$")
_DECIMAL = re.compile(r"([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?")
_ONE, _HUNDREDTH = Decimal(1), Decimal("0.01")
_SUFFIX = {"k": Decimal(1000), "m": Decimal(1_000_000)}
_ARABIC_MARKS = {"\u066b": ".", "\u066c": ","}


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


def _plain_digits(text: str) -> str:
    """Full-width forms as their ASCII letters, and every decimal digit (Arabic-Indic,
    Devanagari, full-width …) as its ASCII digit; the Arabic decimal and thousands separators
    as a point and a comma. Other characters (superscripts, fractions) are left as they are."""
    out = []
    for character in text:
        code = ord(character)
        if 0xFF01 <= code <= 0xFF5E:
            character = chr(code - 0xFEE0)
        elif not character.isascii() and character.isdecimal():
            character = str(unicodedata.decimal(character))
        out.append(_ARABIC_MARKS.get(character, character))
    return "".join(out)


def parse_number(text: str, percent: bool = False, label: str = "value") -> float:
    """Read a number typed or pasted by a person.

    Rules: a point for decimals; commas only between groups of three digits ("1,234.5");
    a thin or no-break space may group digits too; an underscore may not ("1_000" is
    refused, with a hint). Digits of any script — full-width "１２３", Arabic-Indic
    "١٢٣" — read as the same digits, and full-width signs, point and percent ("－", "．",
    "％") as theirs. A number that is not finite, or so close to 0 that a double cannot hold
    it in full precision (below about 2.23e-308, e.g. "1e-320" in a percent cell), is refused
    rather than stored as 0 or a rounded-off value. The decimal number typed is scaled exactly
    (``decimal``), so "3.1%" is the double nearest 0.031.

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
        When the text is empty, not a number, not finite or too close to 0.

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
    >>> parse_number("１２３"), parse_number("١٢٣٫٥")
    (123.0, 123.5)
    >>> parse_number("1e-320", percent=True, label="Effect")
    Traceback (most recent call last):
    ...
    fourfold.formatting.ParseError: Effect: '1e-320' is too close to 0 to be held (the smallest \
number kept in full precision is about 2.23e-308); enter 0 or a larger number
    """
    raw = text
    shown = raw.strip()
    text = _plain_digits(text.strip().replace("\u2009", "").replace("\u00a0", ""))
    text = text.replace(MINUS, "-")
    scale = _HUNDREDTH if percent else _ONE
    lowered = text.lower()
    for tail in ("%", "pp"):
        if lowered.endswith(tail):
            text, lowered = text[: -len(tail)].strip(), lowered[: -len(tail)].strip()
            scale = _HUNDREDTH
            break
    else:
        if lowered[-1:] in _SUFFIX and not percent:
            scale = _SUFFIX[lowered[-1]]
            text = text[:-1].strip()
    sign = ""
    if text[:1] in "+-" and text:
        sign, text = text[0], text[1:].strip()
    if "_" in text:
        raise ParseError(f"{label}: {shown!r} is not a number (write 1,000 or 1000; an "
                         "underscore does not group digits here)")
    if "," in text:
        if not _GROUPED.match(text):
            raise ParseError(
                f"{label}: {shown!r} is not a number (use a point for decimals; "
                "commas only between thousands, e.g. 1,234.5)"
            )
        text = text.replace(",", "")
    if not _DECIMAL.fullmatch(text):
        if not shown:
            raise ParseError(f"{label}: enter a number")
        if text.lower().lstrip("+-") in ("inf", "infinity", "nan"):
            raise ParseError(f"{label}: {shown!r} is not a finite number")
        raise ParseError(f"{label}: {_cut(shown)!r} is not a number")
    typed = Decimal(sign + text)
    try:
        number = float(typed * scale)
    except (ArithmeticError, ValueError):  # an exponent beyond what decimal computes
        number = math.inf if typed.adjusted() > 0 else 0.0
    if not math.isfinite(number):
        raise ParseError(f"{label}: {_cut(shown)!r} is not a finite number (beyond about "
                         "1.8e308)")
    if typed != 0 and abs(number) < sys.float_info.min:
        raise ParseError(f"{label}: {_cut(shown)!r} is too close to 0 to be held (the smallest "
                         "number kept in full precision is about 2.23e-308); enter 0 or a "
                         "larger number")
    return number


def _cut(text: str, limit: int = 40) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "…"
