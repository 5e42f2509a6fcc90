"""exactband challenge: write a grid of hard designs for a vendor to fill in."""

from __future__ import annotations

from .common import add_command

EXAMPLE = """\
examples:
  exactband challenge --out challenge.xlsx
  exactband challenge --out challenge.csv --seed 7
then, when the vendor returns the file with c1, gamma1, c2, gamma2 filled in:
  exactband audit challenge_filled.xlsx --report grading

The grid covers every kind (upper, lower, point, band, equivalence) and discrete family
(poisson, binomial, negative-binomial) in hard regimes: small counts, narrow bands,
alpha down to 1e-6, large n, p near 0 or 1.  Same seed and version -> same bytes.
"""


def add_parser(sub) -> None:
    p = add_command(
        sub, "challenge", "write a challenge set of hard designs for a vendor",
        "Write a deterministic grid of hard designs with empty answer columns "
                    "(c1, gamma1, c2, gamma2) for a vendor to fill in; grade the returned file "
                    "with 'exactband audit'.",
        EXAMPLE)
    p.add_argument("--out", required=True, metavar="FILE", help="output file: .csv or .xlsx")
    p.add_argument("--seed", default="0", metavar="S",
                   help="whole number >= 0 that jitters the grid (default 0)")
    p.set_defaults(run=run)


def run(args) -> int:
    from pathlib import Path

    from ..audit import AuditInputError
    from ..audit import challenge as ch
    from ..errors import ExactbandError
    from ..fileio import atomic_write_bytes
    from ..strict import whole

    try:
        seed = whole("--seed", args.seed, "a whole number >= 0")
    except ExactbandError:
        seed = -1
    if seed < 0:
        raise AuditInputError(f"invalid --seed = {args.seed!r}: a whole number >= 0",
                              field="--seed", value=args.seed, allowed="a whole number >= 0")
    out = Path(args.out)
    ext = out.suffix.lower()
    if ext not in (".csv", ".xlsx"):
        raise AuditInputError(f"invalid --out = {args.out!r}: the name must end in .csv or .xlsx",
                              field="--out", value=args.out,
                              allowed="the name must end in .csv or .xlsx")
    if out.is_dir():
        raise AuditInputError(f"invalid --out = {args.out!r}: is a folder", field="--out",
                              value=args.out)
    rows = ch.grid(seed)
    data = ch.csv_bytes(rows) if ext == ".csv" else ch.xlsx_bytes(rows, seed)
    atomic_write_bytes(out, data)
    print(f"wrote {len(rows)} designs to {out} (seed {seed}).")
    for line in ch.INSTRUCTIONS:
        print("  " + line)
    return 0
