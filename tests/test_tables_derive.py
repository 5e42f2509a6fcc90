"""The table build's vectorised derived sizes equal the one-design-at-a-time ones, bit for bit.

The one-by-one path (Design.digit_rule / Design.nonrandomized, float law per design)
is the reference; the vectorised path must reproduce its doubles exactly, since
NAME.csv prints them with repr and the set's bytes must not depend on the path.
"""

from __future__ import annotations

import random
from types import SimpleNamespace

import pytest

from exactband import api
from exactband.rulesizes import sizes_with_gammas
from exactband.tables.build import derive, derive_all

KINDS = ("upper", "lower", "point", "band", "equivalence")


def _problems(rng):
    out = []
    for kind in KINDS:
        for _ in range(6):
            alpha = rng.choice([0.1, 0.05, 0.01, 0.001, 0.3])
            one = kind in ("upper", "lower", "point")
            out.append(("poisson", kind, dict(n=rng.choice([1, 7.5, 40, 300]), alpha=alpha),
                        rng.choice([0.2, 1.0, 3.5, 20.0]), one))
            out.append(("binomial", kind, dict(n=rng.choice([5, 60, 500, 20000]), alpha=alpha),
                        rng.choice([0.02, 0.3, 0.5, 0.8, 0.97]), one))
            out.append(("negative-binomial", kind,
                        dict(n=rng.choice([3, 25, 200]), alpha=alpha,
                             dispersion=rng.choice([0.5, 4.0, 1e6])),
                        rng.choice([0.3, 2.0, 9.0]), one))
    designs = []
    for fam, kind, kw, v, one in out:
        if one:
            kw["value"] = v
        else:
            w = rng.choice([1.0001, 1.3, 3.0])
            kw["low"], kw["high"] = (v / w, v) if fam == "binomial" else (v, v * w)
        designs.append(api.design(fam, kind, verify=False, **kw))
    return designs


@pytest.mark.parametrize("random_digits,conservative", [(3, True), (1, False), (6, True)])
def test_derive_all_equals_derive(random_digits, conservative):
    designs = _problems(random.Random(20261203 + random_digits))
    spec = SimpleNamespace(random_digits=random_digits, conservative=conservative)
    one = [derive(d, spec) for d in designs]
    many = derive_all(designs, spec)
    assert len(many) == len(one)
    for a, b in zip(one, many):
        assert b.design is a.design
        assert (b.thresholds, b.digit_sizes, b.conservative_sizes) == \
            (a.thresholds, a.digit_sizes, a.conservative_sizes), a.design.describe()


def test_sizes_with_gammas_any_gammas():
    rng = random.Random(7)
    designs = _problems(rng)
    gammas = [(rng.random(), rng.random()) for _ in designs]
    got = sizes_with_gammas(designs, gammas)
    for d, (g1, g2), s in zip(designs, gammas, got):
        assert s == d.with_gammas(g1, g2).sizes
    with pytest.raises(ValueError):
        sizes_with_gammas(designs, gammas[:-1])
