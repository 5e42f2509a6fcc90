"""Run every file of validation/: each case recomputed, re-derived from its source, audited."""

from __future__ import annotations

import importlib.util
import tomllib
from decimal import Decimal
from fractions import Fraction
from pathlib import Path

import pytest
from scipy import stats

import exactband

from .conftest import STD, write_csv

VALIDATION = Path(__file__).resolve().parent.parent / "validation"
FILES = sorted(VALIDATION.glob("*.toml"))
INPUTS = ("n", "alpha", "low", "high", "value", "dispersion")


def _derive():
    spec = importlib.util.spec_from_file_location("derive", VALIDATION / "derive.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def _load(path):
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    assert doc.get("source"), f"{path.name} must state its source"
    return doc


def test_every_file_states_a_source_and_has_cases():
    assert len(FILES) >= 3
    for f in FILES:
        doc = _load(f)
        assert doc["case"], f.name
        assert doc["source"] == "from memory" or doc["source"].startswith("library:")


@pytest.mark.parametrize("path", FILES, ids=[f.stem for f in FILES])
def test_cases_match_exactband(path):
    doc = _load(path)
    tol = float(doc.get("gamma_tolerance", 0))
    for case in doc["case"]:
        d = exactband.design(case["family"], case["kind"], **{k: case.get(k) for k in INPUTS})
        assert (d.c1, d.c2) == (case.get("c1"), case.get("c2")), case
        for i in (1, 2):
            if f"gamma{i}" in case:
                ours = Decimal(getattr(d, f"gamma{i}_decimal"))
                assert abs(ours - Decimal(str(case[f"gamma{i}"]))) <= Decimal(repr(tol)), case


def _has_gammas(path) -> bool:
    return any("gamma1" in c or "gamma2" in c for c in _load(path)["case"])


@pytest.mark.parametrize("path", [f for f in FILES if _has_gammas(f)], ids=lambda f: f.stem)
def test_files_with_gammas_pass_the_audit(path, tmp_path, cli):
    doc = _load(path)
    rows = [{k: ("" if case.get(k) is None else str(case[k])) for k in STD} for case in doc["case"]]
    code, out, _ = cli("audit", write_csv(tmp_path / "v.csv", rows), "--workers", "1")
    assert code == 0, out


def test_from_memory_gammas_recomputed_satisfy_the_side_conditions():
    """Cutoffs from memory; gammas recomputed; sizes at both band ends via scipy.stats.poisson."""
    doc = _load(VALIDATION / "from_memory_worked_examples.toml")
    case = next(c for c in doc["case"] if c["kind"] == "band")
    d = exactband.design("poisson", "band", **{k: case.get(k) for k in INPUTS})
    for theta in (case["low"], case["high"]):
        mu = case["n"] * theta
        size = (stats.poisson.cdf(d.c1 - 1, mu) + d.gamma1 * stats.poisson.pmf(d.c1, mu)
                + d.gamma2 * stats.poisson.pmf(d.c2, mu) + stats.poisson.sf(d.c2, mu))
        assert size == pytest.approx(case["alpha"], rel=1e-12)


def test_fraction_file_rederived():
    """The exact file is what its stated source gives (Python fractions, exact)."""
    der = _derive()
    doc = _load(VALIDATION / "python_fractions_binomial.toml")
    for case, spec in zip(doc["case"], der.FRACTION_CASES):
        again = der.fraction_case(*spec)
        for k, v in again.items():
            assert case[k] == v, (k, case)
        for i in (1, 2):
            if f"gamma{i}_exact" in case:
                exact = Fraction(case[f"gamma{i}_exact"])
                assert abs(Decimal(case[f"gamma{i}"]) - Decimal(exact.numerator)
                           / Decimal(exact.denominator)) < Decimal("1e-28")


def test_scipy_file_rederived_and_binomtest():
    """The scipy file matches the stated calls; binomial outright rejections match binomtest."""
    der = _derive()
    doc = _load(VALIDATION / "scipy_stats_one_sided.toml")
    for case, spec in zip(doc["case"], der.SCIPY_CASES):
        again = der.scipy_case(*spec)
        for k, v in again.items():
            assert case[k] == (pytest.approx(v, rel=1e-9, abs=1e-12) if isinstance(v, float)
                               else v), (k, case)
        if case["family"] == "binomial":
            y = der.binomtest_first_rejection(case["kind"], case["n"], case["value"], case["alpha"])
            if case["kind"] == "upper":  # reject outright iff Y > c2
                assert y == case["c2"] + 1
            else:  # reject outright iff Y < c1
                assert y == case["c1"] - 1
