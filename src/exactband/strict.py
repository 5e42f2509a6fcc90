"""Strict reading of the numbers and names people type or pass to the API.

Numbers written as text must use ASCII digits only: no underscores ("2_5" is
not 25), no full-width or other Unicode digits ("２５"), no "inf"/"nan".  A
whole number written as text is plain digits (an optional leading "+"), so
"1e30" or "25.0" are refused where a count is expected instead of being read
through a float.  From Python, int, float, Decimal, Fraction and numpy scalars
are accepted; anything else (a list, a dict, a string of letters) raises
DesignError naming the field, never a raw TypeError.
"""

from __future__ import annotations

import difflib
import math
import numbers
import re
from decimal import Decimal

from .errors import invalid

_REAL = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?", re.ASCII)
_WHOLE = re.compile(r"\+?[0-9]+", re.ASCII)
TEXT_REAL = "written with the ASCII digits 0-9, e.g. 2.5 or 1e-3"
TEXT_WHOLE = "written with the ASCII digits 0-9 only, e.g. 25"


def _what(value) -> str:
    return f"not a {type(value).__name__}"


def real(field: str, value, allowed: str = "a finite number") -> float:
    """``value`` as a finite float, or DesignError 'invalid FIELD = VALUE: ALLOWED'."""
    if isinstance(value, bool) or value is None:
        raise invalid(field, value, allowed)
    if isinstance(value, str):
        text = value.strip(" \t\r\n")
        if not _REAL.fullmatch(text):
            raise invalid(field, value, f"{allowed}, {TEXT_REAL}")
        out = float(text)
    elif isinstance(value, Decimal):
        if not value.is_finite():
            raise invalid(field, value, allowed)
        out = float(value)
    elif isinstance(value, numbers.Real):  # int, float, Fraction, numpy scalars
        try:
            out = float(value)
        except (OverflowError, ValueError):
            raise invalid(field, value, allowed) from None
    else:
        raise invalid(field, value, f"{allowed} ({_what(value)})")
    if not math.isfinite(out):
        raise invalid(field, value, allowed)
    return out


def whole(field: str, value, allowed: str = "a whole number") -> int:
    """``value`` as a Python int (exact), or DesignError.

    Text must be plain ASCII digits; a float, Decimal or Fraction must be integral.
    """
    if isinstance(value, bool) or value is None:
        raise invalid(field, value, allowed)
    if isinstance(value, str):
        text = value.strip(" \t\r\n")
        if not _WHOLE.fullmatch(text):
            raise invalid(field, value, f"{allowed}, {TEXT_WHOLE}")
        return int(text)
    if isinstance(value, numbers.Integral):  # int, numpy integers
        return int(value)
    if isinstance(value, Decimal):
        if value.is_finite() and value == value.to_integral_value():
            return int(value)
        raise invalid(field, value, allowed)
    if isinstance(value, numbers.Real):  # float, Fraction, numpy floats
        try:
            x = float(value)
        except (OverflowError, ValueError):
            raise invalid(field, value, allowed) from None
        if math.isfinite(x) and x == math.floor(x) and value == int(x):
            return int(x)
        raise invalid(field, value, allowed)
    raise invalid(field, value, f"{allowed} ({_what(value)})")


def name(field: str, value, allowed: tuple) -> str:
    """A name from ``allowed`` (case and surrounding spaces ignored); the message
    suggests the nearest name for a misspelling."""
    if value is None:
        raise invalid(field, value, f"one of {', '.join(allowed)}")
    if not isinstance(value, str):
        raise invalid(field, value, f"one of {', '.join(allowed)} ({_what(value)})")
    key = value.strip().lower()
    if key in allowed:
        return key
    raise invalid(field, value, f"allowed: {', '.join(allowed)}{suggest(key, allowed)}")


def suggest(word: str, choices) -> str:
    """'; did you mean X?' for the closest of ``choices`` (difflib), else ''."""
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    return f"; did you mean {close[0]}?" if close else ""
