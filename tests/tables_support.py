"""Shared helpers of the table tests: small specs and a table set built once per session."""

from __future__ import annotations

import functools
import textwrap
from pathlib import Path

# Every kind, two alphas, three sample sizes: 30 designs, all of them tiny to verify.
SMALL = textwrap.dedent("""\
    title = "Test table: flaw rate per bolt"
    scenario = "An invented cloth mill (test data)."
    family = "poisson"
    kinds = ["band", "equivalence", "upper", "lower", "point"]
    alpha = [0.05, 0.01]
    n = {from = 10, to = 30, step = 10}
    bands = [[2.0, 2.5]]
    values = [2.0]
    random_seed = 7
    """)

BINOMIAL = textwrap.dedent("""\
    title = "Test table: colour faults, proportion of bolts"
    family = "binomial"
    kinds = ["band", "upper"]
    alpha = [0.05]
    n = [20, 50]
    bands = [[0.1, 0.2]]
    values = [0.1]
    gamma_decimals = 5
    random_digits = 4
    conservative = false
    paper = "Letter"
    random_digit_pages = 0
    """)

NEGBIN = textwrap.dedent("""\
    title = "Test table: clustered flaws"
    family = "negative-binomial"
    dispersion = 4
    kinds = ["band"]
    alpha = [1e-10, 0.05]
    n = [10, 25]
    bands = [[2.0, 2.5]]
    random_digits = 2
    """)

# With the [oc] table: a Power sheet at unsorted thetas and two pages of OC curves.
OC = textwrap.dedent("""\
    title = "Test table: what the flaw-rate rules catch"
    family = "poisson"
    kinds = ["band", "upper"]
    alpha = [0.05, 0.01]
    n = [10, 25, 40]
    bands = [[2.0, 2.5]]
    values = [2.5]
    random_seed = 11

    [oc]
    thetas = [3.0, 1.0, 2.0, 2.25, 2.5]
    n = [40, 10]
    n_per_chart = 2
    """)

# [oc] with power values only (no curves): the other kinds, a proportion, 2 random digits.
BINOMIAL_OC = textwrap.dedent("""\
    title = "Test table: colour faults, power"
    family = "binomial"
    kinds = ["equivalence", "lower", "point"]
    alpha = [0.05]
    n = [30, 60]
    bands = [[0.1, 0.2]]
    values = [0.15]
    random_digits = 2
    conservative = false
    random_digit_pages = 0

    [oc]
    thetas = [0.05, 0.1, 0.15, 0.3]
    curves = false
    """)


def write_spec(folder: Path, name: str, text: str) -> Path:
    path = Path(folder) / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return path


@functools.lru_cache(maxsize=None)
def built(root: str, name: str, text: str) -> Path:
    """Generate the table set of ``text`` once (workers=1) and return its folder."""
    from exactband.tables import generate

    folder = Path(root) / name
    spec = write_spec(Path(root), name, text)
    generate(spec, folder / "out", workers=1)
    return folder / "out"


FINAL = (".csv", ".print.csv", ".xlsx", ".pdf", ".manifest.json")  # a set's file endings


def set_files(folder) -> dict:
    """Every file of a folder (not its sub-folders) by name, as bytes; {} if it is missing."""
    folder = Path(folder)
    if not folder.exists():
        return {}
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


def stop_after(count: int):
    """A progress callback that interrupts a build once ``count`` designs were reported."""
    seen = []

    def progress(k, total=None):
        seen.append(k)
        if sum(seen) >= count:
            raise KeyboardInterrupt

    return progress


def interrupted_build(folder: Path, monkeypatch, spec: Path | None = None) -> tuple:
    """A build of SMALL stopped after two chunks of 5 designs were saved to the cache.

    Returns (spec, out, cache parts); the stop is deterministic (a progress callback
    raising after 12 designs, CHUNK set to 5), never a timed kill.
    """
    import pytest

    from exactband.tables import build as build_mod
    from exactband.tables import generate

    spec = spec or write_spec(folder, "small", SMALL)
    out = Path(folder) / "out"
    monkeypatch.setattr(build_mod, "CHUNK", 5)
    with pytest.raises(KeyboardInterrupt):
        generate(spec, out, workers=1, progress=stop_after(12))
    parts = sorted((out / ".small.verify-cache").glob("part-*.json"))
    assert len(parts) == 2  # two chunks of 5 saved before the interruption
    return spec, out, parts
