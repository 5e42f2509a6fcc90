"""exactband design: one exact test, in words and numbers (or JSON)."""

from __future__ import annotations

import json

from .common import add_command, add_design_options, design_kwargs

EXAMPLE = """\
examples:
  exactband design --family poisson --kind band --n 25 --low 2 --high 2.5 --alpha 0.05
      flaws counted on 25 bolts of cloth; H0: the flaw rate per bolt lies in [2, 2.5]
  exactband design --family binomial --kind upper --n 50 --value 0.1 --alpha 0.05 --json

The rule: reject H0 when Y (the total over the sample) is beyond the cutoffs c1, c2
(equivalence: strictly between them); at a cutoff itself reject with the stated
probability (the randomisation gamma1 at c1, gamma2 at c2).
"""


def add_parser(sub) -> None:
    p = add_command(
        sub, "design", "compute one exact test and print the rule",
        "Compute the exact optimal test for one design with the fast solver,\n"
                    "verify it with the high-precision solver, and print the decision rule.",
        EXAMPLE)
    add_design_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    p.add_argument("--no-verify", action="store_true",
                   help="fast solver only (no high-precision check, no decimal gammas)")
    p.set_defaults(run=run)


def design_json(d) -> dict:
    names = ("low", "high") if len(d.points) == 2 else ("value",)
    cc = d.check
    return {
        "inputs": {"family": d.family, "kind": d.kind, "n": d.n, "alpha": d.alpha, "low": d.low,
                   "high": d.high, "value": d.value, "dispersion": d.dispersion},
        "c1": d.c1, "gamma1": d.gamma1, "c2": d.c2, "gamma2": d.gamma2,
        "gamma1_decimal": d.gamma1_decimal, "gamma2_decimal": d.gamma2_decimal,
        "sizes": {name: s for name, s in zip(names, d.sizes)},
        "verified": d.verified, "precision": d.precision,
        "max_phi_difference": None if cc is None else cc.max_phi_diff,
        "rule": d.describe().splitlines(),
    }


def run(args) -> int:
    from ..api import design

    d = design(args.family, args.kind, verify=not args.no_verify, **design_kwargs(args))
    if args.json:
        print(json.dumps(design_json(d), indent=2))
        return 0
    print(d.describe())
    print()
    for name, c, g, text in (("1", d.c1, d.gamma1, d.gamma1_decimal),
                             ("2", d.c2, d.gamma2, d.gamma2_decimal)):
        if c is None:
            continue
        if d.problem.family.discrete:
            print(f"c{name} = {c}    gamma{name} = {text or repr(g)}")
        else:  # real cutoff, nothing randomised
            print(f"c{name} = {c!r}")
    if d.check is not None:
        print(d.check.summary())
    return 0
