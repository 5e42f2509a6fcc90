"""From cell text to audit rows: columns resolved, numbers read, decimals per cell.

A file-level problem (no header, duplicated or missing columns, too many rows)
raises AuditInputError.  A row-level problem (a bad number, a formula, an
unknown family) makes that row ``invalid`` with a reason; it never stops the run.

Gammas are kept as the exact decimals printed, with the decimals each cell
prints (policy.cell_decimals); the verdict policy is in ``policy``.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import DesignError
from ..families import get_family
from ..kinds import get_kind
from ..params import Problem, make_problem
from . import columns as C
from . import numbers as N
from .errors import AuditInputError
from .policy import MODES, cell_decimals, column_decimals
from .readers import open_source

MAX_ROWS = 20_000
EMPTY = {"", "-", "\u2013", "\u2014", "na", "n/a", "none", "null"}
NUMERIC = ("n", "alpha", "low", "high", "value", "dispersion", "c1", "gamma1", "c2", "gamma2")


@dataclass
class Row:
    """One row of the third party's table, read and checked."""

    index: int  # data row, 1-based ("row N" everywhere)
    line: int  # line of the CSV file / row of the sheet
    ident: str | None
    text: dict  # standard name -> the cell text as they printed it
    problem: Problem | None = None
    theirs: tuple | None = None  # (c1, g1, c2, g2): int / float / None
    tol: tuple = (None, None)  # symmetric gamma allowance at c1, c2 (for diagnoses)
    decimals: tuple = (None, None)  # decimals each gamma cell is read with (None: exact)
    error: str | None = None
    error_field: str | None = None  # the input the error names (e.g. "alpha", "c1")
    kind: str | None = None  # the kind named by the row, when it names a valid one
    numbers: tuple = field(default=(None, None), repr=False)  # the gammas as printed (Number)
    cuts: tuple = field(default=(None, None), repr=False)  # real cutoffs as printed (Number)


@dataclass
class Table:
    name: str
    rows: list
    columns: dict  # standard name -> their column name
    ignored: list
    decimal_mark: str | None
    notes: list = field(default_factory=list)
    sha256: str = ""
    column_decimals: tuple = (None, None)  # most common decimals of the gamma columns
    count: int = 0  # data rows in the file


@dataclass
class Options:
    mapping: dict = field(default_factory=dict)
    constants: dict = field(default_factory=dict)  # family / kind / dispersion for every row
    decimal_mark: str | None = None
    gamma_rounding: str | None = None  # "round" / "truncate"; None: inferred per column
    max_rows: int = MAX_ROWS
    sheet: str | None = None
    delimiter: str | None = None
    encoding: str = "utf-8"


def _continuous_only(constants) -> bool:
    """Whether every row's family, given once for the file, has a continuous Y."""
    name = constants.get("family")
    try:
        return name is not None and not get_family(name).discrete
    except DesignError:
        return False  # an unknown family is reported row by row


def load(path, opts: Options) -> Table:
    """Read and check a whole file into memory (refused beyond opts.max_rows data rows)."""
    table, chunks = open_table(path, opts)
    table.rows = [r for chunk in chunks(None) for r in chunk]
    return table


def open_table(path, opts: Options):
    """Check a file and its header; returns (Table without rows, chunks).

    ``chunks(size)`` yields the rows, read and checked, in lists of ``size`` rows
    (None: one list); only one list is in memory at a time.  The file is read in
    passes (hash and count; decimal mark; the gamma columns' decimals and the kind
    columns), so any file-level problem is raised before the first row is judged.
    """
    p = Path(path)
    mark = opts.decimal_mark
    if mark is not None and mark not in (".", ","):
        raise AuditInputError(f"invalid --decimal-mark = {mark!r}: '.' or ','",
                              field="--decimal-mark", value=mark, allowed="'.' or ','")
    if opts.gamma_rounding is not None and opts.gamma_rounding not in MODES:
        raise AuditInputError(f"invalid --gamma-rounding = {opts.gamma_rounding!r}: "
                              + " or ".join(MODES), field="--gamma-rounding",
                              value=opts.gamma_rounding, allowed=" or ".join(MODES))
    src = open_source(p, sheet=opts.sheet, delimiter=opts.delimiter, encoding=opts.encoding,
                      max_rows=opts.max_rows)
    header = src.header
    pos, ignored = C.resolve(header, opts.mapping)
    for name in opts.constants:
        if name in pos:
            raise AuditInputError(f"{name} is given both as column {header[pos[name]]!r} and on the "
                                  "command line / mapping file; keep one")
    _check_required(p.name, pos, opts.constants, header, _sheets_hint(p, opts))
    names = list(pos)

    def texts():
        for index, line, cells in src.rows():
            yield index, line, dict(zip(names, (cells[pos[k]].strip() if pos[k] < len(cells)
                                                 else "" for k in names)))

    if mark is None:
        mark, mixed = N.file_mark(t[k] for _, _, t in texts() for k in NUMERIC if k in t)
    counts = (Counter(), Counter())
    for index, line, t in texts():
        row = _row(index, line, t, opts.constants, mark, pos)
        _kind_columns(p.name, [row], pos)
        if row.error is None:
            for i in (0, 1):
                if row.numbers[i] is not None:
                    counts[i][row.numbers[i].decimals] += 1
    cols = tuple(column_decimals(c) for c in counts)

    def chunks(size):
        out = []
        for index, line, t in texts():
            row = _row(index, line, t, opts.constants, mark, pos)
            _set_decimals(row, cols)
            out.append(row)
            if size is not None and len(out) >= size:
                yield out
                out = []
        if out:
            yield out

    notes = list(src.notes)
    if _continuous_only(opts.constants):
        pass  # real cutoffs: no randomisation to read
    elif "gamma1" not in pos and "gamma2" not in pos:
        notes.append("no gamma columns: the table is read as non-randomised (every gamma 0)")
    else:
        for c, g in (("c1", "gamma1"), ("c2", "gamma2")):
            if c in pos and g not in pos:
                notes.append(f"no {g} column: {g} is read as 0 in every row (no randomisation "
                             f"at {c}); map it with --map if the file has it under another name")
    table = Table(p.name, [], {k: header[i] for k, i in pos.items()}, ignored, mark, notes,
                  src.sha256, cols, src.count)
    return table, chunks


def _sheets_hint(p: Path, opts) -> str:
    """For an XLSX read from its first sheet: the other sheets, where the data may be."""
    from .readers import file_format, sheet_names

    if opts.sheet is not None or file_format(p) != "xlsx":
        return ""
    names = sheet_names(p)
    if len(names) < 2:
        return ""
    return (f"; this is sheet {names[0]!r} of {', '.join(repr(s) for s in names)}: if the table "
            "is on another sheet, choose it with --sheet")


def _check_required(name, pos, consts, header, hint=""):
    missing = [k for k in ("family", "kind", "n", "alpha") if k not in pos and k not in consts]
    if not any(k in pos for k in ("c1", "c2")):
        missing.append("c1 or c2")
    if missing:
        have = ", ".join(repr(h) for h in header if h) or "none"
        raise AuditInputError(f"{name}: missing column(s) {', '.join(missing)} (columns found: "
                              f"{have}); map them with --map OURS=THEIRS or a mapping file, or "
                              f"give family / kind once with --family / --kind{hint}")


def _kind_columns(name, rows, pos):
    """A kind present in the file needs its hypothesis and cutoff columns."""
    for r in rows:
        if r.kind is None:
            continue
        k = get_kind(r.kind)
        need = list(k.takes) + (["c1"] if k.uses_c1 else []) + (["c2"] if k.uses_c2 else [])
        lacking = [c for c in need if c not in pos]
        if lacking:
            raise AuditInputError(f"{name}: row {r.index} (line {r.line}) is a {k.name} design but "
                                  f"the file has no {', '.join(lacking)} column; map it with --map")


def _empty(text) -> bool:
    return text.strip().casefold() in EMPTY


def _number(field_name, text, mark):
    try:
        return N.parse(text, mark)
    except N.NumberError as e:
        raise DesignError(f"invalid {field_name}: {e}", field=field_name, value=text) from None


def _row(index, line, t, consts, mark, pos) -> Row:
    ident = t.get("id") or None
    row = Row(index, line, ident, {k: v for k, v in t.items() if k != "id"})
    try:
        vals = {}
        for k in C.INPUTS:
            text = consts.get(k, t.get(k, ""))
            if k in ("family", "kind"):
                if N.is_formula(text):
                    raise DesignError(f"invalid {k}: {text!r} is a formula; type the name",
                                      field=k, value=text)
                vals[k] = None if _empty(text) else text
            else:
                vals[k] = None if _empty(text) else float(_number(k, text, mark))
            row.text[k] = text
        if vals["family"] is None or vals["kind"] is None:
            which = "family" if vals["family"] is None else "kind"
            raise DesignError(f"invalid {which}: empty", field=which)
        fam, knd = get_family(vals["family"]), get_kind(vals["kind"])
        row.kind = knd.name
        row.problem = make_problem(fam, knd, n=vals["n"], alpha=vals["alpha"], low=vals["low"],
                                   high=vals["high"], value=vals["value"],
                                   dispersion=vals["dispersion"])
        if fam.discrete:
            row.theirs, row.numbers = _answers(row.problem, t, mark, pos)
        else:
            row.theirs, row.cuts = _real_answers(row.problem, t, mark)
    except DesignError as e:
        row.error, row.error_field = str(e), e.field
    return row


def _answers(p: Problem, t, mark, pos):
    """Their (c1, g1, c2, g2) checked against the kind; Numbers of the gammas."""
    out, nums = [None, None, None, None], [None, None]
    for i, (c, g, used) in enumerate((("c1", "gamma1", p.kind.uses_c1),
                                      ("c2", "gamma2", p.kind.uses_c2))):
        ct, gt = t.get(c, ""), t.get(g, "")
        if not used:
            if not _empty(ct) or not _empty(gt):
                keep = " and ".join(x for x, u in (("c1, gamma1", p.kind.uses_c1),
                                                   ("c2, gamma2", p.kind.uses_c2)) if u)
                raise DesignError(f"invalid {c} = {ct!r}: the {p.kind.name} kind uses only {keep}; "
                                  f"leave {c} and {g} empty", field=c, value=ct)
            continue
        if _empty(ct):
            raise DesignError(f"invalid {c}: empty; the {p.kind.name} kind needs {c}", field=c)
        cn = _number(c, ct, mark)
        if not cn.is_integer() or cn.value < 0:
            raise DesignError(f"invalid {c} = {ct!r}: a cutoff is a whole number >= 0", field=c,
                              value=ct, allowed="a cutoff is a whole number >= 0")
        cv = int(cn.value)  # a binomial cutoff above n is judged (a wrong cutoff), not refused
        if g not in pos:
            gv, gn = 0.0, None
        elif _empty(gt):
            raise DesignError(f"invalid {g}: empty; write 0 for no randomisation at {c}", field=g)
        else:
            gn = _number(g, gt, mark)
            if not 0 <= gn.value <= 1:
                raise DesignError(f"invalid {g} = {gt!r}: a randomisation probability lies in "
                                  "[0, 1]", field=g, value=gt,
                                  allowed="a randomisation probability lies in [0, 1]")
            gv = float(gn.value)
        out[2 * i], out[2 * i + 1] = cv, gv
        nums[i] = gn
    return tuple(out), tuple(nums)


def _real_answers(p: Problem, t, mark):
    """Their real cutoffs (a continuous family): (c1, None, c2, None) and the cells as
    Numbers (exact decimals); a gamma cell must be empty or 0 (nothing randomised)."""
    out, cuts = [None, None, None, None], [None, None]
    for i, (c, g, used) in enumerate((("c1", "gamma1", p.kind.uses_c1),
                                      ("c2", "gamma2", p.kind.uses_c2))):
        ct, gt = t.get(c, ""), t.get(g, "")
        if not _empty(gt) and _number(g, gt, mark).value != 0:
            raise DesignError(f"invalid {g} = {gt!r}: the {p.family.name} family has real "
                              "cutoffs and never randomises; leave it empty", field=g, value=gt)
        if not used:
            if not _empty(ct):
                raise DesignError(f"invalid {c} = {ct!r}: the {p.kind.name} kind does not use "
                                  f"{c}; leave it empty", field=c, value=ct)
            continue
        if _empty(ct):
            raise DesignError(f"invalid {c}: empty; the {p.kind.name} kind needs {c}", field=c)
        cuts[i] = _number(c, ct, mark)
        out[2 * i] = float(cuts[i].value)
    return tuple(out), tuple(cuts)


def _set_decimals(row, cols) -> None:
    """Each gamma cell's decimals, given the columns' most common decimals ``cols``."""
    if row.error is not None:
        return
    for i in (0, 1):
        x = row.numbers[i]
        if x is None:
            continue
        d = cell_decimals(x.decimals, x.is_integer(), cols[i])
        row.decimals = row.decimals[:i] + (d,) + row.decimals[i + 1:]
