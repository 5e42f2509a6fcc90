"""The command line: output, JSON contract, help, and bad input (exit 2, one line)."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from exactband.cli import main

CMD = ["design", "--family", "poisson", "--kind", "band", "--n", "25", "--low", "2",
       "--high", "2.5", "--alpha", "0.05"]


def test_design_prints_rule_and_numbers(capsys):
    assert main(CMD) == 0
    out = capsys.readouterr().out
    assert "Reject H0 if Y <= 38: " in out and "Reject H0 if Y >= 77: " in out
    assert "c1 = 39" in out and "c2 = 76" in out
    assert "solvers agree" in out


def test_design_json_contract(capsys):
    assert main(CMD + ["--json"]) == 0
    obj = json.loads(capsys.readouterr().out)
    assert obj["inputs"] == {"family": "poisson", "kind": "band", "n": 25.0, "alpha": 0.05,
                             "low": 2.0, "high": 2.5, "value": None, "dispersion": None}
    assert obj["c1"] == 39 and obj["c2"] == 76
    for g in ("gamma1", "gamma2"):
        text = obj[f"{g}_decimal"]
        digits = text.replace("0.", "", 1).lstrip("0")
        assert len(digits) == 30, text
        assert float(text) == obj[g]
    assert set(obj["sizes"]) == {"low", "high"}
    assert obj["sizes"]["low"] == pytest.approx(0.05, abs=1e-15)
    assert obj["verified"] is True


def test_one_sided_json_has_one_size(capsys):
    assert main(["design", "--family", "binomial", "--kind", "upper", "--n", "50", "--value",
                 "0.1", "--alpha", "0.05", "--json"]) == 0
    obj = json.loads(capsys.readouterr().out)
    assert obj["c1"] is None and obj["gamma1"] is None and obj["gamma1_decimal"] is None
    assert list(obj["sizes"]) == ["value"]


BAD = [
    (["--alpha", "1.5"], "alpha"),
    (["--alpha", "nan"], "alpha"),
    (["--alpha", "five"], "alpha"),
    (["--low", "3"], "low"),
    (["--n", "-1"], "n"),
    (["--family", "weibull"], "family"),
    (["--kind", "both"], "kind"),
    (["--value", "2"], "value"),
    (["--dispersion", "2"], "dispersion"),
    (["--precision", "3"], "precision"),
]


@pytest.mark.parametrize("change,field", BAD)
def test_bad_input_exit_2_one_line(change, field, capsys):
    args = list(CMD)
    for i in range(0, len(change), 2):
        if change[i] in args:
            args[args.index(change[i]) + 1] = change[i + 1]
        else:
            args += change[i:i + 2]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert f"invalid {field} = " in err


def test_missing_option_is_one_line(capsys):
    assert main(["design", "--family", "poisson"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "required" in err


def test_table_help_shows_the_default_random_digits(capsys):
    from exactband.rule import DEFAULT_RANDOM_DIGITS

    with pytest.raises(SystemExit) as e:
        main(["table", "--help"])
    out = capsys.readouterr().out
    assert e.value.code == 0 and f"random_digits = {DEFAULT_RANDOM_DIGITS}," in out
    assert "{random_digits}" not in out


def test_console_script_runs_and_help_reads_well():
    out = subprocess.run([sys.executable, "-m", "exactband", "design", "--help"],
                         capture_output=True, text=True, check=True).stdout
    assert "examples:" in out and "--family" in out and "--alpha" in out
    res = subprocess.run([sys.executable, "-m", "exactband", *CMD[:-1], "2"],
                         capture_output=True, text=True)
    assert res.returncode == 2 and "Traceback" not in res.stderr
    assert res.stderr.strip().count("\n") == 0
