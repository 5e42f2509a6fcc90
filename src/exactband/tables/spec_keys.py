"""Checks of the individual keys of a table spec (used by spec.from_mapping).

Every check raises SpecError with one line: '<file>: invalid <key> = <value>:
<what is allowed>', the key written as the user would find it (alpha[1],
bands[0][1], n.step); the error's ``field``, ``value`` and ``allowed`` are the
key, the value and what is allowed.
"""

from __future__ import annotations

import math
from decimal import Decimal

from ..errors import DesignError, ExactbandError, show
from ..kinds import KINDS

TWO_POINT = tuple(n for n, k in KINDS.items() if k.two_point)  # kinds that read `bands`
ONE_POINT = tuple(n for n, k in KINDS.items() if not k.two_point)  # kinds that read `values`
LARGE_LIMIT = 200_000  # designs in one set with --allow-large


class SpecError(ExactbandError, ValueError):
    """A table spec (or the folder it is written to) is unusable: one line, exit 2."""


class Checker:
    """Builds the one-line messages: '<file>: invalid <key> = <value>: <allowed>'."""

    def __init__(self, where: str):
        self.where = where

    def fail(self, text: str, key: str | None = None, value=None,
             allowed: str | None = None) -> SpecError:
        return SpecError(f"{self.where}: {text}", field=key, value=value, allowed=allowed)

    def bad(self, key: str, value, allowed: str) -> SpecError:
        return self.fail(f"invalid {key} = {show_value(value)}: {allowed}", key, value, allowed)

    def rekey(self, key: str, err: DesignError) -> SpecError:
        """A core DesignError about one value, re-labelled with the spec key that holds it
        (its ``value`` and ``allowed`` read from the error, the message not parsed)."""
        if err.field is None or err.value is None:
            return self.fail(f"{key}: {err}", key, err.value, err.allowed)
        return self.fail(f"invalid {key} = {show(err.value)}: {err.allowed}", key, err.value,
                         err.allowed)

    def text(self, key, value, limit, one_line, empty=False) -> str:
        if not isinstance(value, str):
            raise self.bad(key, value, "a text string in quotes is required")
        s = value.strip()
        if not s and not empty:
            raise self.bad(key, value, "a non-empty text is required")
        if one_line and ("\n" in s or "\r" in s):
            raise self.bad(key, value, "one line of text is required (no line breaks)")
        if len(s) > limit:
            raise self.bad(key, value, f"at most {limit} characters (it has {len(s)})")
        if any(ord(c) < 32 and c not in "\n\t" for c in s):
            raise self.bad(key, value, "printable text is required (no control characters)")
        bad = [c for c in s if not _printable(c)]
        if bad:
            raise self.bad(key, value, f"the PDF fonts print Western European text "
                           f"(Windows-1252) only; replace {bad[0]!r}")
        return s

    def choice(self, key, value, allowed: tuple) -> str:
        if not isinstance(value, str):
            raise self.bad(key, value, "one of " + ", ".join(allowed) + " (in quotes)")
        for a in allowed:
            if value.strip().lower() == a.lower():
                return a
        from ..strict import suggest

        raise self.bad(key, value, "one of " + ", ".join(allowed)
                       + suggest(value.strip().lower(), [x.lower() for x in allowed]))

    def names(self, key, value, allowed: tuple) -> tuple:
        example = f'{key} = ["{allowed[0]}"]'
        if not isinstance(value, list):
            raise self.bad(key, value, f"a list of names from {', '.join(allowed)}, e.g. {example}")
        if not value:
            raise self.bad(key, value, f"at least one of {', '.join(allowed)} is required")
        out = [self.choice(f"{key}[{i}]", x, allowed) for i, x in enumerate(value)]
        _no_duplicates(self, key, out)
        return tuple(out)

    def number(self, key, value) -> float | int:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            hint = " (without quotes)" if isinstance(value, str) else ""
            raise self.bad(key, value, f"a number is required{hint}")
        if isinstance(value, float) and not math.isfinite(value):
            raise self.bad(key, value, "a finite number is required")
        return value

    def integer(self, key, value, lo, hi) -> int:
        if isinstance(value, bool) or not isinstance(value, int) or not lo <= value <= hi:
            raise self.bad(key, value, f"a whole number from {lo} to {hi}")
        return value

    def number_list(self, key, value, check) -> tuple:
        if not isinstance(value, list):
            scalar = isinstance(value, (int, float)) and not isinstance(value, bool)
            example = f", e.g. {key} = [{show_value(value)}]" if scalar else ""
            raise self.bad(key, value, f"a list of numbers is required{example}")
        if not value:
            raise self.bad(key, value, "at least one value is required")
        out = []
        for i, x in enumerate(value):
            k = f"{key}[{i}]"
            out.append(check(self, k, self.number(k, x)))
        _no_duplicates(self, key, out)
        return tuple(out)


def _printable(c: str) -> bool:
    """Whether the PDF's standard fonts (WinAnsi encoding) can print the character."""
    try:
        c.encode("cp1252")
        return True
    except UnicodeEncodeError:
        return False


def show_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, dict):
        return show("{" + ", ".join(f"{k} = {show_value(x)}" for k, x in value.items()) + "}")
    if isinstance(value, list):
        return show("[" + ", ".join(show_value(x) for x in value) + "]")
    return show(value)


def _no_duplicates(v: Checker, key, items) -> None:
    seen = {}
    for i, x in enumerate(items):
        if x in seen:
            raise v.bad(f"{key}[{i}]", x, f"each entry once; it repeats {key}[{seen[x]}]")
        seen[x] = i


def alpha_check(v: Checker, key, a):
    if not 1e-300 <= a < 1:
        raise v.bad(key, a, "alpha must satisfy 0 < alpha < 1 (and alpha >= 1e-300)")
    if 1 - a < 1e-15:
        raise v.bad(key, a, "alpha must be at most 1 - 1e-15")
    return float(a)


def dispersion_of(v: Checker, fam, data):
    if "dispersion" not in data:
        if fam.uses_dispersion:
            raise v.fail(f"missing key 'dispersion': the {fam.name} family needs a known "
                         f"{fam.dispersion_word} > 0")
        return None
    k = data["dispersion"]
    if not fam.uses_dispersion:
        from ..families import dispersion_users

        raise v.bad("dispersion", k, f"the {fam.name} family takes no dispersion; leave the "
                    f"key out (it is used only by {dispersion_users()})")
    v.number("dispersion", k)
    try:
        return fam.check_dispersion(k)
    except DesignError as e:
        raise v.rekey("dispersion", e) from None


def _n_check(fam):
    def check(v: Checker, key, x):
        try:
            return fam.check_n(x)
        except DesignError as e:
            raise v.rekey(key, e) from None
    return check


def n_values(v: Checker, fam, value) -> tuple:
    if isinstance(value, list):
        return v.number_list("n", value, _n_check(fam))
    if not isinstance(value, dict):
        raise v.bad("n", value, "a list of sample sizes, or a table {from = A, to = B, step = C}")
    extra = [k for k in value if k not in ("from", "to", "step")]
    if extra:
        raise v.bad(f"n.{extra[0]}", value[extra[0]], "n as a table takes only from, to, step")
    for k in ("from", "to", "step"):
        if k not in value:
            raise v.bad("n", value, f"n as a table needs from, to and step (missing {k})")
        v.number(f"n.{k}", value[k])
    lo, hi, step = (Decimal(repr(value[k])) if isinstance(value[k], float) else Decimal(value[k])
                    for k in ("from", "to", "step"))
    if step <= 0:
        raise v.bad("n.step", value["step"], "a number > 0")
    if hi < lo:
        raise v.bad("n.to", value["to"],
                    f"n.to must be at least n.from = {show_value(value['from'])}")
    if fam.integer_n and step != step.to_integral_value():
        raise v.bad("n.step", value["step"], f"a whole number for the {fam.name} family")
    count = int((hi - lo) / step) + 1
    if count > LARGE_LIMIT:
        raise v.bad("n", value, f"it gives {count} sample sizes; at most {LARGE_LIMIT}")
    check = _n_check(fam)
    out = []
    for i in range(count):
        x = lo + i * step
        out.append(check(v, "n.from" if i == 0 else "n", int(x) if fam.integer_n else float(x)))
    return tuple(out)


def hypotheses(v: Checker, fam, kinds, data):
    uses_bands = [k for k in kinds if k in TWO_POINT]
    uses_values = [k for k in kinds if k in ONE_POINT]
    bands = values = ()
    for key, users, readers in (("bands", uses_bands, TWO_POINT),
                                ("values", uses_values, ONE_POINT)):
        if users and key not in data:
            raise v.fail(f"missing key {key!r}: the kind(s) {', '.join(users)} need {key}")
        if key in data and not users:
            raise v.bad(key, data[key], f"no kind in kinds reads {key} (only "
                        f"{', '.join(readers)} do); remove the key or add such a kind")
    if uses_values:
        def theta(v_, key, x):
            try:
                return fam.check_theta(key, x)
            except DesignError as e:
                raise v_.rekey(key, e) from None
        values = v.number_list("values", data["values"], theta)
    if uses_bands:
        bands = _bands(v, fam, data["bands"])
    return bands, values


def _bands(v: Checker, fam, value) -> tuple:
    allowed = "a list of [low, high] pairs, e.g. bands = [[2.0, 2.5], [1.5, 2.0]]"
    if not isinstance(value, list) or not value:
        raise v.bad("bands", value, allowed)
    out = []
    for i, pair in enumerate(value):
        key = f"bands[{i}]"
        if not isinstance(pair, list) or len(pair) != 2:
            raise v.bad(key, pair, "a pair [low, high] of numbers")
        ends = []
        for j, x in enumerate(pair):
            k = f"{key}[{j}]"
            v.number(k, x)
            try:
                ends.append(fam.check_theta(k, x))
            except DesignError as e:
                raise v.rekey(k, e) from None
        if not ends[0] < ends[1]:
            raise v.bad(key, pair, "low must be smaller than high")
        out.append(tuple(ends))
    _no_duplicates(v, "bands", out)
    return tuple(out)
