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
