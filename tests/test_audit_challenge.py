"""Challenge sets: coverage, determinism, and the round trip through the audit."""

from __future__ import annotations

import csv
import math

from exactband.api import designs
from exactband.audit.challenge import FAMILIES, KINDS, grid


def test_grid_covers_the_hard_regimes():
    rows = grid(0)
    # challenge sets test programs for randomised rules: the discrete families
    assert {(r["family"], r["kind"]) for r in rows} == {(f, k) for f in FAMILIES for k in KINDS
                                                        if FAMILIES[f].discrete}
    regimes = {r["regime"] for r in rows}
    assert {"small counts", "alpha 1e-06", "large n", "narrow band 1e-06", "p near 0",
            "p near 1"} <= regimes
    assert min(r["alpha"] for r in rows) == 1e-6
    assert len({r["id"] for r in rows}) == len(rows)


def test_deterministic(cli, tmp_path):
    for name in ("a.csv", "b.csv", "a.xlsx", "b.xlsx"):
        assert cli("challenge", "--out", tmp_path / name, "--seed", "3")[0] == 0
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()
    assert (tmp_path / "a.xlsx").read_bytes() == (tmp_path / "b.xlsx").read_bytes()
    cli("challenge", "--out", tmp_path / "c.csv", "--seed", "4")
    assert (tmp_path / "a.csv").read_bytes() != (tmp_path / "c.csv").read_bytes()


def test_bad_options(cli, tmp_path):
    code, _, err = cli("challenge", "--out", tmp_path / "x.txt")
    assert code == 2 and ".csv or .xlsx" in err
    code, _, err = cli("challenge", "--out", tmp_path / "x.csv", "--seed", "-1")
    assert code == 2 and "--seed" in err
    assert not (tmp_path / "x.csv").exists()


def _fill(rows, wrong_id=None):
    import pandas as pd

    frame = pd.DataFrame([{k: (float(r[k]) if r[k] else None)
                           for k in ("n", "alpha", "low", "high", "value", "dispersion")}
                          | {"family": r["family"], "kind": r["kind"]} for r in rows])
    solved = designs(frame, workers=1)
    for r, (_, s) in zip(rows, solved.iterrows()):
        for c, g in (("c1", "gamma1"), ("c2", "gamma2")):
            if not pd.isna(s[c]):
                r[c], r[g] = str(int(s[c])), repr(float(s[g]))
        if r["id"] == wrong_id:
            r["c2"] = str(int(r["c2"]) + 1)
    return rows


def test_round_trip_csv(cli, tmp_path):
    """Filled with exactband's own answers the challenge grades all ok; a wrong answer fails."""
    cli("challenge", "--out", tmp_path / "ch.csv")
    rows = list(csv.DictReader(open(tmp_path / "ch.csv", encoding="utf-8")))
    filled = _fill(rows)
    with open(tmp_path / "filled.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(filled)
    code, out, _ = cli("audit", tmp_path / "filled.csv", "--workers", "2")
    assert code == 0, out
    assert f"ok        {len(rows)}" in out
    rows = list(csv.DictReader(open(tmp_path / "ch.csv", encoding="utf-8")))[:12]
    bad = _fill(rows, wrong_id="CH003")
    with open(tmp_path / "bad.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(bad)
    code, out, _ = cli("audit", tmp_path / "bad.csv")
    assert code == 1 and "row 3 (line 4) (CH003): finding [cutoff" in out


def test_round_trip_xlsx(cli, tmp_path):
    """The vendor fills the XLSX challenge (gammas truncated to 6 decimals); it grades all ok."""
    from openpyxl import load_workbook

    cli("challenge", "--out", tmp_path / "ch.xlsx", "--seed", "1")
    wb = load_workbook(tmp_path / "ch.xlsx")
    ws = wb["challenge"]
    header = [c.value for c in ws[1]]
    rows = [{h: ("" if v is None else str(v)) for h, v in zip(header, r)}
            for r in ws.iter_rows(min_row=2, values_only=True)][:30]
    filled = _fill(rows)
    for i, r in enumerate(filled, start=2):
        for c in ("c1", "gamma1", "c2", "gamma2"):
            if r[c]:
                v = int(r[c]) if c.startswith("c") else math.floor(float(r[c]) * 1e6) / 1e6
                ws.cell(i, header.index(c) + 1, v)
    ws.delete_rows(32, ws.max_row)
    wb.save(tmp_path / "filled.xlsx")
    code, out, _ = cli("audit", tmp_path / "filled.xlsx")
    assert code == 0, out
    assert "ok        30" in out
