"""One name per meaning: precision, random_digits, digits_read (and their old aliases)."""

import json

import pytest

import exactband
from exactband import api
from exactband.cli import main
from exactband.decide import decide
from exactband.design import DEFAULT_RANDOM_DIGITS
from exactband.tables.spec import load_spec


@pytest.fixture(scope="module")
def band():
    return exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05, precision=30)


def test_precision_is_the_solver_digits(band):
    assert band.precision == 30 and band.check.precision == 30
    assert api.check_precision(50) == 50
    assert (api.MIN_PRECISION, api.MAX_PRECISION, api.DEFAULT_PRECISION) == (20, 1000, 50)
    assert "30-digit" in band.describe()


def test_old_digits_keyword_and_attribute_warn(band):
    with pytest.warns(DeprecationWarning, match="precision"):
        d = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05, digits=30)
    assert d.precision == 30 and (d.c1, d.c2) == (band.c1, band.c2)
    with pytest.warns(DeprecationWarning, match="Design.precision"):
        assert band.digits == 30
    with pytest.raises(exactband.DesignError, match="digits"), pytest.warns(DeprecationWarning):
        exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05, digits=30,
                         precision=40)


def test_one_random_digits_default(band, monkeypatch):
    import exactband.decide as dm
    from exactband import oc, tables

    assert DEFAULT_RANDOM_DIGITS == 3
    assert not hasattr(dm, "DEFAULT_DRAW_DIGITS")
    assert oc.DEFAULT_RANDOM_DIGITS is DEFAULT_RANDOM_DIGITS  # imported, not a copy
    assert band.thresholds() == band.thresholds(3)
    monkeypatch.setattr(dm.secrets, "randbelow", lambda bound: bound - 1)
    d = decide(band, band.c1)  # drawn: 3 digits, as the tables
    assert d.random_digits == 3 and d.digits_read == "999"
    assert tables.spec.TableSpec.random_digits == 3


def test_digits_read_names(band, capsys):
    d = decide(band, band.c1, digits_read="000")
    assert d.digits_read == "000" and d.to_dict()["digits_read"] == "000"
    assert "digits" not in d.to_dict()
    with pytest.warns(DeprecationWarning):
        assert decide(band, band.c1, digits="000").reject == d.reject
    args = ["decide", "--family", "poisson", "--kind", "band", "--n", "25", "--low", "2",
            "--high", "2.5", "--alpha", "0.05", "--y", str(band.c1), "--json"]
    for opt in ("--digits-read", "--digits"):
        assert main(args + [opt, "000"]) == 0
        assert json.loads(capsys.readouterr().out)["digits_read"] == "000"


def test_randomised_is_canonical_and_randomized_accepted(band):
    assert decide(band, band.c1, digits_read="000").rule == "randomised"
    assert decide(band, band.c1, rule="randomized", digits_read="000").rule == "randomised"
    from exactband.oc import RULES, check_rule

    assert "randomised" in RULES and check_rule("Randomized") == "randomised"


def test_design_json_and_binomial_words(capsys):
    assert main(["design", "--family", "binomial", "--kind", "upper", "--n", "20", "--value",
                 "0.1", "--alpha", "0.05", "--json", "--precision", "25"]) == 0
    js = json.loads(capsys.readouterr().out)
    assert js["precision"] == 25 and "digits" not in js
    assert any("units with the attribute" in line for line in js["rule"])
    assert not any("successes" in line for line in js["rule"])


SPEC = """title = "t"
family = "poisson"
kinds = ["upper"]
alpha = [0.05]
n = [5]
values = [2]
"""


def test_spec_precision_key_and_old_key_note(tmp_path):
    new = tmp_path / "new.toml"
    new.write_text(SPEC + "precision = 30\n")
    spec = load_spec(new)
    assert spec.precision == 30 and spec.notes == () and spec.to_dict()["precision"] == 30
    old = tmp_path / "old.toml"
    old.write_text(SPEC + "digits = 30\n")
    spec = load_spec(old)
    assert spec.precision == 30 and len(spec.notes) == 1
    assert "'digits' is now called 'precision'" in spec.notes[0]
    both = tmp_path / "both.toml"
    both.write_text(SPEC + "digits = 30\nprecision = 30\n")
    with pytest.raises(Exception, match="keep 'precision' only"):
        load_spec(both)


def test_demo_spec_uses_precision():
    from pathlib import Path

    spec = load_spec(Path(__file__).resolve().parent.parent / "tables" / "demo.toml")
    assert spec.precision == 50 and spec.notes == ()
