"""Demo: an invented cloth mill and its buyer agree exact decision rules.

The scenario is fictional.  A cloth mill counts weaving flaws on bolts of
cloth; mill and buyer agree that a flaw rate between 2 and 2.5 flaws per bolt
is what the contract means by "standard grade".  The demo computes the rules
they would print (each verified by both solvers), shows one in words and writes
the printed table set of ``tables/demo.toml`` to ``output/demo/``.
"""

from __future__ import annotations

from .api import design

SCENARIO = [
    ("Band: is the flaw rate within the agreed 2 to 2.5 flaws per bolt? (25 bolts inspected)",
     dict(family="poisson", kind="band", n=25, low=2, high=2.5, alpha=0.05)),
    ("Upper: the buyer's ceiling, at most 2.5 flaws per bolt (10 bolts inspected)",
     dict(family="poisson", kind="upper", n=10, value=2.5, alpha=0.05)),
    ("Point: the loom maker's claim of exactly 2 flaws per bolt (40 bolts)",
     dict(family="poisson", kind="point", n=40, value=2, alpha=0.01)),
    ("Upper, proportion: at most 5% of bolts with a colour fault (80 bolts checked)",
     dict(family="binomial", kind="upper", n=80, value=0.05, alpha=0.05)),
    ("Band, clustered flaws: negative-binomial with dispersion k = 4 (25 bolts)",
     dict(family="negative-binomial", kind="band", n=25, low=2, high=2.5, dispersion=4,
          alpha=0.05)),
    ("Equivalence: show the rate lies inside 1.8 to 2.6 flaws per bolt (60 bolts)",
     dict(family="poisson", kind="equivalence", n=60, low=1.8, high=2.6, alpha=0.05)),
]


def main(argv=None) -> int:
    """Write the demo table set (default: tables/demo.toml -> output/demo/) and print paths."""
    import sys

    from .tables import generate

    argv = sys.argv[1:] if argv is None else argv
    spec = argv[0] if argv else "tables/demo.toml"
    out = argv[1] if len(argv) > 1 else "output/demo"
    print("exactband demo - an invented cloth mill counts weaving flaws on bolts of cloth.")
    print("Caution: these are statistical decision rules; acceptance limits, sampling plans and")
    print("consequences come from the governing standard, local regulation and qualified")
    print("professionals.\n")
    title, kw = SCENARIO[0]
    d = design(**kw)
    print(title)
    print(d.describe())
    print()
    print(f"Table set from {spec} (every row verified by the 50-digit solver):")
    for path in generate(spec, out):
        print(f"  {path}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
