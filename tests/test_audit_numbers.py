"""Reading printed numbers: decimal marks, thousands separators, decimals, tolerances."""

from __future__ import annotations

from decimal import Decimal

import pytest

from exactband.audit import numbers as N
from exactband.audit.table import Options, load

from .conftest import write_csv


@pytest.mark.parametrize("text, mark, value, decimals", [
    ("25", None, "25", 0), ("0.05", None, "0.05", 2), ("0,05", None, "0.05", 2),
    ("1e-6", None, "0.000001", 6), ("1.5E-3", None, "0.0015", 4), ("0.1300", None, "0.13", 4),
    ("1,234,567", None, "1234567", 0), ("1.234.567", None, "1234567", 0),
    ("1 234", None, "1234", 0), ("1'234.5", None, "1234.5", 1), ("1,234.5", None, "1234.5", 1),
    ("1.234,5", None, "1234.5", 1), ("12,5", None, "12.5", 1), ("1234,567", None, "1234.567", 3),
    ("1,234", ",", "1.234", 3), ("1,234", ".", "1234", 0), ("1.234", ".", "1.234", 3),
    ("1.234", ",", "1234", 0), (" 7 ", None, "7", 0), ("-3", None, "-3", 0),
])
def test_accepted(text, mark, value, decimals):
    x = N.parse(text, mark)
    assert x.value == Decimal(value) and x.decimals == decimals


@pytest.mark.parametrize("text, mark, words", [
    ("1,234", None, "ambiguous"), ("1.234", None, "ambiguous"), ("=1+1", None, "formula"),
    ("abc", None, "not a number"), ("1,23.4", None, "not a number"), ("", None, "empty"),
    ("0.05", ",", "decimal mark"), ("1,2,3", None, "not a number"), ("nan", None, "not a number"),
    ("inf", None, "not a number"), ("1.234,5", ".", "decimal mark"),
])
def test_refused(text, mark, words):
    with pytest.raises(N.NumberError, match=words):
        N.parse(text, mark)


def test_file_mark():
    assert N.file_mark(["25", "0.05", "1,234"]) == (".", False)
    assert N.file_mark(["25", "0,05"]) == (",", False)
    assert N.file_mark(["0,05", "0.05"]) == (None, True)
    assert N.file_mark(["25", "1,234"]) == (None, False)


def _rows(gammas):
    base = dict(family="poisson", kind="upper", n="10", alpha="0.05", value="2.5", c2="30")
    return [dict(base, gamma2=g) for g in gammas]


@pytest.mark.parametrize("gammas, want", [
    # each cell is read with the decimals it prints (per cell, never per file)
    (["0.1339", "0.5", "0.0123"], [4, 1, 4]),
    (["0.123457", "0.0123457", "0.12"], [6, 7, 2]),
    (["0.1340", "0.123456789"], [4, 9]),
    # a whole number in a column that prints decimals: the writer dropped the zeros
    (["0", "0.1250", "0.5000", "1"], [4, 4, 4, 4]),
    # a column of exact zeros (a non-randomised table) is exact
    (["0", "0"], [None, None]),
    (["1.5E-3"], [4]),
])
def test_decimals_per_cell(tmp_path, gammas, want):
    p = write_csv(tmp_path / "t.csv", _rows(gammas),
                  header=("family", "kind", "n", "alpha", "value", "c2", "gamma2"))
    t = load(p, Options())
    assert [r.decimals[1] for r in t.rows] == want


def test_gamma_rounding_option_checked(tmp_path):
    p = write_csv(tmp_path / "t.csv", _rows(["0.1339"]),
                  header=("family", "kind", "n", "alpha", "value", "c2", "gamma2"))
    with pytest.raises(Exception, match="--gamma-rounding"):
        load(p, Options(gamma_rounding="nearest"))
