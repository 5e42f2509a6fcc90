"""Shared helpers of the audit tests: third-party tables built from known designs."""

from __future__ import annotations

import csv

import pytest

from exactband.cli import main

STD = ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion",
       "c1", "gamma1", "c2", "gamma2")


def design_row(d, decimals=6, **inputs) -> dict:
    """A table row as a third party would print it: inputs, cutoffs, gammas to `decimals`."""
    row = {k: "" for k in STD}
    row.update({k: ("" if v is None else str(v)) for k, v in inputs.items()})
    for c, g in (("c1", "gamma1"), ("c2", "gamma2")):
        cv, gv = getattr(d, c), getattr(d, g)
        if cv is not None:
            row[c] = str(cv)
            row[g] = f"{gv:.{decimals}f}"
    return row


def write_csv(path, rows, header=STD, delimiter=","):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, delimiter=delimiter)
        w.writerow(header)
        for r in rows:
            w.writerow([r.get(h, "") for h in header])
    return path


@pytest.fixture
def cli(capsys):
    """Run the exactband CLI; returns (exit code, stdout, stderr)."""

    def run(*args):
        code = main([str(a) for a in args])
        out = capsys.readouterr()
        return code, out.out, out.err

    return run
