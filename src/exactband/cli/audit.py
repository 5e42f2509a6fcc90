"""exactband audit: verify a third party's table row by row and diagnose what they did."""

from __future__ import annotations

import sys

from .common import (
    DISPERSION_HELP,
    FAMILY_HELP,
    KIND_HELP,
    add_command,
    add_workers_option,
    check_precision,
    check_workers,
)

EXAMPLE = """\
examples:
  exactband audit vendor_table.csv --report audit_out
  exactband audit vendor.xlsx --sheet Rules --family poisson --kind band --report out \\
      --map n='Bolts inspected' --map c1='Lower limit' --map gamma1='P at lower'
  exactband audit vendor.csv --mapping vendor_columns.toml --decimal-mark , --report out

Columns recognised without a mapping (any letter case): family, kind, n, alpha, low,
high, value, dispersion, c1, gamma1, c2, gamma2, and id (carried into the report).
A mapping file is TOML: optional family / kind / dispersion / decimal_mark keys and a
[columns] table of OURS = "THEIR COLUMN NAME".

Verdicts: ok only when the cutoffs are exact, each gamma agrees within the decimals
its cell prints (rounded or truncated: inferred per column, or --gamma-rounding), and
the size the row's printed numbers attain is at most alpha (tolerance 1e-12 of alpha).
Families with real cutoffs (continuous Y, no gamma columns): ok when each printed
cutoff lies within one unit of its last printed decimal of the optimal one and the
size the printed cutoffs attain is at most alpha (same tolerance).
finding: cutoff, gamma, size (with a diagnosis such as equal-tailed, end-anchored
tails, conservative non-randomised, gammas rounded or truncated to k decimals, gammas
or cutoff columns swapped, cutoff convention shifted by one, neighbouring n or alpha);
invalid: a row that cannot be read or that the solvers decline (with the reason).
"row N" is the N-th data row (header not counted); reports also give the file line.
Exit code: 0 every row ok, 1 any finding or invalid row, 2 the input is unusable.
Reports in DIR: audit-report.csv, audit-report.xlsx, audit-summary.json.
"""


def add_parser(sub) -> None:
    p = add_command(
        sub, "audit", "verify a third party's table (CSV or XLSX) row by row",
        "Recompute every row of a third party's table with both solvers, judge their "
                    "cutoffs and gammas, the sizes their numbers attain and the unbiasedness of "
                    "their rule, and diagnose which construction they used instead.",
        EXAMPLE)
    p.add_argument("file", metavar="THEIR_FILE", help="their table: .csv or .xlsx")
    p.add_argument("--report", metavar="DIR", help="write the CSV, XLSX and JSON reports here")
    g = p.add_argument_group("reading their file")
    g.add_argument("--map", action="append", metavar="OURS=THEIRS", default=[],
                   help="their column name for a standard column (repeat as needed)")
    g.add_argument("--mapping", metavar="FILE", help="TOML mapping file (see below)")
    g.add_argument("--family", metavar="NAME", help="family of every row, when the file has no family column; "
                   + FAMILY_HELP)
    g.add_argument("--kind", metavar="KIND", help="kind of every row, when the file has no kind column; " + KIND_HELP)
    g.add_argument("--dispersion", metavar="K", help="dispersion of every row, when the file has no dispersion "
                   "column; " + DISPERSION_HELP)
    g.add_argument("--decimal-mark", metavar="M", choices=[".", ","],
                   help="decimal mark of the file ('.' or ','), when the cells do not show it")
    g.add_argument("--sheet", metavar="NAME", help="XLSX sheet to read (default: the first)")
    g.add_argument("--delimiter", metavar="C", help="CSV delimiter (default: sniffed: , ; or tab)")
    g.add_argument("--encoding", metavar="E", default="utf-8", help="CSV text encoding (utf-8)")
    g.add_argument("--max-rows", metavar="N", default="20000",
                   help="refuse files with more data rows than this (default 20000)")
    j = p.add_argument_group("judging")
    j.add_argument("--gamma-rounding", metavar="MODE", choices=["round", "truncate"],
                   help="how their gammas were cut to the decimals printed: round or truncate "
                        "(default: inferred per column from the file)")
    j.add_argument("--precision", metavar="D", default="50",
                   help="significant digits of the high-precision solver (default 50)")
    add_workers_option(j)
    p.set_defaults(run=run)


def _int(name, text, lo):
    from ..audit import AuditInputError
    from ..errors import ExactbandError, recast
    from ..strict import whole

    try:
        v = whole(f"--{name}", text, f"a whole number >= {lo}")
    except ExactbandError as e:
        raise recast(e, AuditInputError) from None
    if v < lo:
        raise AuditInputError(f"invalid --{name} = {text!r}: a whole number >= {lo}",
                              field=f"--{name}", value=text, allowed=f"a whole number >= {lo}")
    return v


def options(args):
    """Options for exactband.audit from the parsed arguments."""
    from ..audit import Options
    from ..audit.columns import parse_map_flags, read_mapping_file

    mapping, consts = ({}, {}) if not args.mapping else read_mapping_file(args.mapping)
    mapping.update(parse_map_flags(args.map))
    mark = consts.pop("decimal_mark", None)
    for k in ("family", "kind", "dispersion"):
        if getattr(args, k) is not None:
            consts[k] = getattr(args, k)
    return Options(mapping=mapping, constants=consts, decimal_mark=args.decimal_mark or mark,
                   gamma_rounding=args.gamma_rounding, max_rows=_int("max-rows", args.max_rows, 1),
                   sheet=args.sheet, delimiter=args.delimiter, encoding=args.encoding)


def progress_printer(total: int):
    """A progress callback on stderr when it is a terminal, else None."""
    if not sys.stderr.isatty() or total < 50:
        return None
    done = [0]

    def tick(k):
        done[0] += k
        if done[0] == total or done[0] % 25 == 0:
            print(f"\r  {done[0]}/{total} rows", end="\n" if done[0] == total else "",
                  file=sys.stderr, flush=True)

    return tick


def run(args) -> int:
    from pathlib import Path

    from ..audit import AuditInputError, audit, reports
    from ..audit.report_stream import Writer

    opts = options(args)
    workers = check_workers(args.workers)
    if args.report is not None and Path(args.report).exists() and not Path(args.report).is_dir():
        raise AuditInputError(f"invalid --report = {args.report!r}: exists and is not a folder",
                              field="--report", value=args.report)
    # rows are judged in chunks and the reports streamed: memory does not grow with the file
    sink = None if args.report is None else Writer(args.report)
    result = audit(args.file, opts, precision=check_precision(args.precision), workers=workers,
                   progress=progress_printer, sink=sink, keep=False)
    print(reports.summary_text(result, args.report))
    return 0 if result.all_ok else 1
