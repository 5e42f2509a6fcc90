"""Demo: an invented cloth mill and its buyer agree exact decision rules.

The scenario is fictional.  A cloth mill counts weaving flaws on bolts of
cloth; mill and buyer agree that a flaw rate between 2 and 2.5 flaws per bolt
is what the contract means by "standard grade".  The demo computes the rules
they would print (each verified by both solvers) and shows them in words.
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


def main() -> int:
    print("exactband demo - an invented cloth mill counts weaving flaws on bolts of cloth.")
    print("Every rule below was computed by the fast solver and verified by the 50-digit one.")
    print("Caution: these are statistical decision rules; acceptance limits, sampling plans and")
    print("consequences come from the governing standard, local regulation and qualified")
    print("professionals.\n")
    for title, kw in SCENARIO:
        d = design(**kw)
        print("=" * 78)
        print(title)
        print("-" * 78)
        print(d.describe())
        print(d.check.summary())
        print()
    return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
