"""The build: every design of the grid solved fast, verified in high precision, derived.

Data flow: spec -> grid.expand -> solving.fast_solve (whole grid, vectorised) ->
solving.verify_many (precise solver + cross-check on all cores, designs grouped by
law so each worker reuses its probability tables; saved CHUNK at a time to the
resumable cache) -> per row the digit thresholds, the sizes of the digit
rule and of the conservative rule (Design.thresholds / digit_rule /
nonrandomized); then, if the spec has an [oc] table, the power values and OC
curves it asks for (oc_build).  A disagreement between the solvers raises VerificationError
naming the design, before anything is written.  Writers only format a TableSet.
"""

from __future__ import annotations

import random
from dataclasses import dataclass

from .. import solving
from ..design import Design
from ..errors import DesignError, VerificationError, recast
from ..rulesizes import sizes_with_gammas
from . import grid, oc_build
from .cache import CacheMismatch, VerifyCache
from .spec import SpecError, TableSpec

CHUNK = 1024  # designs verified between two saves of the cache
DIGITS_PER_PAGE = 2500  # 50 lines of 10 groups of 5


@dataclass(frozen=True)
class Row:
    """One design of the table and the numbers derived from it for printing."""

    design: Design
    thresholds: tuple  # (t1, t2) = floor(gamma * 10**d); None where the kind has no cutoff
    digit_sizes: tuple  # sizes of the rule with gammas t / 10**d, at design.points
    conservative_sizes: tuple | None  # sizes with the randomisation dropped (None: not asked)
    printed: tuple | None = None  # real cutoffs as printed (Decimals; continuous families)


@dataclass(frozen=True)
class Verification:
    """The cross-check summary of a table set."""

    rows: int
    precision: int
    max_phi_diff: float
    max_fast_size_error: float
    max_precise_size_error: float


@dataclass(frozen=True)
class TableSet:
    """Everything the writers print: the spec, the rows, the summary, the random digits."""

    spec: TableSpec
    rows: tuple
    verification: Verification
    random_digits: str  # spec.random_digit_pages * DIGITS_PER_PAGE digits from spec.seed
    oc: oc_build.OcData | None = None  # power values and OC curves (spec.oc), else None

    def section_rows(self, kind: str, alpha: float) -> list:
        return [r for r in self.rows if r.design.kind == kind and r.design.alpha == alpha]


def build(spec: TableSpec, out_dir, *, workers=None, progress=None, log=None) -> TableSet:
    """Compute and verify every design of ``spec``; resume from the cache in ``out_dir``.

    ``progress(k, total=None)`` is called first with the designs already verified and
    the total, then with k = 1 as designs are verified; ``log(text)`` receives
    one-line notes (e.g. how many designs were resumed from the cache).
    A cache that fails its check is discarded with a note (see cache).
    Raises VerificationError (and drops the cache) if the solvers disagree, SpecError
    if the high-precision solver declines a design (too spread out to tabulate).
    """
    problems = grid.expand(spec)
    cache = VerifyCache(out_dir, spec)
    sols = solving.fast_solve(problems)  # also the yardstick every cached record must meet
    try:
        done = cache.load(problems, sols)
    except CacheMismatch as e:
        done = {}
        if log:
            log(f"the verification cache failed its check ({e}); it was discarded and "
                "every design is verified again")
    todo = [i for i in range(len(problems)) if i not in done]
    if done and log:
        log(f"resumed {len(done)} of {len(problems)} verified designs from the cache")
    if progress:
        progress(len(done), total=len(problems))
    pending = []  # verified designs not yet saved: saved CHUNK at a time

    def saved(idx, ds):
        pending.extend(zip(idx, ds))
        if len(pending) >= CHUNK:
            flush()

    def flush():
        cache.save([d for _, d in pending])
        done.update(pending)
        pending.clear()

    try:
        # one pool for the whole grid, designs grouped by law (solving.law_batches):
        # each worker builds a law's probability tables once
        solving.verify_many([problems[i] for i in todo], [sols[i] for i in todo],
                            spec.precision, workers=workers, progress=progress,
                            saved=lambda pos, ds: saved([todo[j] for j in pos], ds))
        if pending:
            flush()
    except VerificationError:
        cache.clear()
        raise
    except DesignError as e:  # e.g. a law too spread out for the high-precision tables
        cache.clear()
        raise recast(e, SpecError, f"{spec.where or spec.source}: a design of the grid "
                     "cannot be verified: ") from None
    designs = [done[i] for i in range(len(problems))]
    rows = derive_all(designs, spec)
    digits = (random_digits(spec.seed, spec.random_digit_pages * DIGITS_PER_PAGE)
              if spec.cutoff_decimals is None else "")  # real cutoffs: nothing to randomise
    return TableSet(spec, rows, summarise(designs, spec.precision), digits,
                    oc_build.compute(spec, rows))


def derive(d: Design, spec: TableSpec) -> Row:
    """Thresholds and the sizes of the digit rule and of the conservative rule (one design)."""
    t = d.thresholds(spec.random_digits)
    digit = d.digit_rule(spec.random_digits).sizes
    cons = d.nonrandomized().sizes if spec.conservative else None
    return Row(d, t, digit, cons)


def derive_all(designs, spec: TableSpec) -> tuple:
    """``tuple(derive(d, spec) for d in designs)``, with the float law evaluated on arrays.

    The thresholds come from each design's exact decimal gammas (Design.thresholds);
    the sizes of the digit rule (gammas t / 10**d) and of the conservative rule
    (gammas 0) from rulesizes.sizes_with_gammas, equal bit for bit to derive's.
    """
    designs = list(designs)
    if designs and not designs[0].problem.family.discrete:
        return tuple(printed_row(d, spec.cutoff_decimals) for d in designs)
    scale = 10 ** spec.random_digits
    ts = [d.thresholds(spec.random_digits) for d in designs]
    digit = sizes_with_gammas(designs, [tuple(None if t is None else t / scale for t in pair)
                                        for pair in ts])
    cons = (sizes_with_gammas(designs, [(0.0, 0.0)] * len(designs)) if spec.conservative
            else [None] * len(designs))
    return tuple(Row(d, t, dg, c) for d, t, dg, c in zip(designs, ts, digit, cons))


def printed_row(d: Design, decimals: int) -> Row:
    """A rule with real cutoffs: the cutoffs rounded to ``decimals`` places the way that never
    raises the size (``Kind.round_cutoffs``) and the sizes that the printed cutoffs attain
    (float law, at the constraint points); no thresholds, nothing randomised."""
    kind = d.problem.kind
    printed = kind.round_cutoffs(d.c1, d.c2, decimals)
    cuts = tuple(None if c is None else float(c) for c in printed)
    sizes = tuple(float(x) for x in d.problem.family.power(
        kind, cuts[0], cuts[1], list(d.points), d.n, d.dispersion))
    return Row(d, (None, None), sizes, None, printed)


def summarise(designs, precision: int) -> Verification:
    checks = [d.check for d in designs]
    return Verification(
        rows=len(designs), precision=precision,
        max_phi_diff=max((c.max_phi_diff for c in checks), default=0.0),
        max_fast_size_error=max((c.fast_size_error for c in checks), default=0.0),
        max_precise_size_error=max((c.precise_size_error for c in checks), default=0.0))


def random_digits(seed: int, count: int) -> str:
    """``count`` decimal digits from Python's random.Random(seed).

    Only ``random()`` is used, whose sequence for a given integer seed Python
    keeps stable across versions; each call gives one digit, floor(10 * u).
    """
    rng = random.Random(seed)
    return "".join(str(int(rng.random() * 10)) for _ in range(count))
