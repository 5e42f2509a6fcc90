"""Options shared by commands that take one design's parameters."""

from __future__ import annotations

import argparse

from ..families import FAMILIES

FAMILY_HELP = "law of the statistic Y: " + ", ".join(FAMILIES)
DISPERSION_HELP = ("the known second parameter, for the families that take one: "
                   + "; ".join(f"{f.name}: {f.dispersion_word}" for f in FAMILIES.values()
                               if f.uses_dispersion))
KIND_HELP = ("hypothesis: band (low <= theta <= high), point (theta = value), "
             "upper (theta <= value), lower (theta >= value), "
             "equivalence (theta <= low or theta >= high)")


def add_command(sub, name: str, summary: str, description: str, example: str):
    """A subcommand parser: one-line summary for 'exactband --help', description, examples."""
    return sub.add_parser(name, help=summary, description=description, epilog=example,
                          formatter_class=argparse.RawDescriptionHelpFormatter)


def add_design_options(p: argparse.ArgumentParser, required: bool = True,
                       include_n: bool = True) -> None:
    """The design options; the solver precision is --precision (the random digits an
    inspector reads are decide's --digits-read)."""
    g = p.add_argument_group("design")
    g.add_argument("--family", required=required, metavar="NAME", help=FAMILY_HELP)
    g.add_argument("--kind", required=required, metavar="KIND", help=KIND_HELP)
    if include_n:
        g.add_argument("--n", required=required, metavar="N",
                       help="exposure (poisson: real > 0, e.g. hours or square metres) or number "
                            "of trials / units / observations (the other families: whole "
                            "number >= 1)")
    g.add_argument("--alpha", required=required, metavar="A", help="size of the test, 0 < A < 1")
    g.add_argument("--low", metavar="X", help="lower end of the band (band, equivalence)")
    g.add_argument("--high", metavar="X", help="upper end of the band (band, equivalence)")
    g.add_argument("--value", metavar="X", help="hypothesised value (upper, lower, point)")
    g.add_argument("--dispersion", metavar="K", help=DISPERSION_HELP)
    g.add_argument("--precision", default="50", metavar="D",
                   help="significant digits of the verifying high-precision solver (default 50)")


WORKERS_HELP = ("worker processes for the high-precision checks (default: every usable core; "
                "never more than the cores or the rows / designs to check)")


def add_workers_option(group) -> None:
    """--workers: one parser and one default for every command."""
    group.add_argument("--workers", metavar="N", help=WORKERS_HELP)


def check_workers(value):
    """--workers as given: None (the default: every usable core) or a whole number."""
    from ..parallel import check_workers as check

    return check(value, "--workers")


def check_precision(value) -> int:
    """--precision as the solvers' digits; the message names the option the user typed."""
    from ..solving import check_precision as check

    return check(value)


def check_needed(args) -> None:
    """The options the chosen kind and family need, named as options when absent:
    'missing --high: the band kind needs it'."""
    from ..families import get_family
    from ..kinds import get_kind
    from . import UsageError

    if args.family is None or args.kind is None:
        return
    fam, kind = get_family(args.family), get_kind(args.kind)
    for name in kind.takes:
        if getattr(args, name, None) is None:
            raise UsageError(f"missing --{name}: the {kind.name} kind needs it")
    if fam.uses_dispersion and getattr(args, "dispersion", None) is None:
        raise UsageError(f"missing --dispersion: the {fam.name} family needs a known "
                         f"{fam.dispersion_word}, a finite number > 0")


def design_kwargs(args) -> dict:
    check_needed(args)
    args.precision = check_precision(args.precision)
    return dict(n=args.n, alpha=args.alpha, low=args.low, high=args.high, value=args.value,
                dispersion=args.dispersion, precision=args.precision)
