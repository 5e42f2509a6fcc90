"""Batch form over a DataFrame: ``designs(frame)``.

Rows are validated column-wise with numpy (the same rules as
``params.make_problem``); the first bad row, if any, is then explained by
``make_problem`` itself, so the message is the one a single design would give,
prefixed with the row label.  Valid rows go to the fast solver one
(family, kind) group at a time; ``verify=True`` adds the precise solver and the
cross-check for every row.
"""

from __future__ import annotations

import numpy as np

from .errors import DesignError, VerificationError, recast
from .families import FAMILIES
from .kinds import KINDS
from .params import ALPHA_MAX, make_problem
from .solving import (
    DEFAULT_PRECISION,
    check_precision,
    continuous_fast,
    precision_alias,
    verify_many,
)

COLUMNS = ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion")
_NUMERIC = ("n", "alpha", "low", "high", "value", "dispersion")


def _numeric(frame, name):
    """Column as float array (NaN where missing) and a mask of unparseable cells."""
    import pandas as pd

    size = len(frame)
    if name not in frame.columns:
        return np.full(size, np.nan), np.zeros(size, dtype=bool)
    col = frame[name]
    if col.dtype == bool:
        return np.full(size, np.nan), np.ones(size, dtype=bool)
    num = pd.to_numeric(col, errors="coerce").to_numpy(dtype=float, na_value=np.nan)
    bad = col.notna().to_numpy() & np.isnan(num)
    if col.dtype == object:
        bad |= np.array([isinstance(v, bool) for v in col], dtype=bool)
    return num, bad


def _text(frame, name):
    return np.array([v.strip().lower() if isinstance(v, str) else None for v in frame[name]],
                    dtype=object)


def _group_ok(fam, kind, a):
    """Row mask of the group where every rule of make_problem holds."""
    n, alpha = a["n"], a["alpha"]
    with np.errstate(invalid="ignore", over="ignore"):
        ok = np.isfinite(n) & (n > 0) & (n <= 1e12)
        if fam.integer_n:
            ok &= (n >= 1) & (n == np.floor(n))
        lo_alpha = kind.alpha_min
        ok &= np.isfinite(alpha) & (alpha >= lo_alpha) & (alpha <= ALPHA_MAX)
        for name in ("low", "high", "value"):
            x = a[name]
            if name in kind.takes:
                ok &= np.isfinite(x) & fam.theta_ok_array(np.nan_to_num(x, nan=-1.0))
                if not fam.integer_n:
                    ok &= np.isfinite(n * x)
            else:
                ok &= np.isnan(x)
        if kind.two_point:
            ok &= a["low"] < a["high"]
        k = a["dispersion"]
        ok &= (np.isfinite(k) & (k > 0)) if fam.uses_dispersion else np.isnan(k)
    return ok


def _cell(v):
    """One cell as a plain Python value; None where missing (None, NaN, pandas NA)."""
    import pandas as pd

    if v is None or v is pd.NA:
        return None
    if isinstance(v, (float, np.floating)):
        return None if np.isnan(v) else float(v)
    if isinstance(v, np.integer):
        return int(v)
    return v


def _row_dict(frame, pos):
    out = {}
    for c in COLUMNS:
        out[c] = _cell(frame[c].iloc[pos]) if c in frame.columns else None
    return out


def _explain(frame, pos):
    """Raise the single-design message for row ``pos`` (prefixed with its label)."""
    row = _row_dict(frame, pos)
    try:
        make_problem(row["family"], row["kind"], n=row["n"], alpha=row["alpha"], low=row["low"],
                     high=row["high"], value=row["value"], dispersion=row["dispersion"])
    except DesignError as e:
        raise recast(e, DesignError, f"row {frame.index[pos]}: ") from None
    raise DesignError(f"row {frame.index[pos]}: invalid row: check its values")  # pragma: no cover


def designs(frame, *, verify=True, precision=None, workers=None, digits=None):
    """Batch form of ``design`` over a DataFrame.

    ``frame`` has columns family, kind, n, alpha and, where used, low, high,
    value, dispersion (missing or NaN where unused).  Returns a copy with
    c1, gamma1, c2, gamma2 added (c1/c2 as nullable integers).  ``verify=False``
    is the pure fast path; with ``verify=True`` every row is also solved in high
    precision (on ``workers`` processes, default all cores) and must agree.
    A bad row raises DesignError naming the row.  ``precision`` is the verifying
    solver's significant digits (default 50; ``digits`` is its deprecated alias).
    """
    import pandas as pd

    from .solvers import fast

    if not isinstance(frame, pd.DataFrame):
        raise DesignError(f"invalid frame = {type(frame).__name__}: a pandas DataFrame with "
                          f"columns {', '.join(COLUMNS)} (e.g. pandas.DataFrame(your_dict))",
                          field="frame", value=type(frame).__name__)
    missing = [c for c in ("family", "kind", "n", "alpha") if c not in frame.columns]
    if missing:
        raise DesignError(f"invalid frame: missing column(s) {', '.join(missing)}; "
                          f"expected columns {', '.join(COLUMNS)}", field="frame")
    import numbers

    from .parallel import check_workers

    if not isinstance(verify, (bool, numbers.Integral)):
        raise DesignError(f"invalid verify = {verify!r}: True or False", field="verify",
                          value=verify, allowed="True or False")
    check_workers(workers)
    precision = precision_alias(precision, digits, "designs")
    d = check_precision(DEFAULT_PRECISION if precision is None else precision)
    size = len(frame)
    fams, knds = _text(frame, "family"), _text(frame, "kind")
    cols, unreadable = {}, np.zeros(size, dtype=bool)
    for name in _NUMERIC:
        cols[name], bad = _numeric(frame, name)
        unreadable |= bad
    known = np.array([f in FAMILIES and k in KINDS for f, k in zip(fams, knds)], dtype=bool)
    bad_rows = np.nonzero(unreadable | ~known)[0]
    c1, g1 = np.full(size, np.nan), np.full(size, np.nan)
    c2, g2 = np.full(size, np.nan), np.full(size, np.nan)
    groups = {}
    for pos in np.nonzero(known)[0]:
        groups.setdefault((fams[pos], knds[pos]), []).append(pos)
    checked = []
    for (fname, kname), pos in groups.items():
        pos = np.array(pos)
        fam, kind = FAMILIES[fname], KINDS[kname]
        a = {name: cols[name][pos] for name in _NUMERIC}
        ok = _group_ok(fam, kind, a) & ~unreadable[pos]
        if not ok.all():
            bad_rows = np.concatenate([bad_rows, pos[~ok]])
        checked.append((fam, kind, pos, a))
    if bad_rows.size:
        _explain(frame, int(bad_rows.min()))
    for fam, kind, pos, a in checked:
        if not fam.discrete:  # real cutoffs: the continuous float solver, design by design
            for j in pos:
                row = _row_dict(frame, j)
                sol = continuous_fast(make_problem(
                    row["family"], row["kind"], n=row["n"], alpha=row["alpha"], low=row["low"],
                    high=row["high"], value=row["value"], dispersion=row["dispersion"]))
                c1[j], g1[j], c2[j], g2[j] = (np.nan if x is None else x for x in sol)
            continue
        used = {name: (a[name] if name in kind.takes else None) for name in ("low", "high", "value")}
        r = fast.solve(fam, kind.name, a["n"], a["alpha"], dispersion=(
            a["dispersion"] if fam.uses_dispersion else None), **used)
        c1[pos], g1[pos], c2[pos], g2[pos] = r
    if verify and size:
        problems, sols = [], []
        for pos in range(size):
            row = _row_dict(frame, pos)
            problems.append(make_problem(row["family"], row["kind"], n=row["n"],
                                         alpha=row["alpha"], low=row["low"], high=row["high"],
                                         value=row["value"], dispersion=row["dispersion"]))
            whole = problems[-1].family.discrete  # whole-number cutoffs, else real ones
            sols.append(tuple(None if np.isnan(v[pos]) else (int(v[pos]) if j % 2 == 0 and whole
                                                              else float(v[pos]))
                              for j, v in enumerate((c1, g1, c2, g2))))
        try:
            ds = verify_many(problems, sols, d, workers=workers)
        except VerificationError as e:
            raise recast(e, VerificationError) from None
        c1 = np.array([np.nan if x.c1 is None else x.c1 for x in ds], dtype=float)
        g1 = np.array([np.nan if x.gamma1 is None else x.gamma1 for x in ds], dtype=float)
        c2 = np.array([np.nan if x.c2 is None else x.c2 for x in ds], dtype=float)
        g2 = np.array([np.nan if x.gamma2 is None else x.gamma2 for x in ds], dtype=float)
    out = frame.copy()
    real = any(not FAMILIES[f].discrete for f in set(fams) if f in FAMILIES)
    for name, c, g in (("c1", c1, g1), ("c2", c2, g2)):
        if real:  # a frame with a continuous family: real cutoffs (NaN where none)
            out[name] = c
        else:
            out[name] = pd.array(np.where(np.isnan(c), 0, c).astype(np.int64), dtype="Int64")
            out.loc[np.isnan(c), name] = pd.NA
        out["gamma" + name[1]] = g
    return out
