"""One row of a generated table CSV (NAME.csv) as a Design with its printed thresholds.

The machine-readable table starts with the columns family, kind, n, alpha, low,
high, value, dispersion, c1, gamma1, c2, gamma2, size_low, size_high,
conservative_size_low, conservative_size_high, threshold1, threshold2 (more may
follow, e.g. random_digits).  The row's own cutoffs, gammas and thresholds are
what the field applies, so they are used as printed, not solved again.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass, replace
from decimal import Decimal
from pathlib import Path

from .decide import DecideError
from .design import DEFAULT_RANDOM_DIGITS, Design
from .errors import ExactbandError, invalid, recast
from .params import make_problem
from .rule import check_gamma, check_random_digits, threshold

REQUIRED = ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion", "c1", "gamma1",
            "c2", "gamma2")
FILTERS = ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion")


@dataclass(frozen=True)
class TableRule:
    design: Design
    thresholds: tuple  # (t1, t2), None where unused
    random_digits: int
    row: int  # 1-based data row (the header is not counted)
    path: str
    note: str | None = None  # set when the digits asked for differ from the table's
    table_random_digits: int | None = None  # the table's own count when it differs

    @property
    def printed_random_digits(self) -> int:
        """The number of random digits the table's printed thresholds are for."""
        return self.random_digits if self.table_random_digits is None else self.table_random_digits


def _cell(row, name):
    v = row.get(name)
    if v is None:
        return None
    v = v.strip()
    return None if v == "" or v.lower() in ("nan", "none", "na") else v


def _number(where, name, text, whole=False):
    if text is None:
        return None
    try:
        x = float(text)
    except ValueError:
        raise DecideError(f"{where}: invalid {name} = {text}: a number is required",
                          field=name, value=text, allowed="a number is required") from None
    if not math.isfinite(x) or (whole and x != math.floor(x)):
        allowed = f"{'a whole number' if whole else 'a finite number'} is required"
        raise DecideError(f"{where}: invalid {name} = {text}: {allowed}", field=name,
                          value=text, allowed=allowed)
    return int(x) if whole else x


def read_rows(path) -> list:
    p = Path(str(path))
    if not p.is_file():
        raise invalid("table", str(path), "an existing table CSV file (NAME.csv)", DecideError)
    try:
        with open(p, encoding="utf-8-sig", newline="") as fh:
            reader = csv.DictReader(fh)
            rows = list(reader)
            cols = reader.fieldnames or []
    except (UnicodeDecodeError, csv.Error) as e:
        raise invalid("table", str(path), f"a UTF-8 CSV file ({type(e).__name__})",
                      DecideError) from None
    missing = [c for c in REQUIRED if c not in cols]
    if missing:
        raise invalid("table", str(path), "a generated table CSV; missing column(s) "
                                         + ", ".join(missing), DecideError)
    if not rows:
        raise invalid("table", str(path), "a table with at least one row", DecideError)
    return rows


def _matches(row, filters) -> bool:
    for name, want in filters.items():
        have = _cell(row, name)
        if name in ("family", "kind"):
            if (have or "").lower() != str(want).strip().lower():
                return False
            continue
        try:
            w = float(want)
            h = None if have is None else float(have)
        except ValueError:
            return False
        if h is None or not math.isclose(h, w, rel_tol=1e-9, abs_tol=0.0):
            return False
    return True


def select_row(path, row=None, **filters) -> tuple:
    """(1-based row number, row dict) chosen by number or by matching design values."""
    rows = read_rows(path)
    given = {k: v for k, v in filters.items() if k in FILTERS and v is not None}
    if row is not None:
        from .strict import whole

        try:
            k = whole("row", row, f"a whole number from 1 to {len(rows)}")
        except ExactbandError as e:
            raise recast(e, DecideError) from None
        if not 1 <= k <= len(rows):
            raise invalid("row", row, f"a whole number from 1 to {len(rows)} (the table's rows)",
                          DecideError)
        if given and not _matches(rows[k - 1], given):
            raise invalid("row", row, "that row does not match the design options given",
                          DecideError)
        return k, rows[k - 1]
    if not given:
        raise invalid("row", row, "give --row or design options (e.g. --kind --n --alpha) "
                                 "that pick one row", DecideError)
    hits = [i for i, r in enumerate(rows) if _matches(r, given)]
    desc = ", ".join(f"{k}={v}" for k, v in given.items())
    if not hits:
        raise DecideError(f"invalid table = {path}: no row matches {desc}", field="table",
                          value=path)
    if len(hits) > 1:
        raise DecideError(f"invalid table = {path}: {len(hits)} rows match {desc} "
                          f"(rows {', '.join(str(i + 1) for i in hits[:8])}); add options or --row")
    return hits[0] + 1, rows[hits[0]]


def _floor_t(gamma: float, d: int) -> int:
    return threshold(gamma, d)


def _infer_digits(gammas, ts) -> int | None:
    """The d for which every printed threshold is floor(gamma * 10**d) (within one)."""
    pairs = [(g, t) for g, t in zip(gammas, ts) if g is not None and t is not None and t > 0]
    if not pairs:
        return None
    for d in range(1, 10):
        if all(abs(_floor_t(g, d) - t) <= 1 for g, t in pairs):
            return d
    return None


def table_rule(path, row=None, random_digits=None, **filters) -> TableRule:
    """The Design of one table row and the thresholds it prints.

    ``random_digits`` (d) comes from the table's random_digits column when it
    has one, else from the argument, else from the printed thresholds.  Printed
    thresholds must agree with floor(gamma * 10**d) within one (the table floors
    its exact gammas; the CSV keeps double precision), or the row is refused.
    """
    k, r = select_row(path, row, **filters)
    where = f"table {path} row {k}"
    vals = {c: _cell(r, c) for c in REQUIRED}
    try:
        prob = make_problem(vals["family"], vals["kind"], n=vals["n"], alpha=vals["alpha"],
                            low=vals["low"], high=vals["high"], value=vals["value"],
                            dispersion=vals["dispersion"])
    except ExactbandError as e:
        raise recast(e, DecideError, f"{where}: ") from None
    if not prob.family.discrete:
        return _real_rule(prob, r, k, path, where)
    c1 = _number(where, "c1", vals["c1"], whole=True)
    c2 = _number(where, "c2", vals["c2"], whole=True)
    g1 = _number(where, "gamma1", vals["gamma1"])
    g2 = _number(where, "gamma2", vals["gamma2"])
    kind = prob.kind
    for name, c, g, used in (("1", c1, g1, kind.uses_c1), ("2", c2, g2, kind.uses_c2)):
        if used and (c is None or g is None):
            raise DecideError(f"{where}: the {kind.name} kind needs c{name} and gamma{name}")
        if used:
            try:  # the Rule's check of a gamma; the message names the row
                check_gamma(f"gamma{name}", g)
            except ExactbandError:
                raise DecideError(f"{where}: invalid gamma{name} = {g}: a number in [0, 1)",
                                  field=f"gamma{name}", value=g,
                                  allowed="a number in [0, 1)") from None
        if used and c < 0:
            raise DecideError(f"{where}: invalid c{name} = {c}: a whole number >= 0",
                              field=f"c{name}", value=c, allowed="a whole number >= 0")
    if not kind.uses_c1:
        c1 = g1 = None
    if not kind.uses_c2:
        c2 = g2 = None
    base = Design(prob, c1, g1, c2, g2, ())
    design = base.with_gammas(g1, g2)
    decimals = [_cell(r, f"gamma{i}_decimal") for i in (1, 2)]
    for i, (g, text) in enumerate(zip((g1, g2), decimals), start=1):
        try:  # the 30-digit gamma, if the table has it and it is this gamma
            ok = text is not None and g is not None and abs(float(Decimal(text)) - g) <= 1e-15
        except ArithmeticError:
            ok = False
        decimals[i - 1] = text if ok else None
    design = replace(design, gamma1_decimal=decimals[0], gamma2_decimal=decimals[1])
    ts = tuple(_number(where, f"threshold{i}", _cell(r, f"threshold{i}"), whole=True)
               for i in (1, 2))
    ts = (ts[0] if kind.uses_c1 else None, ts[1] if kind.uses_c2 else None)
    col = _cell(r, "random_digits")
    d = asked = None
    for source, value in (("random_digits", col), ("random-digits", random_digits)):
        if value is not None:
            dd = _number(where, source, str(value), whole=True)
            try:  # the one range check of random digits; the message names the cell as read
                check_random_digits(dd, source)
            except ExactbandError:
                raise DecideError(f"{where}: invalid {source} = {value}: a whole number 1 to 9",
                                  field=source, value=value,
                                  allowed="a whole number 1 to 9") from None
            if source == "random_digits":
                d = dd
            else:
                asked = dd
    printed = any(t is not None for t in ts)
    if d is None:
        d = _infer_digits((g1, g2), ts) if printed else None
        d = DEFAULT_RANDOM_DIGITS if d is None else d
    ts = tuple(_floor_t(g, d) if g is not None and t is None else t
               for g, t in zip((g1, g2), ts))
    for i, (g, t) in enumerate(zip((g1, g2), ts), start=1):
        if g is not None and t is not None and abs(_floor_t(g, d) - t) > 1:
            raise DecideError(f"{where}: threshold{i} = {t} does not match floor(gamma{i} x 10^{d})"
                              f" = {_floor_t(g, d)}; is the number of random digits {d}?")
    if asked is not None and asked != d:
        # the user asks for another number of digits than the table prints: thresholds
        # from the row's gammas for that d, and say so
        t_new = design.thresholds(asked)
        note = (f"the table's rule reads {d} random digits; this decision reads {asked} "
                f"(--random-digits), so the thresholds are floor(gamma x 10^{asked}) = "
                + ", ".join(f"t{i} = {t}" for i, t in ((1, t_new[0]), (2, t_new[1]))
                            if t is not None) + ", not the printed ones.")
        return TableRule(design, t_new, asked, k, str(path), note, d)
    return TableRule(design, ts, d, k, str(path))


def _real_rule(prob, r, k, path, where) -> TableRule:
    """A row with real cutoffs (a continuous family): the cutoffs as printed (printed_c1,
    printed_c2 when the table has them, else c1, c2); nothing randomised."""
    cuts = []
    for i, used in ((1, prob.kind.uses_c1), (2, prob.kind.uses_c2)):
        text = _cell(r, f"printed_c{i}") or _cell(r, f"c{i}")
        if used and text is None:
            raise DecideError(f"{where}: the {prob.kind.name} kind needs c{i}")
        cuts.append(_number(where, f"c{i}", text) if used else None)
    design = Design(prob, cuts[0], None, cuts[1], None, ()).with_gammas(None, None)
    return TableRule(design, (None, None), None, k, str(path))
