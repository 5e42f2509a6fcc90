"""Table spec validation: every kind of bad spec gives one line, exit 2, nothing written."""

from __future__ import annotations

import pytest

from exactband.cli import main
from exactband.tables.spec import GRID_LIMIT, LARGE_LIMIT, SpecError, load_spec

from .tables_support import write_spec

BASE = {
    "title": '"T"',
    "family": '"poisson"',
    "kinds": '["band"]',
    "alpha": "[0.05]",
    "n": "[10]",
    "bands": "[[2.0, 2.5]]",
}


def toml(**changes) -> str:
    """BASE with keys changed (value text) or removed (None)."""
    keys = dict(BASE)
    keys.update(changes)
    return "".join(f"{k} = {v}\n" for k, v in keys.items() if v is not None)


BINOM = dict(family='"binomial"', bands="[[0.1, 0.2]]")

# (case id, spec text, substrings the one-line message must contain besides the file name)
BAD = [
    ("unknown-key", toml(colour='"red"'), ["unknown key", "colour"]),
    ("missing-title", toml(title=None), ["missing key 'title'"]),
    ("toml-syntax", 'title = "T\n', ["not valid TOML"]),
    ("title-type", toml(title="5"), ["invalid title = 5", "text"]),
    ("title-two-lines", toml(title='"""a\nb"""'), ["invalid title", "one line"]),
    ("title-unprintable", toml(title='"\u0141\u00f3d\u017a mill"'),
     ["invalid title = \u0141\u00f3d\u017a mill", "Windows-1252", "replace '\u0141'"]),
    ("family-unknown", toml(family='"gaussian"'), ["invalid family = gaussian", "poisson"]),
    ("kind-unknown", toml(kinds='["two-sided"]'), ["invalid kinds[0] = two-sided", "band"]),
    ("kinds-not-list", toml(kinds='"band"'), ["invalid kinds = band", "list"]),
    ("alpha-empty", toml(alpha="[]"), ["invalid alpha = []", "at least one"]),
    ("alpha-range", toml(alpha="[0.05, 1.5]"), ["invalid alpha[1] = 1.5", "0 < alpha < 1"]),
    ("alpha-quoted", toml(alpha='["0.05"]'), ["invalid alpha[0] = 0.05", "without quotes"]),
    ("alpha-scalar", toml(alpha="0.05"), ["invalid alpha = 0.05", "alpha = [0.05]"]),
    ("alpha-repeat", toml(alpha="[0.05, 0.01, 0.05]"), ["invalid alpha[2] = 0.05", "repeats"]),
    ("n-zero", toml(n="[10, 0]"), ["invalid n[1] = 0", "> 0"]),
    ("n-not-whole", toml(n="[10.5]", **BINOM), ["invalid n[0] = 10.5", "whole number"]),
    ("n-table-step", toml(n="{from = 10, to = 20}"), ["invalid n = ", "missing step"]),
    ("n-table-order", toml(n="{from = 20, to = 10, step = 5}"), ["invalid n.to = 10"]),
    ("n-table-key", toml(n="{from = 1, to = 2, step = 1, by = 3}"), ["invalid n.by = 3"]),
    ("band-order", toml(bands="[[2.5, 2.0]]"), ["invalid bands[0] = [2.5, 2.0]", "smaller"]),
    ("band-space", toml(bands="[[0.5, 1.5]]", family='"binomial"'),
     ["invalid bands[0][1] = 1.5", "between 0 and 1"]),
    ("band-not-pair", toml(bands="[[1, 2, 3]]"), ["invalid bands[0] = [1, 2, 3]", "pair"]),
    ("values-missing", toml(kinds='["band", "upper"]'), ["missing key 'values'", "upper"]),
    ("values-unused", toml(values="[2.0]"), ["invalid values = [2.0]", "no kind"]),
    ("bands-missing", toml(kinds='["band", "upper"]', bands=None, values="[2]"),
     ["missing key 'bands'", "band"]),
    ("dispersion-poisson", toml(dispersion="2"), ["invalid dispersion = 2", "negative-binomial"]),
    ("dispersion-missing", toml(family='"negative-binomial"'), ["missing key 'dispersion'"]),
    ("dispersion-negative", toml(family='"negative-binomial"', dispersion="-1"),
     ["invalid dispersion = -1", "> 0"]),
    ("random-digits", toml(random_digits="5"), ["invalid random_digits = 5", "2 to 4"]),
    ("gamma-decimals", toml(gamma_decimals="0"), ["invalid gamma_decimals = 0", "1 to 10"]),
    ("conservative", toml(conservative='"yes"'), ["invalid conservative = yes", "true or false"]),
    ("paper", toml(paper='"A3"'), ["invalid paper = A3", "A4, Letter"]),
    ("precision", toml(precision="10"), ["invalid precision = 10", "20 to 1000"]),
    ("seed", toml(random_seed="-1"), ["invalid random_seed = -1"]),
    ("grid-large", toml(n="{from = 1, to = 30000, step = 1}"),
     ["invalid grid size = 30000", "--allow-large"]),
    # valid on paper, but beyond the high-precision solver's tables: found while verifying
    ("beyond-precise", toml(n="[1e12]", alpha="[0.5]"),
     ["cannot be verified", "invalid n = 1000000000000.0"]),
]


@pytest.mark.parametrize("case, text, parts", BAD, ids=[b[0] for b in BAD])
def test_bad_spec_one_line_exit_2_nothing_written(tmp_path, capsys, case, text, parts):
    spec = write_spec(tmp_path, "bad", text)
    out = tmp_path / "out"
    rc = main(["table", str(spec), "--out", str(out)])
    captured = capsys.readouterr()
    assert rc == 2
    assert captured.out == ""
    lines = captured.err.splitlines()
    assert len(lines) == 1, captured.err
    line = lines[0]
    assert line.startswith("exactband: error: ")
    assert str(spec) in line  # names the file
    for part in parts:
        assert part in line
    assert not out.exists()  # nothing written


def test_file_level_errors(tmp_path, capsys):
    folder = tmp_path / "folder.toml"
    folder.mkdir()
    cases = [(tmp_path / "missing.toml", "no such file"), (folder, "not a file")]
    txt = tmp_path / "spec.txt"
    txt.write_text(toml())
    cases.append((txt, "must end in .toml"))
    latin = tmp_path / "latin.toml"
    latin.write_bytes(toml(title='"caf\xe9"').encode("latin-1"))
    cases.append((latin, "not UTF-8"))
    spaced = tmp_path / "my table.toml"
    spaced.write_text(toml())
    cases.append((spaced, "invalid spec name"))
    for path, part in cases:
        rc = main(["table", str(path), "--out", str(tmp_path / "out")])
        err = capsys.readouterr().err.splitlines()
        assert rc == 2 and len(err) == 1 and part in err[0], (path, err)
        assert not (tmp_path / "out").exists()


def test_out_is_a_file(tmp_path, capsys):
    spec = write_spec(tmp_path, "ok", toml())
    blocker = tmp_path / "file"
    blocker.write_text("x")
    rc = main(["table", str(spec), "--out", str(blocker)])
    err = capsys.readouterr().err.splitlines()
    assert rc == 2 and len(err) == 1 and "not a folder" in err[0]


def test_usage_errors(tmp_path, capsys):
    spec = write_spec(tmp_path, "ok", toml())
    for argv, part in [
        (["table"], "give a SPEC"),
        (["table", str(spec)], "--out DIR is required"),
        (["table", str(spec), "--check", str(tmp_path)], "takes no SPEC"),
        (["table", str(spec), "--out", str(tmp_path / "o"), "--workers", "0"], "--workers"),
        (["table", "--check", str(tmp_path / "nowhere")], "not a folder"),
    ]:
        rc = main(argv)
        err = capsys.readouterr().err.splitlines()
        assert rc == 2 and len(err) == 1 and part in err[0], (argv, err)
    assert not (tmp_path / "o").exists()
    # a folder without a set is a finding (exit 1, as for any failed check), not bad usage
    assert main(["table", "--check", str(tmp_path)]) == 1
    assert "no NAME.manifest.json" in capsys.readouterr().out


def test_valid_spec_is_normalised(tmp_path):
    text = toml(n="{from = 0.5, to = 1.5, step = 0.25}", kinds='["band", "upper"]',
                values="[2, 3.5]", paper='"letter"')
    spec = load_spec(write_spec(tmp_path, "fine", text))
    assert spec.n == (0.5, 0.75, 1.0, 1.25, 1.5)  # decimal steps, no drift
    assert spec.paper == "Letter" and spec.kinds == ("band", "upper")
    assert spec.values == (2.0, 3.5) and spec.bands == ((2.0, 2.5),)
    assert (spec.gamma_decimals, spec.random_digits, spec.conservative, spec.precision) == (4, 3,
                                                                                       True, 50)
    assert spec.size() == 5 * (1 + 2)
    assert len(spec.sha256) == 64 and spec.name == "fine"


def test_allow_large_raises_the_limit(tmp_path):
    big = toml(n=f"{{from = 1, to = {GRID_LIMIT + 1}, step = 1}}")
    path = write_spec(tmp_path, "big", big)
    with pytest.raises(SpecError):
        load_spec(path)
    assert load_spec(path, allow_large=True).size() == GRID_LIMIT + 1
    huge = write_spec(tmp_path, "huge", toml(n=f"{{from = 1, to = {LARGE_LIMIT}, step = 1}}",
                                             bands="[[1, 2], [2, 3]]"))
    with pytest.raises(SpecError, match="at most 200000"):
        load_spec(huge, allow_large=True)
