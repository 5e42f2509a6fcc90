"""exactband decide: the decision for an observed count, with auditable randomisation."""

from __future__ import annotations

from .common import add_command, add_design_options, check_needed, check_precision
from .output import emit, json_text, require

EXAMPLE = """\
examples:
  exactband decide --family poisson --kind band --n 25 --low 2 --high 2.5 --alpha 0.05 \\
      --y 39 --digits-read 482
      Y = 39 is the lower cutoff: the 3 digits 482 are compared with the threshold
      t1 = floor(gamma1 * 10^3); reject if 482 < t1
  exactband decide --table output/demo/demo.csv --kind band --n 25 --alpha 0.05 \\
      --low 2 --high 2.5 --y 39 --digits-read 482
      the rule as printed in a generated table (its thresholds and number of digits);
      the row is solved again first and refused if any number in it differs
  exactband decide ... --y 39            digits drawn from the operating system's
                                         cryptographic generator, and printed
  exactband decide ... --y 39 --conservative   never reject at a cutoff

The digits used are always printed, so the decision can be checked later.
"""


def add_parser(sub) -> None:
    from ..design import DEFAULT_RANDOM_DIGITS

    p = add_command(
        sub, "decide", "decision for an observed count (randomisation by digits)",
        "Apply a design (given by its parameters or by a row of a generated "
                    "table CSV) to an observed total count Y and state the decision. "
                    "Required: --y and either --table or --family, --kind, --n, --alpha and "
                    "the hypothesis values.",
        EXAMPLE)
    add_design_options(p, required=False)
    g = p.add_argument_group("observation and randomisation")
    g.add_argument("--y", "--count", dest="y", metavar="Y", help="the observed total count "
                   "(required)")
    g.add_argument("--digits-read", "--digits", dest="digits_read", metavar="DIGITS",
                   help="random digits read by the inspector, e.g. 482 (their number is the "
                        "rule's number of digits); omitted: drawn from the operating system "
                        "(--digits is the old name)")
    g.add_argument("--random-digits", metavar="D",
                   help=f"number of digits the rule reads (default: the table's, else the "
                        f"number of --digits-read given, else {DEFAULT_RANDOM_DIGITS})")
    g.add_argument("--conservative", action="store_true",
                   help="the conservative rule: never reject at a cutoff")
    t = p.add_argument_group("design from a generated table")
    t.add_argument("--table", metavar="FILE.csv",
                   help="machine-readable table CSV; the row is picked by --row or by the "
                        "design options given")
    t.add_argument("--row", metavar="N", help="row N of the table: the N-th data row, 1-based "
                   "(the header line is not counted; row 1 is the first design)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    p.set_defaults(run=run)


def run(args) -> int:
    from ..api import design
    from ..decide import DecideError, decide

    require(args, ("y",), "decide")
    rule = "conservative" if args.conservative else "randomised"
    if args.table:
        from ..tableverify import verified_table_rule

        tr = verified_table_rule(args.table, args.row, args.random_digits, family=args.family,
                        kind=args.kind, n=args.n, alpha=args.alpha, low=args.low,
                        high=args.high, value=args.value, dispersion=args.dispersion)
        dec = decide(tr.design, args.y, rule=rule, digits_read=args.digits_read,
                     random_digits=tr.random_digits, thresholds=tr.thresholds)
        if tr.note:
            from dataclasses import replace

            dec = replace(dec, notes=dec.notes + (tr.note,))
        source = f"table {tr.path}, row {tr.row} (the row matches a fresh solve)"
    else:
        if args.row is not None:
            raise DecideError(f"invalid row = {args.row}: --row needs --table", field="row",
                              value=args.row, allowed="--row needs --table")
        require(args, ("family", "kind", "n", "alpha"), "decide")
        check_needed(args)
        d = design(args.family, args.kind, n=args.n, alpha=args.alpha, low=args.low,
                   high=args.high, value=args.value, dispersion=args.dispersion,
                   precision=check_precision(args.precision))
        dec = decide(d, args.y, rule=rule, digits_read=args.digits_read,
                     random_digits=args.random_digits)
        source = "computed from the parameters" + (" and verified" if d.verified else "")
    if args.json:
        out = dec.to_dict()
        out["design_source"] = source
        emit(json_text(out))
    else:
        emit(f"Design: {source}.\n{dec.describe()}\n")
    return 0
