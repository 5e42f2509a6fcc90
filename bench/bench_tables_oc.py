"""Benchmark of the [oc] table of a spec (issue 5, item 4): power values and OC pages.

Prints, from one run on this machine (in-process, the designs from the fast
solver: verification is timed by bench_tables.py and does not depend on [oc]):
* the Power sheet of the 10,000-design grid of bench_tables.py at 6 thetas: the
  power computation (oc_build) and the spreadsheet with and without the sheet;
* the pages of OC curves of the demo-sized grid: the curve computation per
  chart and the PDF with and without the pages (median of 3), per page.

The machine is shared (2 cores); compare only figures from one run.
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from bench_tables import SPEC as BIG  # noqa: E402

DEMO = """\
title = "Benchmark: OC pages"
family = "poisson"
kinds = ["band", "upper"]
alpha = [0.05, 0.01]
n = {from = 10, to = 50, step = 5}
bands = [[2.0, 2.5], [1.5, 2.0]]
values = [2.5]
"""
THETAS = "\n[oc]\nthetas = [0.5, 1.0, 1.5, 2.0, 3.0, 4.0]\ncurves = false\n"


def _tset(text: str, name: str, folder: Path):
    from exactband import api
    from exactband.crosscheck import CrossCheck
    from exactband.tables import build as B
    from exactband.tables import grid
    from exactband.tables.spec import load_spec

    path = folder / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    spec = load_spec(path)
    problems = grid.expand(spec)
    unchecked = CrossCheck(True, 0.0, 0.0, 0.0, spec.precision)  # the writers print the summary
    designs = [replace(api.from_fast(p, s), check=unchecked)
               for p, s in zip(problems, api.fast_solve(problems))]
    rows = B.derive_all(designs, spec)
    t0 = time.perf_counter()
    oc = B.oc_build.compute(spec, rows)
    t_oc = time.perf_counter() - t0
    tset = B.TableSet(spec, rows, B.summarise([], spec.precision), "", oc)
    return tset, t_oc


def _timed(fn, repeat=1):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return out, statistics.median(times)


def _writer(tset, which: str):
    from exactband.tables.layout import build_sections
    from exactband.tables.texts import cover_blocks, provenance_rows
    from exactband.tables.write_pdf import pdf_bytes
    from exactband.tables.write_xlsx import xlsx_bytes

    sections = build_sections(tset)
    blocks = cover_blocks(tset, sections)
    prov = provenance_rows(tset, "0" * 64)
    fn = xlsx_bytes if which == "xlsx" else pdf_bytes
    return lambda: fn(tset, sections, blocks, prov)


def main() -> int:
    from exactband.tables.spec_oc import ROWS_PER_PAGE, chart_rows

    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        big, t_power = _tset(BIG + THETAS, "big", folder)
        n = len(big.rows)
        print(f"Power sheet, {n} designs x 6 thetas x 3 rules:")
        print(f"  power computation (oc_build): {t_power:.1f} s "
              f"({1e3 * t_power / n:.2f} ms per design)")
        data, t_with = _timed(_writer(big, "xlsx"))
        plain = replace(big, oc=None, spec=replace(big.spec, oc=None))
        data0, t_without = _timed(_writer(plain, "xlsx"))
        print(f"  spreadsheet: {t_with:.1f} s with the sheet, {t_without:.1f} s without "
              f"({len(data) / 1e6:.1f} MB vs {len(data0) / 1e6:.1f} MB)")

        demo, t_curves = _tset(DEMO + "\n[oc]\n", "demo", folder)
        charts = sum(len(g.charts) for g in demo.oc.groups)
        pages = sum(len(chart_rows(len(g.charts), ROWS_PER_PAGE)) for g in demo.oc.groups)
        print(f"OC pages, {len(demo.rows)} designs, {charts} charts on {pages} pages:")
        print(f"  curve computation (oc_build): {t_curves:.2f} s "
              f"({1e3 * t_curves / charts:.0f} ms per chart of up to 4 n, 161 thetas)")
        data, t_with = _timed(_writer(demo, "pdf"), repeat=3)
        plain = replace(demo, oc=None, spec=replace(demo.spec, oc=None))
        data0, t_without = _timed(_writer(plain, "pdf"), repeat=3)
        print(f"  PDF: {t_with:.2f} s with the pages, {t_without:.2f} s without (median of 3): "
              f"{(t_with - t_without) / pages:.2f} s per page of curves; "
              f"{len(data) / 1e3:.0f} kB vs {len(data0) / 1e3:.0f} kB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
