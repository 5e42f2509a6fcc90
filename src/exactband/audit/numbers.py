"""Numbers as third parties print them: decimal marks, thousands separators, decimals.

A cell is read as text.  Accepted forms (all with an optional sign and exponent):

* plain: ``25``, ``0.05``, ``1e-6``, ``0,05`` (a decimal comma is unambiguous
  when the digits after it are not exactly three, or the integer part is 0);
* grouped: ``1,234,567``, ``1.234.567``, ``1 234`` (space, no-break space,
  thin space or apostrophe), ``1,234.5``, ``1.234,5``.

``1,234`` and ``1.234`` are ambiguous (thousands separator or decimal mark):
they are read with the file's decimal mark when the file shows one (another
cell such as ``0,05`` or ``0.05`` settles it), and refused otherwise.  A cell
that starts with ``=`` is a spreadsheet formula: it is never evaluated and is
refused as a value.

``decimals`` is how many decimal places the cell prints (``0.1300`` -> 4,
``1.5e-3`` -> 4): the audit's gamma tolerance is half a unit in that place.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation

_GROUP = " \u00a0\u202f'"  # separators that can only group thousands
_EXP = re.compile(r"^(?P<m>.*?)(?P<e>[eE][+-]?\d{1,4})$")
_PLAIN = re.compile(r"^\d+$")
_ONE_SEP = re.compile(r"^(?P<i>\d*)(?P<s>[.,])(?P<f>\d+)$")
_GROUPED = re.compile(r"^(?P<i>[1-9]\d{0,2}(?P<t>[.,\u00a0\u202f' ])\d{3}(?:(?P=t)\d{3})*)"
                      r"(?:(?P<d>[.,])(?P<f>\d+))?$")
_AMBIGUOUS = re.compile(r"^[1-9]\d{0,2}[.,]\d{3}$")


class NumberError(ValueError):
    """A cell that is not a usable number; the message says why."""


@dataclass(frozen=True)
class Number:
    value: Decimal
    decimals: int  # decimal places printed (0 for an integer)
    text: str

    def __float__(self) -> float:
        return float(self.value)

    def is_integer(self) -> bool:
        return self.value == self.value.to_integral_value()


def is_formula(text: str) -> bool:
    return text.lstrip().startswith("=")


def evidence(text: str) -> str | None:
    """The decimal mark a cell proves ('.' or ','), or None when it proves nothing."""
    t = text.strip()
    if t[:1] in "+-":
        t = t[1:]
    m = _EXP.match(t)
    mant = m.group("m") if m else t
    if _AMBIGUOUS.match(mant) and not m:
        return None
    g = _GROUPED.match(mant)
    if g:
        sep, dec = g.group("t"), g.group("d")
        if dec:
            return dec
        if sep in ".,":  # two or more groups: the separator groups thousands
            return "," if sep == "." else "."
        return None
    s = _ONE_SEP.match(mant)
    return s.group("s") if s else None


def parse(text: str, mark: str | None = None) -> Number:
    """Read a printed number; ``mark`` is the file's decimal mark if known.

    Raises NumberError with a short reason (no field name; the caller adds it).
    """
    raw = text
    t = text.strip()
    if not t:
        raise NumberError("empty")
    if is_formula(t):
        raise NumberError(f"{_show(raw)} is a formula; formulas are never evaluated, type the value")
    sign = ""
    if t[0] in "+-":
        sign, t = ("-" if t[0] == "-" else ""), t[1:]
    m = _EXP.match(t)
    mant, exp = (m.group("m"), m.group("e")) if m else (t, "")
    digits_int, digits_frac = _split(mant, mark, raw, bool(exp))
    if not digits_int and not digits_frac:
        raise NumberError(f"{_show(raw)} is not a number")
    body = f"{sign}{digits_int or '0'}" + (f".{digits_frac}" if digits_frac else "") + exp
    try:
        value = Decimal(body)
    except InvalidOperation:
        raise NumberError(f"{_show(raw)} is not a number") from None
    if not value.is_finite():
        raise NumberError(f"{_show(raw)} is not a finite number")
    decimals = len(digits_frac) - (int(exp[1:]) if exp else 0)
    return Number(value, max(decimals, 0), raw)


def _split(mant: str, mark, raw, has_exp):
    """(integer digits, fraction digits) of a mantissa, separators removed."""
    if _PLAIN.match(mant):
        return mant, ""
    if _AMBIGUOUS.match(mant) and not has_exp:
        sep = mant[-4]
        if mark is None:
            return _ambiguous(raw, sep)
        if sep == mark:
            return mant[:-4], mant[-3:]
        return mant.replace(sep, ""), ""
    s = _ONE_SEP.match(mant)
    if s:
        if mark is not None and s.group("s") != mark:
            raise NumberError(f"{_show(raw)} uses {s.group('s')!r} as decimal mark but the file "
                              f"uses {mark!r}")
        return s.group("i"), s.group("f")
    g = _GROUPED.match(mant)
    if g and not has_exp:
        sep, dec = g.group("t"), g.group("d")
        if dec is not None and dec == sep:
            raise NumberError(f"{_show(raw)} is not a number (separator {sep!r} used twice)")
        if mark is not None and (sep == mark or (dec is not None and dec != mark)):
            raise NumberError(f"{_show(raw)} does not match the file's decimal mark {mark!r}")
        return g.group("i").replace(sep, ""), g.group("f") or ""
    if any(c in mant for c in ",." + _GROUP) and all(c.isdigit() or c in ",." + _GROUP
                                                     for c in mant):
        raise NumberError(f"{_show(raw)} is not a number: its separators do not group "
                          "thousands in threes")
    raise NumberError(f"{_show(raw)} is not a number")


def _ambiguous(raw, sep):
    other = "." if sep == "," else ","
    whole = raw.strip().replace(sep, "")
    frac = raw.strip().replace(sep, ".")
    raise NumberError(f"{_show(raw)} is ambiguous: {whole} with {sep!r} grouping thousands, or "
                      f"{frac} with {sep!r} as decimal mark; write it without a separator or "
                      f"give the decimal mark (--decimal-mark '{sep}' or '{other}')")


def _show(text: str) -> str:
    s = " ".join(str(text).split())
    s = s if len(s) <= 40 else s[:37] + "..."
    return repr(s)


def file_mark(texts) -> tuple[str | None, bool]:
    """(decimal mark shown by the cells, whether both marks were shown)."""
    seen = set()
    for t in texts:
        e = evidence(t)
        if e:
            seen.add(e)
            if len(seen) == 2:
                return None, True
    return (seen.pop() if seen else None), False
