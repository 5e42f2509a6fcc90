"""Verify one row of a table CSV before a decision is based on it (``decide --table``).

A printed table can be edited; the field decision must not follow an edit.
Two checks, both before anything is decided:

* when the set's manifest lies beside the CSV (NAME.csv -> NAME.manifest.json),
  the CSV's SHA-256 must be the one the manifest records;
* always: the row's design is solved again (fast solver, confirmed by the
  high-precision solver at the row's verified_precision, else 50) and every
  number of the row the decision or the reader uses must be what the solvers
  give: the cutoffs exactly, the gammas to 1e-15 (a double's rounding), the
  30-digit gammas exactly (rounded from 50 or more correct digits, they only
  change when the row is changed), the thresholds exactly (floor of the 30-digit
  gamma times 10^d), the sizes to a relative 1e-9 (they are printed from
  doubles; a real edit moves a size far more).

Any difference refuses the row with one line naming the field (DecideError).
"""

from __future__ import annotations

import hashlib
import json
import math
from decimal import Decimal, InvalidOperation
from pathlib import Path

from .decide import DecideError
from .errors import ExactbandError, recast
from .solving import DEFAULT_PRECISION, fast_solve, verify_one
from .tablerow import TableRule, select_row, table_rule

GAMMA_TOL = 1e-15
SIZE_REL_TOL = 1e-9
MAX_MANIFEST = 4 * 1024 * 1024
WHOLE = ("c1", "c2", "threshold1", "threshold2")


def verified_table_rule(path, row=None, random_digits=None, **filters) -> TableRule:
    """``tablerow.table_rule``, then the manifest hash and a fresh solve of the row."""
    check_manifest(path)
    tr = table_rule(path, row, random_digits, **filters)
    _, cells = select_row(path, tr.row)
    check_row(tr, cells)
    return tr


def check_manifest(path) -> None:
    """If NAME.manifest.json lies beside NAME.csv, the CSV's SHA-256 must match it."""
    p = Path(str(path))
    if not p.name.endswith(".csv") or not p.is_file():
        return
    man = p.with_name(p.name[: -len(".csv")] + ".manifest.json")
    if not man.is_file():
        return
    try:
        if man.stat().st_size > MAX_MANIFEST:
            raise ValueError("too large")
        listed = json.loads(man.read_text("utf-8"))["files"][p.name]
        digest = hashlib.sha256(p.read_bytes()).hexdigest()
    except (OSError, ValueError, KeyError, TypeError):
        raise DecideError(f"invalid table = {path}: the manifest beside it ({man.name}) is "
                          "unreadable or does not list it; the table cannot be trusted") from None
    if digest != listed:
        raise DecideError(f"invalid table = {path}: its SHA-256 differs from {man.name} (the "
                          "file was changed after it was published); refused")


def _precision(cells) -> int:
    text = (cells.get("verified_precision") or cells.get("verified_digits") or "").strip()
    if text.isascii() and text.isdigit() and 20 <= int(text) <= 1000:
        return int(text)
    return DEFAULT_PRECISION


def check_row(tr: TableRule, cells: dict) -> None:
    """Refuse (DecideError, one line) a row that is not what the solvers give."""
    where = f"table {tr.path} row {tr.row}"
    p = tr.design.problem
    try:
        d = verify_one(p, fast_solve([p])[0], _precision(cells))
    except ExactbandError as e:
        raise recast(e, DecideError, f"{where}: its design cannot be verified: ") from None
    if not p.family.discrete:
        return _check_real(d, cells, where)
    printed = tr.printed_random_digits  # the printed thresholds follow the table's count
    t1, t2 = d.thresholds(printed)
    cons = d.nonrandomized().sizes
    digit = d.digit_rule(printed).sizes
    want = {"c1": d.c1, "c2": d.c2, "gamma1": d.gamma1, "gamma2": d.gamma2,
            "gamma1_decimal": d.gamma1_decimal, "gamma2_decimal": d.gamma2_decimal,
            "threshold1": t1, "threshold2": t2, "size_low": d.size_low,
            "size_high": d.size_high}
    if (cells.get("conservative_size_low") or "").strip():
        want.update(conservative_size_low=cons[0], conservative_size_high=_at(cons, 1))
    if (cells.get("digit_rule_size_low") or "").strip():
        want.update(digit_rule_size_low=digit[0], digit_rule_size_high=_at(digit, 1))
    for name, value in want.items():
        if name not in cells or (name.endswith("_decimal") and value is None
                                 and not (cells.get(name) or "").strip()):
            continue
        text = (cells.get(name) or "").strip()
        if not _same(name, text, value):
            shown = "empty" if text == "" else text
            raise DecideError(f"{where}: {name} is {shown} in the table, but solving the row's "
                              f"design gives {_fmt(value)}; the row was changed or is wrong, "
                              "refused")


def _check_real(d, cells: dict, where: str) -> None:
    """Real cutoffs: c1, c2 as solved (64 epsilons relative, ccheck.CUT_TOL), the printed
    cutoffs as Kind.round_cutoffs gives them at the row's cutoff_decimals, the sizes."""
    from .ccheck import CUT_TOL

    def refuse(name, text, value):
        shown = "empty" if text == "" else text
        raise DecideError(f"{where}: {name} is {shown} in the table, but solving the row's "
                          f"design gives {value}; the row was changed or is wrong, refused")

    for name, value in (("c1", d.c1), ("c2", d.c2)):
        text = (cells.get(name) or "").strip()
        try:
            ok = (text == "") if value is None else abs(float(text) - value) <= CUT_TOL * abs(value)
        except ValueError:
            ok = False
        if not ok:
            refuse(name, text, _fmt(value))
    places = (cells.get("cutoff_decimals") or "").strip()
    if places.isdigit():
        shown = d.problem.kind.round_cutoffs(d.c1, d.c2, int(places))
        for name, value in (("printed_c1", shown[0]), ("printed_c2", shown[1])):
            text = (cells.get(name) or "").strip()
            try:
                ok = (text == "") if value is None else Decimal(text) == value
            except InvalidOperation:
                ok = False
            if not ok:
                refuse(name, text, "empty" if value is None else format(value, "f"))
    for name, value in (("size_low", d.size_low), ("size_high", d.size_high)):
        text = (cells.get(name) or "").strip()
        if name in cells and not _same(name, text, value):
            refuse(name, text, _fmt(value))


def _at(seq, i):
    return seq[i] if len(seq) > i else None


def _fmt(value) -> str:
    return "empty" if value is None else (repr(value) if isinstance(value, float) else
                                          str(value))


def _same(name: str, text: str, value) -> bool:
    if value is None:
        return text == "" or text.lower() in ("nan", "none", "na")
    try:
        if name.endswith("_decimal"):
            return Decimal(text) == Decimal(value)
        if name in WHOLE:
            x = float(text)
            return math.isfinite(x) and x == int(value)
        x = float(text)
    except (ValueError, InvalidOperation):
        return False
    if not math.isfinite(x):
        return False
    if name.startswith("gamma"):
        return abs(x - value) <= GAMMA_TOL
    return abs(x - value) <= SIZE_REL_TOL * abs(value) + 1e-300
