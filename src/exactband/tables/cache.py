"""Resumable verification cache, kept in the output folder while a set is built.

Verified designs are saved in chunks (each chunk file written atomically) in
``DIR/.NAME.verify-cache/``, so an interrupted run of a large spec resumes
where it stopped.  The cache is stamped with the spec's SHA-256, the verifying
precision and the package versions; any change invalidates it.  The build
removes it once the table set is complete.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

from ..crosscheck import CrossCheck
from ..design import Design
from ..fileio import atomic_write_text
from . import grid
from .versions import versions

FORMAT = 1


class VerifyCache:
    """Chunks of verified designs for one spec in one output folder."""

    def __init__(self, out_dir, spec):
        self.dir = Path(out_dir) / f".{spec.name}.verify-cache"
        self.stamp = {"format": FORMAT, "spec_sha256": spec.sha256, "precision": spec.precision,
                      "versions": versions()}
        self._next = 0

    def load(self, problems) -> dict:
        """Index of the problems already verified -> Design (empty if stale or absent)."""
        if not self.dir.is_dir():
            return {}
        try:
            stamp = json.loads((self.dir / "stamp.json").read_text("utf-8"))
        except (OSError, ValueError):
            stamp = None
        if stamp != self.stamp:
            self.clear()
            return {}
        where = {grid.key(p): i for i, p in enumerate(problems)}
        out = {}
        for part in sorted(self.dir.glob("part-*.json")):
            self._next = max(self._next, _number(part) + 1)
            try:
                records = json.loads(part.read_text("utf-8"))
            except (OSError, ValueError):
                continue  # written atomically, so only a foreign file can be unreadable
            for rec in records:
                i = where.get(rec.get("key"))
                if i is not None:
                    out[i] = _restore(problems[i], rec)
        return out

    def save(self, designs) -> None:
        """Add one chunk of verified designs."""
        if not designs:
            return
        if not (self.dir / "stamp.json").exists():
            atomic_write_text(self.dir / "stamp.json", json.dumps(self.stamp, sort_keys=True))
        records = [_record(d) for d in designs]
        atomic_write_text(self.dir / f"part-{self._next:06d}.json", json.dumps(records))
        self._next += 1

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
