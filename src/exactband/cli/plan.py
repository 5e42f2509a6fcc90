"""exactband plan: the smallest n whose rule reaches a target power at each alternative."""

from __future__ import annotations

from .common import add_command, add_design_options, check_needed, check_precision
from .output import emit, json_text, require

EXAMPLE = """\
examples:
  exactband plan --family poisson --kind band --low 2 --high 2.5 --alpha 0.05 \\
      --alternatives 1.6,3.0 --target 0.9
      smallest exposure n at which the randomised rule rejects H0 with probability
      at least 0.9 when the true rate is 1.6 and when it is 3.0
  exactband plan ... --rule conservative --plot plan.png
      the conservative rule's power is saw-toothed in n: prints the smallest n that
      meets the target and n_from, from which every larger n meets it
  exactband plan ... --step 0.5 --json     exposure in steps of 0.5 (poisson only)
"""


def add_parser(sub) -> None:
    from ..design import DEFAULT_RANDOM_DIGITS

    p = add_command(
        sub, "plan", "sample size: smallest n reaching a target power",
        "Find the smallest n (on the grid step, 2*step, ...) at which the chosen "
                    "rule's power is at least the target at every alternative. Required: "
                    "--family, --kind, --alpha, the hypothesis values, --alternatives, "
                    "--target.",
        EXAMPLE)
    add_design_options(p, required=False, include_n=False)
    g = p.add_argument_group("planning")
    g.add_argument("--alternatives", metavar="LIST",
                   help="comma-separated theta values outside the null region (required)")
    g.add_argument("--target", metavar="P", help="power wanted, alpha < P < 1 (required)")
    g.add_argument("--rule", default="randomised", metavar="RULE",
                   help="randomised (default; randomized is accepted), conservative (no randomisation) or digits "
                        "(the field rule with --random-digits)")
    g.add_argument("--random-digits", default=str(DEFAULT_RANDOM_DIGITS), metavar="D",
                   help=f"digits of the field rule for --rule digits "
                        f"(default {DEFAULT_RANDOM_DIGITS})")
    g.add_argument("--step", metavar="S",
                   help="grid of n: S, 2S, 3S... (default 1; poisson exposure may be "
                        "fractional, e.g. 0.5)")
    g.add_argument("--n-max", default="1e7", metavar="N",
                   help="give up beyond this n (default 1e7)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    p.add_argument("--plot", metavar="FILE",
                   help="draw power against n around the answer to FILE (.png or .svg)")
    p.add_argument("--no-verify", action="store_true",
                   help="fast solver only (no high-precision check of the reported designs)")
    p.set_defaults(run=run)


def _powers(result, values) -> str:
    import math

    from ..numtext import number_text

    word = result.design.problem.family.theta_word
    # truncated, not rounded: a power shown as 0.900000 is never below a target of 0.9
    return "; ".join(f"{word} {number_text(a)}: {math.floor(p * 1e6) / 1e6:.6f}"
                     for a, p in zip(result.alternatives, values))


def text_report(r) -> str:
    from ..numtext import number_text

    fam = r.design.problem.family
    rule = {"randomised": "randomised rule", "conservative": "conservative rule",
            "digits": f"field rule with {r.random_digits} random digits"}[r.rule]
    if not fam.discrete:  # real cutoffs: every rule is the one rule
        rule = "rule (real cutoffs, no randomisation)"
    alts = ", ".join(number_text(a) for a in r.alternatives)
    lines = [f"Smallest {fam.n_word} (grid step {number_text(r.step)}) "
             f"with power >= {r.target:g} at "
             f"{fam.theta_word} {alts}, {rule}:", f"  n = {number_text(r.n)}"]
    if r.rule != "randomised":
        how = (f"checked one by one up to n = {number_text(r.n_certified)}, certified beyond"
               if r.n_certified > r.n_from else
               f"certified from n = {number_text(r.n_certified)} on")
        lines.append(f"  n_from = {number_text(r.n_from)}  "
                     f"(every larger n meets the target: {how})")
        lines.append(f"  the randomised rule needs n = {number_text(r.n_randomised)}")
    lines.append(f"Power at n = {number_text(r.n)}: {_powers(r, r.power)}")
    if r.power_below is not None:
        lines.append(f"Power at n = {number_text(r.n - r.step)}: {_powers(r, r.power_below)}")
    if r.n_from != r.n:
        lines.append(f"Power at n_from = {number_text(r.n_from)}: {_powers(r, r.power_from)}")
    lines += ["", f"The {rule} at n = {number_text(r.n)}:",
              r.design.describe(rule=r.rule, random_digits=r.random_digits or None)]
    if r.design.check is not None:
        lines.append(r.design.check.summary())
    return "\n".join(lines) + "\n"


def run(args) -> int:
    from ..planning import plan, power_against_n
    from .design import design_json

    require(args, ("family", "kind", "alpha", "alternatives", "target"), "plan")
    check_needed(args)
    plot = None
    if args.plot:
        from ..plots import check_plot_path

        plot = check_plot_path(args.plot)
    r = plan(args.family, args.kind, alpha=args.alpha, alternatives=args.alternatives,
             target=args.target, low=args.low, high=args.high, value=args.value,
             dispersion=args.dispersion, rule=args.rule, random_digits=args.random_digits,
             step=args.step, n_max=args.n_max, verify=not args.no_verify, precision=check_precision(args.precision))
    if plot is not None:
        from ..plots import plan_figure, save_figure

        save_figure(plan_figure(r, power_against_n(r)), plot)
    if args.json:
        out = r.to_dict()
        out["design"] = design_json(r.design)
        if r.n_from != r.n:
            out["design_from"] = design_json(r.design_from)
        emit(json_text(out))
    else:
        emit(text_report(r))
    return 0
