"""exactband table: print-ready tables from a TOML spec, and --check of a generated set."""

from __future__ import annotations

import contextlib
import sys

from .common import add_command, add_workers_option, check_workers

EXAMPLE = """\
examples:
  exactband table tables/demo.toml --out output/demo
      writes demo.csv, demo.print.csv, demo.xlsx, demo.pdf and demo.manifest.json
  exactband table --check output/demo     (or: exactband table --check --out output/demo)
      regenerates every set in the folder from the spec its manifest records and
      compares every file byte for byte (exit 0: all identical; 1: findings)

A spec (TOML; every key is described in README.md):
  title = "Weaving flaws per bolt"          # printed on every page
  scenario = "Mill and buyer agree ..."     # free text for the cover
  family = "poisson"                        # poisson, binomial, negative-binomial
  kinds = ["band", "upper"]                 # band, equivalence, upper, lower, point
  alpha = [0.05, 0.01]
  n = { from = 10, to = 50, step = 5 }      # or a list: n = [10, 20, 50]
  bands = [[2.0, 2.5]]                      # for band and equivalence
  values = [2.5]                            # for upper, lower and point
  # optional: dispersion (negative-binomial), gamma_decimals = 4, random_digits = {random_digits},
  # conservative = true, paper = "A4" | "Letter", precision = 50, random_seed,
  # random_digit_pages = 1
  [oc]                                      # optional, last: what the rules catch
  thetas = [1.5, 3.0]                       # spreadsheet sheet 'Power' at these values
  # curves = true (PDF pages of OC curves), n = [...] (the n drawn),
  # n_per_chart = 4 (1 to 6), rules = ["randomised", "conservative"] (or "digits")

Every design is computed by the fast solver and confirmed by the high-precision
solver before any file is written; a disagreement stops the run (exit 1).  The
set is staged and moved into place with its manifest last (the manifest is the
commit point); an interrupted run resumes from the verification cache kept in
the output folder.
"""


def add_parser(sub) -> None:
    from ..rule import DEFAULT_RANDOM_DIGITS
    from ..tables.spec import GRID_LIMIT, LARGE_LIMIT

    p = add_command(
        sub, "table", "write verified, print-ready tables (CSV, spreadsheet, PDF) from a spec",
        "Compute every design of a table spec, verify each with the "
                    "high-precision solver, and write the table set into a folder.",
        EXAMPLE.replace("{random_digits}", str(DEFAULT_RANDOM_DIGITS)))
    p.add_argument("spec", nargs="?", metavar="SPEC", help="the table spec (a .toml file)")
    p.add_argument("--out", metavar="DIR", help="folder to write the table set into")
    p.add_argument("--check", nargs="?", const=True, metavar="DIR",
                   help="regenerate the set(s) in DIR (or in the --out DIR) from their "
                        "manifests and compare every file byte for byte, instead of generating")
    p.add_argument("--allow-large", action="store_true",
                   help=f"allow a grid of more than {GRID_LIMIT} designs (up to {LARGE_LIMIT})")
    add_workers_option(p)
    p.set_defaults(run=run)


@contextlib.contextmanager
def _bar(desc: str):
    """A tqdm progress bar on stderr when it is a terminal; else no callback.

    The callback is ``progress(k, total=None)``: k more designs done; ``total``
    (once, first) sets the number expected.
    """
    if not sys.stderr.isatty():
        yield None
        return
    from tqdm import tqdm

    with tqdm(desc=desc, unit=" designs", file=sys.stderr, leave=False) as bar:
        def update(k, total=None):
            if total is not None:
                bar.reset(total=total)
            bar.update(k)
        yield update


def _log(text: str) -> None:
    print(f"exactband: {text}", file=sys.stderr)


def _check_folder(args) -> str:
    """--check DIR, or --check with --out DIR: the same folder option as generating."""
    from ..cli import UsageError

    if args.spec is not None:
        raise UsageError("table: --check re-verifies a generated folder and takes no SPEC")
    folder = args.check if isinstance(args.check, str) else args.out
    if folder is None:
        raise UsageError("table: --check needs the folder: --check DIR or --check --out DIR")
    if isinstance(args.check, str) and args.out is not None and args.out != args.check:
        raise UsageError(f"table: two folders given (--check {args.check} and --out "
                         f"{args.out}); give one")
    return folder


def run(args) -> int:
    from ..cli import UsageError

    workers = check_workers(args.workers)
    if args.check is not None:
        folder = _check_folder(args)
        from ..tables import check_set

        with _bar("regenerating") as progress:
            ok, lines = check_set(folder, workers=workers, progress=progress)
        print("\n".join(lines))
        return 0 if ok else 1
    if args.spec is None:
        raise UsageError("table: give a SPEC and --out DIR, or --check DIR")
    if args.out is None:
        raise UsageError("table: --out DIR is required with a SPEC")
    from ..tables import generate

    with _bar("verifying") as progress:
        paths = generate(args.spec, args.out, allow_large=args.allow_large, workers=workers,
                         progress=progress, log=_log)
    for p in paths:
        print(p)
    return 0
