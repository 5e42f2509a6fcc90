"""The audit report's data: its columns and, per verdict, one typed record; the
summary counts and the provenance.  Shared by every report writer (reports for
CSV and JSON, xlsx_report, report_stream); computes nothing new, formats nothing.
"""

from __future__ import annotations

import platform

from . import text as T
from .policy import POLICY
from .verdicts import REASONS

# (header, kind of value) in report order; kind: text / int / prob / sci / pct / num / cut
# (cut: a cutoff, a whole number for a discrete family, a real one for a continuous one)
COLUMNS = [
    ("row", "int"), ("file_line", "int"), ("id", "text"), ("verdict", "text"), ("reasons", "text"),
    ("size_excess_pct_of_alpha", "pct"), ("power_shortfall_pct_of_alpha", "pct"),
    ("diagnosis", "text"), ("detail", "text"),
    ("family", "text"), ("kind", "text"), ("n", "text"), ("alpha", "text"), ("low", "text"),
    ("high", "text"), ("value", "text"), ("dispersion", "text"),
    ("their_c1", "text"), ("our_c1", "cut"), ("their_gamma1", "text"), ("our_gamma1", "text"),
    ("gamma1_abs_error", "sci"), ("gamma1_read_as", "text"),
    ("their_c2", "text"), ("our_c2", "cut"), ("their_gamma2", "text"), ("our_gamma2", "text"),
    ("gamma2_abs_error", "sci"), ("gamma2_read_as", "text"),
    ("their_size_low", "prob"), ("their_size_high", "prob"), ("size_excess", "sci"),
    ("min_power_outside_null", "prob"), ("at_theta", "num"), ("also_consistent_with", "text"),
]
HEADERS = [c for c, _ in COLUMNS]


def _read_as(v, i, modes) -> str | None:
    r = v.row
    if v.verdict == "invalid" or r.theirs is None or r.theirs[2 * i] is None:
        return None
    if not r.problem.family.discrete:
        return None  # real cutoffs: no gamma
    d = r.decimals[i]
    if d is None:
        return "exact"
    how = "truncated" if modes[i] == "truncate" else "rounded"
    return f"{how} to {d} decimal{'s' if d != 1 else ''}"


def record(v, modes=("round", "round")) -> dict:
    """One report row (typed values; None for empty) from a Verdict."""
    r, t = v.row, v.row.text
    alpha = r.problem.alpha if r.problem is not None else None
    out = {
        "row": r.index, "file_line": r.line, "id": r.ident, "verdict": v.verdict,
        "reasons": ", ".join(v.reasons), "detail": "; ".join(v.details),
        "diagnosis": v.diagnosis if v.verdict == "finding" else "",
        "also_consistent_with": "; ".join(v.also),
    }
    for k in ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion"):
        out[k] = t.get(k, "")
    for k in ("c1", "gamma1", "c2", "gamma2"):
        out[f"their_{k}"] = t.get(k, "")
    if v.ours_text is not None:
        c1, g1, c2, g2 = v.ours_text
        out.update(our_c1=c1, our_gamma1=g1, our_c2=c2, our_gamma2=g2)
    # unsigned numbers only: no report cell starts with a minus sign (the sign is in the detail)
    out["gamma1_abs_error"], out["gamma2_abs_error"] = (None if e is None else abs(e)
                                                        for e in v.gamma_error)
    out["gamma1_read_as"], out["gamma2_read_as"] = _read_as(v, 0, modes), _read_as(v, 1, modes)
    sizes = list(v.sizes) + [None, None]
    out["their_size_low"], out["their_size_high"] = sizes[0], sizes[1]
    excess = None if v.excess is None else max(v.excess, 0.0)
    out["size_excess"] = excess  # how far the larger attained size exceeds alpha (0: it does not)
    out["size_excess_pct_of_alpha"] = None if excess is None or not alpha else 100.0 * excess / alpha
    out["min_power_outside_null"], out["at_theta"] = v.min_power, v.at_theta
    short = None if v.min_power is None or not alpha else max(alpha - v.min_power, 0.0)
    out["power_shortfall_pct_of_alpha"] = None if short is None else 100.0 * short / alpha
    return out


def json_record(v, modes) -> dict:
    """``record`` with every text escaped for a report (the JSON rows)."""
    return {k: (T.report(x) if isinstance(x, str) else x) for k, x in record(v, modes).items()}


def provenance(result) -> dict:
    import mpmath
    import scipy

    from .. import __version__

    t = result.table
    return {
        "input": {"file": t.name, "sha256": result.sha256, "rows": result.tally.rows,
                  "columns": t.columns, "ignored_columns": t.ignored,
                  "decimal_mark": t.decimal_mark},
        "exactband": __version__, "python": platform.python_version(),
        "scipy": scipy.__version__, "mpmath": mpmath.__version__,
        "solver_precision": result.precision, "verdict_policy": POLICY,
        "gamma_rounding": {"gamma1": result.modes[0], "gamma2": result.modes[1]},
        "notes": list(t.notes) + list(result.notes),
    }


def worst_excess(result):
    """The verdict whose printed numbers exceed alpha the most (None if none does)."""
    return result.tally.worst


def summary(result) -> dict:
    c = result.counts
    worst = worst_excess(result)
    return {
        "rows": result.tally.rows, "ok": c.get("ok", 0), "finding": c.get("finding", 0),
        "invalid": c.get("invalid", 0),
        "findings_by_reason": {r: result.by_reason[r] for r in REASONS if result.by_reason[r]},
        "diagnoses": dict(sorted(result.by_diagnosis.items(), key=lambda kv: (-kv[1], kv[0]))),
        "rows_above_alpha": result.tally.above_alpha,
        "worst_excess_over_alpha": None if worst is None else worst.excess,
        "worst_excess_pct_of_alpha": None if worst is None
        else 100 * worst.excess / worst.row.problem.alpha,
        "worst_excess_row": None if worst is None else worst.row.index,
        "file_diagnosis": list(result.file_diagnosis),
        "exit_code": 0 if result.all_ok else 1,
    }
