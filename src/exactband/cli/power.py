"""exactband power: power and OC of the randomised, conservative and field rules over theta."""

from __future__ import annotations

from .common import add_command, add_design_options, design_kwargs
from .output import emit, frame_csv, frame_records, json_text

EXAMPLE = """\
examples:
  exactband power --family poisson --kind band --n 25 --low 2 --high 2.5 --alpha 0.05
      power and OC at 200 or so rates chosen to show the whole curve (CSV on stdout)
  exactband power --family poisson --kind band --n 25 --low 2 --high 2.5 --alpha 0.05 \\
      --theta 1.6,2,2.5,3 --json
  exactband power ... --theta-range 1:4 --points 61 --plot oc.png --out oc.csv

Columns: theta, in_null, power_randomised, power_conservative, power_digits and
oc_* = 1 - power_*.  'digits' is the rule the field applies with D random digits
(threshold t = floor(gamma * 10^D)); 'conservative' drops the randomisation.
Every number is an exact sum of probabilities, not a simulation, evaluated in
double precision: the CSV rounds powers to 14 decimals (their accuracy); thetas
of a range are rounded to 12 significant digits (0.05, not 0.04999999999999997).
"""


def add_parser(sub) -> None:
    from ..design import DEFAULT_RANDOM_DIGITS

    p = add_command(
        sub, "power", "power and OC curves of a design's three rules",
        "Power (probability of rejecting H0) and OC (1 - power) of the randomised, "
                    "the conservative and the digit-rounded rule of one design, over theta.",
        EXAMPLE)
    add_design_options(p)
    g = p.add_argument_group("theta values (default: a range showing the whole curve)")
    g.add_argument("--theta", metavar="LIST", help="comma-separated values, e.g. 1.6,2,3")
    g.add_argument("--theta-range", metavar="LO:HI", help="evenly spaced values from LO to HI")
    g.add_argument("--points", default="201", metavar="N",
                   help="number of values in a range (default 201)")
    p.add_argument("--random-digits", default=str(DEFAULT_RANDOM_DIGITS), metavar="D",
                   help=f"random digits of the field rule, 1 to 9 (default "
                        f"{DEFAULT_RANDOM_DIGITS}, as the tables)")
    p.add_argument("--json", action="store_true", help="JSON instead of CSV")
    p.add_argument("--out", metavar="FILE", help="write the CSV / JSON to FILE instead of stdout")
    p.add_argument("--plot", metavar="FILE", help="also draw the curves to FILE (.png or .svg)")
    p.add_argument("--curve", default="power", choices=("power", "oc"),
                   help="what the plot shows: power (default) or oc")
    p.add_argument("--no-verify", action="store_true",
                   help="fast solver only (no high-precision check)")
    p.set_defaults(run=run)


POWER_DECIMALS = 14  # double-precision sums: absolute error below 1e-14 (tests/test_words.py)


def rounded(frame):
    """The CSV's view: powers and OCs rounded to their accuracy, 14 decimals (a power
    below 5e-15 prints as 0.00000000000000, i.e. below the accuracy)."""
    out = frame.copy()
    for col in out.columns:
        if col.startswith(("power_", "oc_")):
            out[col] = [f"{x:.{POWER_DECIMALS}f}" for x in out[col]]
    return out


def thetas_from_args(design, args):
    """The theta values asked for (None: the default range)."""
    import numpy as np

    from ..oc import PlanningError, check_points, check_thetas

    if args.theta is not None and args.theta_range is not None:
        raise PlanningError("invalid theta-range: give either --theta or --theta-range, not both",
                            field="theta-range")
    if args.theta is not None:
        items = [x.strip() for x in args.theta.split(",")]
        return check_thetas(design, [x for x in items if x] or [args.theta])
    if args.theta_range is None:
        return None
    parts = [x.strip() for x in args.theta_range.split(":")]
    allowed = "LO:HI with LO < HI, e.g. 1:4"
    if len(parts) != 2:
        raise PlanningError(f"invalid theta-range = {args.theta_range}: {allowed}")
    lo, hi = (check_thetas(design, [x], "theta-range")[0] for x in parts)
    if not lo < hi:
        raise PlanningError(f"invalid theta-range = {args.theta_range}: {allowed}")
    from ..oc import snap

    return snap(np.linspace(lo, hi, check_points(args.points)))


def run(args) -> int:
    from ..api import design
    from ..oc import check_points, check_random_digits, operating_characteristics
    from .design import design_json

    plot = None
    if args.plot:
        from ..plots import check_plot_path

        plot = check_plot_path(args.plot)
    digits = check_random_digits(args.random_digits)
    check_points(args.points)
    d = design(args.family, args.kind, verify=not args.no_verify, **design_kwargs(args))
    theta = thetas_from_args(d, args)
    frame = operating_characteristics(d, theta, random_digits=digits,
                                      points=args.points)
    if plot is not None:
        from ..plots import oc_figure, save_figure

        save_figure(oc_figure(d, frame, curve=args.curve), plot)
    if args.json:
        t1, t2 = d.thresholds(digits)
        text = json_text({"design": design_json(d), "random_digits": digits,
                          "thresholds": {"threshold1": t1, "threshold2": t2},
                          "sizes": {k: list(v) for k, v in frame.attrs["sizes"].items()},
                          "rows": frame_records(frame)})
    else:
        text = frame_csv(rounded(frame))
    emit(text, args.out)
    return 0
