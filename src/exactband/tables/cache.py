"""Resumable verification cache, kept in the output folder while a set is built.

Verified designs are saved in chunks (each chunk file written atomically) in
``DIR/.NAME.verify-cache/``, so an interrupted run of a large spec resumes
where it stopped.  The cache is stamped with the spec's SHA-256, the verifying
precision and the package versions; any change invalidates it.  The build
removes it once the table set is published.

Nothing from the cache is trusted as it is.  Each chunk carries the SHA-256 of
the stamp and its records (so a chunk of another spec, or an edited chunk,
fails), and on resume every record is checked against the fast solution of its
design, which the build computes afresh anyway: the test functions must agree
within crosscheck.PHI_TOL, the sizes must be alpha (relative 1e-12; the precise
solver's are within 1e-40), the 30-digit gammas must round to the gammas, and
the precision must be the spec's.  One failing record discards the whole cache
(``CacheMismatch``); the build says so and verifies every design again.
"""

from __future__ import annotations

import hashlib
import json
import math
import shutil
from decimal import Decimal, InvalidOperation
from pathlib import Path

from ..ccheck import CUT_TOL
from ..crosscheck import PHI_TOL, CrossCheck, phi_distance
from ..design import Design
from ..fileio import atomic_write_text
from . import grid
from .faults import stop_at
from .versions import versions

FORMAT = 2
SIZE_REL_TOL = 1e-12  # a verified size is alpha to ~1e-40; a double keeps ~1e-16 of it
DECIMAL_TOL = 1e-15  # the 30-digit gamma and its double agree to the double's rounding


class CacheMismatch(Exception):
    """A cached record fails its digest or its check against the fast solution."""


class VerifyCache:
    """Chunks of verified designs for one spec in one output folder."""

    def __init__(self, out_dir, spec):
        self.dir = Path(out_dir) / f".{spec.name}.verify-cache"
        self.stamp = {"format": FORMAT, "spec_sha256": spec.sha256, "precision": spec.precision,
                      "versions": versions()}
        self._stamp_text = json.dumps(self.stamp, sort_keys=True)
        self._next = 0

    def load(self, problems, sols) -> dict:
        """Index of the problems already verified -> Design (empty if stale or absent).

        ``sols`` are the fast solutions of ``problems`` (api.fast_solve).  Raises
        CacheMismatch (after deleting the cache) when a chunk or a record fails.
        """
        if not self.dir.is_dir():
            return {}
        try:
            stamp = (self.dir / "stamp.json").read_text("utf-8")
        except (OSError, ValueError):
            stamp = None
        if stamp != self._stamp_text:
            self.clear()
            return {}
        where = {grid.key(p): i for i, p in enumerate(problems)}
        out = {}
        try:
            for part in sorted(self.dir.glob("part-*.json")):
                self._next = max(self._next, _number(part) + 1)
                for j, rec in enumerate(self._records(part)):
                    i = where.get(rec.get("key") if isinstance(rec, dict) else None)
                    if i is None:
                        raise CacheMismatch(f"{part.name} record {j + 1}: not a design of "
                                            "this spec")
                    out[i] = _checked(problems[i], sols[i], rec, self.stamp["precision"],
                                      f"{part.name} record {j + 1}")
        except CacheMismatch:
            self.clear()
            raise
        return out

    def _records(self, part: Path) -> list:
        try:
            doc = json.loads(part.read_text("utf-8"))
            records, digest = doc["records"], doc["digest"]
        except (OSError, ValueError, KeyError, TypeError):
            raise CacheMismatch(f"{part.name}: unreadable") from None
        if not isinstance(records, list) or digest != self._digest(records):
            raise CacheMismatch(f"{part.name}: its digest does not match its records")
        return records

    def _digest(self, records) -> str:
        body = self._stamp_text + "\n" + json.dumps(records, sort_keys=True)
        return hashlib.sha256(body.encode("utf-8")).hexdigest()

    def save(self, designs) -> None:
        """Add one chunk of verified designs."""
        if not designs:
            return
        if not (self.dir / "stamp.json").exists():
            atomic_write_text(self.dir / "stamp.json", self._stamp_text)
        records = [_record(d) for d in designs]
        doc = {"digest": self._digest(records), "records": records}
        atomic_write_text(self.dir / f"part-{self._next:06d}.json", json.dumps(doc))
        self._next += 1
        stop_at("chunk-saved")

    def clear(self) -> None:
        shutil.rmtree(self.dir, ignore_errors=True)


def _number(part: Path) -> int:
    try:
        return int(part.stem.split("-", 1)[1])
    except (IndexError, ValueError):
        return 0


def _record(d: Design) -> dict:
    c = d.check
    return {"key": grid.key(d.problem), "c1": d.c1, "gamma1": d.gamma1, "c2": d.c2,
            "gamma2": d.gamma2, "gamma1_decimal": d.gamma1_decimal,
            "gamma2_decimal": d.gamma2_decimal, "sizes": list(d.sizes), "precision": d.precision,
            "check": [c.agree, c.max_phi_diff, c.fast_size_error, c.precise_size_error, c.precision]}


def _restore(problem, rec: dict) -> Design:
    agree, phi, fse, pse, precision = rec["check"]
    return Design(problem, rec["c1"], rec["gamma1"], rec["c2"], rec["gamma2"],
                  tuple(rec["sizes"]), verified=True, precision=rec["precision"],
                  gamma1_decimal=rec["gamma1_decimal"], gamma2_decimal=rec["gamma2_decimal"],
                  check=CrossCheck(agree, phi, fse, pse, precision))


def _checked(problem, sol, rec, precision: int, where: str) -> Design:
    """The Design of a cached record, or CacheMismatch naming what is wrong with it."""
    try:
        d = _restore(problem, rec)
        if problem.family.discrete:
            dist = phi_distance(problem.kind.name, (d.c1, d.gamma1, d.c2, d.gamma2), sol)
        else:  # real cutoffs: the rules agree when the cutoffs do (ccheck.CUT_TOL)
            law = problem.family.continuous_float(problem.n, problem.dispersion)
            floor = float(law.sd(problem.points[0])) if law.floor_scale else 0.0
            dist = max((0.0 if abs(a - b) <= CUT_TOL * (abs(a) + floor) else 1.0)
                       for a, b in ((d.c1, sol[0]), (d.c2, sol[2])) if a is not None)
    except (KeyError, TypeError, ValueError) as e:
        raise CacheMismatch(f"{where}: malformed ({type(e).__name__})") from None
    what = None
    if not dist <= PHI_TOL:
        what = f"its rule differs from the fast solution (max |phi difference| {dist:.3g})"
    elif (d.precision != precision or d.check.precision != precision
          or d.check.agree is not True):
        what = "its precision or cross-check record is not this spec's"
    elif len(d.sizes) != len(problem.points) or not all(_is_alpha(s, problem.alpha)
                                                         for s in d.sizes):
        what = f"its sizes {list(d.sizes)} are not alpha = {problem.alpha}"
    else:
        for name, g, text in (("gamma1", d.gamma1, d.gamma1_decimal),
                              ("gamma2", d.gamma2, d.gamma2_decimal)):
            if not _decimal_ok(g, text):
                what = f"its {name}_decimal {text!r} does not round to {name} = {g!r}"
    if what:
        raise CacheMismatch(f"{where} ({grid.key(problem)}): {what}")
    return d


def _is_alpha(s, alpha: float) -> bool:
    return (isinstance(s, (int, float)) and math.isfinite(s)
            and abs(s - alpha) <= SIZE_REL_TOL * alpha)


def _decimal_ok(g, text) -> bool:
    if g is None or text is None:
        return g is None and text is None
    try:
        x = Decimal(text)
    except (InvalidOperation, TypeError, ValueError):
        return False
    return x.is_finite() and 0 <= x < 1 and abs(float(x) - g) <= DECIMAL_TOL
