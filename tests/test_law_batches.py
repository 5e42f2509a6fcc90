"""solving.law_order / law_batches: the verification work grouped by law."""

from __future__ import annotations

import itertools

from exactband import solving
from exactband.params import make_problem


def _problems(ns=(10, 20, 30, 40, 50, 60), kinds=("band", "equivalence", "upper", "point")):
    out = []
    for kind, alpha, n in itertools.product(kinds, (0.05, 0.001), ns):
        hyp = {"low": 2.0, "high": 2.5} if kind in ("band", "equivalence") else {"value": 2.0}
        out.append(make_problem("poisson", kind, n=n, alpha=alpha, **hyp))
    return out


def test_law_order_groups_laws_most_demanding_first():
    ps = _problems()
    order = solving.law_order(ps, 50)
    assert sorted(order) == list(range(len(ps)))
    laws = [ps[i].n for i in order]
    assert laws == sorted(laws)  # one run per law
    for n in {p.n for p in ps}:
        run = [ps[i] for i in order if ps[i].n == n]
        # the equivalence design at the smallest alpha needs the most digits
        assert (run[0].kind.name, run[0].alpha) == ("equivalence", 0.001)


def test_law_batches_keep_law_groups_whole():
    ps = _problems(ns=range(10, 250, 10), kinds=("band", "upper"))  # 24 laws of 4 designs
    for workers in (2, 3):
        batches = solving.law_batches(ps, 50, workers)
        flat = [i for b in batches for i in b]
        assert sorted(flat) == list(range(len(ps)))
        seen = {}
        for k, b in enumerate(batches):
            for i in b:
                assert seen.setdefault(ps[i].n, k) == k  # a law in one batch only
    assert solving.law_batches(ps, 50, 1) == [[i] for i in solving.law_order(ps, 50)]
    # one law only: cut into pieces of at most two batch sizes, so both workers get some
    one = _problems(ns=(30,))
    batches = solving.law_batches(one * 6, 50, 2)
    assert len(batches) > 1 and max(map(len, batches)) <= 2 * -(-48 // 16)


def test_verify_many_keeps_the_callers_order():
    ps = _problems()[:12]
    sols = solving.fast_solve(ps)
    seen = []
    ds = solving.verify_many(ps, sols, 30, workers=1, saved=lambda pos, d: seen.extend(pos))
    assert [d.problem for d in ds] == ps
    assert sorted(seen) == list(range(len(ps))) and seen != list(range(len(ps)))
