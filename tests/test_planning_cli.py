"""The power and plan commands: outputs, plots, bad input (one line, exit 2, nothing written)."""

import io
import json

import pandas as pd
import pytest

import exactband
from exactband.cli import main

BAND = ["--family", "poisson", "--kind", "band", "--low", "2", "--high", "2.5",
        "--alpha", "0.05"]


def test_power_csv_and_json(capsys):
    assert main(["power", *BAND, "--n", "25", "--theta", "1.6,2,2.5,3"]) == 0
    f = pd.read_csv(io.StringIO(capsys.readouterr().out))
    assert list(f.columns) == ["theta", "in_null", "power_randomised", "power_conservative",
                               "power_digits", "oc_randomised", "oc_conservative", "oc_digits"]
    assert f.in_null.tolist() == [False, True, True, False]
    d = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    # the CSV rounds powers to 14 decimals, their accuracy (tests/test_words.py)
    assert f.power_randomised.tolist() == pytest.approx(
        [float(x) for x in d.power([1.6, 2, 2.5, 3])], abs=5e-15, rel=0)
    assert main(["power", *BAND, "--n", "25", "--theta-range", "1:4", "--points", "7",
                 "--json", "--random-digits", "2"]) == 0
    js = json.loads(capsys.readouterr().out)
    assert len(js["rows"]) == 7 and js["random_digits"] == 2
    assert js["thresholds"] == {"threshold1": 13, "threshold2": 65}
    assert js["design"]["c1"] == 39


def test_power_default_range_and_files(tmp_path, capsys):
    out, png, svg = tmp_path / "oc.csv", tmp_path / "oc.png", tmp_path / "oc.svg"
    assert main(["power", *BAND, "--n", "25", "--out", str(out), "--plot", str(png)]) == 0
    assert capsys.readouterr().out == ""
    f = pd.read_csv(out)
    assert len(f) >= 201 and f.power_randomised.iloc[0] > 0.99 and f.power_randomised.iloc[-1] > 0.99
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert main(["power", *BAND, "--n", "25", "--plot", str(svg), "--curve", "oc"]) == 0
    first = svg.read_bytes()
    assert main(["power", *BAND, "--n", "25", "--plot", str(svg), "--curve", "oc"]) == 0
    assert svg.read_bytes() == first  # same inputs, same bytes
    assert b"<svg" in first and b"operating characteristic" in first.lower()
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


@pytest.mark.parametrize("extra, field", [
    (["--theta", "0,1"], "theta"), (["--theta", "abc"], "theta"),
    (["--theta-range", "3:1"], "theta-range"), (["--theta-range=-1:2"], "theta-range"),
    (["--theta-range", "1"], "theta-range"), (["--points", "1", "--theta-range", "1:2"], "points"),
    (["--random-digits", "x"], "random-digits"), (["--plot", "curves.pdf"], "plot"),
    (["--n", "-5"], "n"),
])
def test_power_bad_input(tmp_path, capsys, extra, field):
    out = tmp_path / "never.csv"
    args = ["power", *BAND, *(["--n", "25"] if "--n" not in extra else []), *extra,
            "--out", str(out)]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and f"invalid {field} " in err and "Traceback" not in err
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_power_binomial_theta_outside_space(capsys):
    assert main(["power", "--family", "binomial", "--kind", "upper", "--n", "20", "--value",
                 "0.1", "--alpha", "0.05", "--theta-range", "0.5:1.2"]) == 2
    assert "strictly between 0 and 1" in capsys.readouterr().err


def test_plan_text_json_and_plot(tmp_path, capsys):
    png = tmp_path / "plan.png"
    assert main(["plan", *BAND, "--alternatives", "1.6,3.0", "--target", "0.9",
                 "--rule", "conservative", "--plot", str(png)]) == 0
    out = capsys.readouterr().out
    assert "n = 100" in out and "n_from = 100" in out and "randomised rule needs n = 97" in out
    assert png.read_bytes()[:4] == b"\x89PNG"
    assert main(["plan", *BAND, "--alternatives", "1.6,3.0", "--target", "0.9", "--json",
                 "--no-verify"]) == 0
    js = json.loads(capsys.readouterr().out)
    assert js["n"] == 97 and js["n_from"] == 97 and js["rule"] == "randomised"
    assert [p["alternative"] for p in js["power"]] == [1.6, 3.0]
    assert min(p["power"] for p in js["power"]) >= 0.9
    assert js["design"]["c1"] is not None


@pytest.mark.parametrize("extra, needle", [
    (["--alternatives", "2.2", "--target", "0.9"], "invalid alternative = 2.2"),
    (["--alternatives", "3", "--target", "0.05"], "invalid target = 0.05"),
    (["--alternatives", "3", "--target", "1.5"], "invalid target = 1.5"),
    (["--alternatives", "3"], "--target"),
    (["--alternatives", "3", "--target", "0.9", "--n", "10"], "unknown option --n"),
    (["--alternatives", "3", "--target", "0.9", "--step", "-1"], "invalid step = -1"),
    (["--alternatives", "3", "--target", "0.9", "--plot", "p.jpg"], "invalid plot = p.jpg"),
    (["--alternatives", "3", "--target", "0.9", "--rule", "fast"], "invalid rule = fast"),
])
def test_plan_bad_input(tmp_path, capsys, extra, needle):
    assert main(["plan", *BAND, *extra]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and needle in err and "Traceback" not in err


def test_help_texts_name_the_commands(capsys):
    for cmd in ("power", "plan", "decide"):
        with pytest.raises(SystemExit) as e:
            main([cmd, "--help"])
        assert e.value.code == 0
        assert "examples:" in capsys.readouterr().out
