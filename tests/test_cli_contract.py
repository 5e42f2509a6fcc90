"""The command-line and API contract for ordinary mistakes (issue 9 items 7-8, issue 11
messages): one line 'exactband: error: ...', exit 2, the field or path named, nothing
written; exit codes kept when stdout is closed; bounded worker pools."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from decimal import Decimal
from fractions import Fraction
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import exactband
from exactband import parallel
from exactband.errors import DesignError

from .conftest import STD, design_row, write_csv

BAND = ["--family", "poisson", "--kind", "band", "--n", "25", "--low", "2", "--high", "2.5",
        "--alpha", "0.05"]
GOOD = dict(family="poisson", kind="band", n=25, alpha=0.05, low=2, high=2.5)
PREFIX = "exactband: error: "


def one_line(cli, *args, code=2):
    rc, out, err = cli(*args)
    assert rc == code, (rc, out, err)
    assert err.count("\n") == 1 and err.startswith(PREFIX), err
    assert "Traceback" not in err and "None" not in err, err
    return err


@pytest.fixture(scope="module")
def audit_files(tmp_path_factory):
    """A CSV with one correct row and one wrong row (a finding), and its XLSX twin."""
    folder = tmp_path_factory.mktemp("audit")
    d = exactband.design(**GOOD)
    good = design_row(d, **GOOD)
    bad = dict(good, c1=str(d.c1 + 3))
    path = folder / "t.csv"
    write_csv(path, [good, bad])
    return folder, path, good


# -- names in messages ------------------------------------------------------------
def test_unknown_option_is_named_with_the_nearest(cli):
    err = one_line(cli, "design", "--familly", "poisson", "--kind", "band", "--n", "25",
                   "--alpha", "0.05")
    assert "unknown option --familly" in err and "did you mean --family?" in err
    err = one_line(cli, "audit", "x.csv", "--worker", "2")
    assert "unknown option --worker" in err and "--workers" in err
    err = one_line(cli, "--verbose", "design", *BAND)
    assert "unknown option --verbose" in err
    err = one_line(cli, "desing", *BAND)
    assert "unknown command 'desing'" in err and "did you mean design?" in err


@pytest.mark.parametrize("field,typed,nearest", [("--family", "poison", "poisson"),
                                                 ("--kind", "bnad", "band"),
                                                 ("--family", "Binomal", "binomial")])
def test_misspelt_names_get_the_nearest(cli, field, typed, nearest):
    args = dict(zip(BAND[::2], BAND[1::2]))
    args[field] = typed
    err = one_line(cli, "design", *[x for kv in args.items() for x in kv])
    assert f"did you mean {nearest}?" in err


def test_api_suggests_too():
    with pytest.raises(DesignError, match="did you mean negative-binomial"):
        exactband.design("negativ-binomial", "upper", n=5, value=1, alpha=0.05, dispersion=2)


@pytest.mark.parametrize("drop,needle", [("--high", "missing --high: the band kind needs it"),
                                         ("--low", "missing --low: the band kind needs it")])
def test_missing_values_are_named_as_options(cli, drop, needle):
    args = list(BAND)
    i = args.index(drop)
    del args[i:i + 2]
    for command in ("design", "decide", "power"):
        extra = ["--y", "3"] if command == "decide" else []
        assert needle in one_line(cli, command, *args, *extra)


def test_missing_dispersion_and_api_missing_words(cli):
    err = one_line(cli, "design", "--family", "negative-binomial", "--kind", "upper", "--n", "5",
                   "--value", "2", "--alpha", "0.05")
    assert "missing --dispersion: the negative-binomial family needs a known dispersion k" in err
    with pytest.raises(DesignError) as info:
        exactband.design("poisson", "band", n=25, low=2, alpha=0.05)
    assert str(info.value).startswith("missing high: ") and "None" not in str(info.value)


def test_decide_table_without_row_says_missing(cli, tmp_path):
    path = tmp_path / "t.csv"
    write_csv(path, [design_row(exactband.design(**GOOD), **GOOD)])
    err = one_line(cli, "decide", "--table", str(path), "--y", "3")
    assert "missing row" in err


# -- audit: file types and sheets --------------------------------------------------
@pytest.mark.parametrize("name,head,what", [
    ("demo.pdf", b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n1 0 obj\n", "PDF"),
    ("table.csv", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "PNG"),
    ("data.bin", b"fam\x00\x01\x02kind\x00\x00n", "binary"),
])
def test_audit_says_when_a_file_is_not_a_table(cli, tmp_path, name, head, what):
    p = tmp_path / name
    p.write_bytes(head * 4)
    err = one_line(cli, "audit", str(p), "--report", str(tmp_path / "rep"))
    assert "not a CSV or XLSX file" in err and what in err
    assert not (tmp_path / "rep").exists()


def test_xlsx_with_data_on_another_sheet_lists_the_sheets(cli, tmp_path, audit_files):
    from openpyxl import Workbook

    _, _, good = audit_files
    wb = Workbook()
    wb.active.title = "Cover"
    wb.active["A1"] = "Vendor table, issue 3"
    data = wb.create_sheet("Limits")
    data.append(list(STD))
    data.append([good[k] for k in STD])
    p = tmp_path / "v.xlsx"
    wb.save(p)
    err = one_line(cli, "audit", str(p))
    assert "'Cover'" in err and "'Limits'" in err and "--sheet" in err
    rc, out, _ = cli("audit", str(p), "--sheet", "Limits")
    assert rc == 0, out
    empty = Workbook()
    empty.active.title = "Blank"
    empty.create_sheet("Rules").append(list(STD))
    empty.save(tmp_path / "e.xlsx")
    err = one_line(cli, "audit", str(tmp_path / "e.xlsx"))
    assert "'Rules'" in err and "--sheet" in err


def test_missing_gamma2_column_is_noted(cli, tmp_path):
    d = exactband.design(**GOOD)
    row = design_row(d, **GOOD)
    header = [c for c in STD if c != "gamma2"]
    p = tmp_path / "nog2.csv"
    write_csv(p, [{k: row[k] for k in header}], header=header)
    rc, out, err = cli("audit", str(p))
    assert "no gamma2 column: gamma2 is read as 0" in out + err


# -- item 7: exit 2 for unwritable outputs and bad encodings ------------------------
def test_unwritable_outputs_exit_2_naming_the_path(cli, tmp_path, audit_files):
    _, csv_path, _ = audit_files
    afile = tmp_path / "afile"
    afile.write_text("x")
    cases = [
        (["power", *BAND, "--plot", "/proc/x.png"], "/proc/x.png"),
        (["power", *BAND, "--out", str(afile / "p.csv")], str(afile)),
        (["challenge", "--out", str(afile / "c.csv")], str(afile)),
        (["audit", str(csv_path), "--report", str(afile / "rep")], str(afile)),
        (["audit", str(csv_path), "--report", "/proc/rep"], "/proc/rep"),
        (["table", "tables/demo.toml", "--out", str(afile / "set")], str(afile)),
    ]
    root = Path(__file__).resolve().parent.parent
    for args, path in cases:
        args = [str(root / a) if a == "tables/demo.toml" else a for a in args]
        err = one_line(cli, *args)
        assert path in err, (args, err)
    assert afile.read_text() == "x" and sorted(os.listdir(tmp_path)) == ["afile"]


def test_special_files_are_never_replaced(cli, tmp_path):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    err = one_line(cli, "power", *BAND, "--out", str(fifo))
    assert "not a regular file" in err and str(fifo) in err
    assert fifo.is_fifo()
    plot = tmp_path / "pipe.png"
    os.mkfifo(plot)
    assert "not a regular file" in one_line(cli, "power", *BAND, "--plot", str(plot))
    assert plot.is_fifo()


def test_text_codec_only_for_encoding(cli, audit_files):
    _, csv_path, _ = audit_files
    for enc in ("rot13", "base64", "zlib", "no-such-codec"):
        err = one_line(cli, "audit", str(csv_path), "--encoding", enc)
        assert "--encoding" in err and enc in err


@pytest.mark.parametrize("args", [["table", "tables/demo.toml", "--out", ""],
                                  ["table", "--check", ""],
                                  ["power", *BAND, "--out", ""],
                                  ["challenge", "--out", " "]])
def test_empty_paths_are_refused(cli, tmp_path, monkeypatch, args):
    monkeypatch.chdir(tmp_path)
    root = Path(__file__).resolve().parent.parent
    args = [str(root / a) if a == "tables/demo.toml" else a for a in args]
    assert "a file or folder name is required" in one_line(cli, *args)
    assert os.listdir(tmp_path) == []


def test_table_check_takes_its_folder_like_generating(cli, tmp_path):
    root = Path(__file__).resolve().parent.parent
    assert "no SPEC" in one_line(cli, "table", str(root / "tables/demo.toml"), "--check",
                                 "--out", str(tmp_path))
    assert "needs the folder" in one_line(cli, "table", "--check")
    assert "two folders" in one_line(cli, "table", "--check", str(tmp_path), "--out",
                                     str(tmp_path / "other"))
    a = cli("table", "--check", str(tmp_path))
    b = cli("table", "--check", "--out", str(tmp_path))
    assert a == b  # the same folder either way, the same answer


def test_closed_stdout_keeps_the_exit_code(tmp_path, audit_files):
    """A reader that closed the pipe before anything was written (deterministic: the
    read end is closed before the command starts)."""
    _, csv_path, _ = audit_files
    r, w = os.pipe()
    os.close(r)
    try:
        proc = subprocess.run([sys.executable, "-m", "exactband", "audit", str(csv_path)],
                              stdout=w, stderr=subprocess.PIPE, text=True, timeout=300)
    finally:
        os.close(w)
    assert proc.returncode == 1, proc.stderr  # a finding stays a finding
    assert "closed early; exit 1" in proc.stderr and "Traceback" not in proc.stderr


# -- workers ------------------------------------------------------------------------
def test_workers_one_parser_one_default(cli, audit_files, monkeypatch):
    _, csv_path, _ = audit_files
    for bad in ("x", "0", "2_0", "２", "1.5", "-3"):
        for args in (["audit", str(csv_path)], ["table", "--check", "."]):
            assert "invalid --workers" in one_line(cli, *args, "--workers", bad)
    with pytest.raises(DesignError, match="invalid workers"):
        exactband.designs(pd.DataFrame([GOOD]), workers="x")
    cores = parallel.usable_cores()
    assert cores == len(os.sched_getaffinity(0))
    assert parallel.resolve_workers(None) == cores
    assert parallel.resolve_workers(200, 54) == min(cores, 54)
    assert parallel.resolve_workers(None, 3) == min(cores, 3)
    assert parallel.resolve_workers(np.int64(1), 100) == 1


def test_pool_never_larger_than_the_work(monkeypatch):
    import concurrent.futures as cf

    seen = []

    class Recorder(cf.ThreadPoolExecutor):
        def __init__(self, max_workers=None, initializer=None, initargs=()):
            seen.append(max_workers)
            super().__init__(max_workers=max_workers)

    monkeypatch.setattr(cf, "ProcessPoolExecutor", Recorder)
    monkeypatch.setattr(parallel, "usable_cores", lambda: 64)
    out = parallel.pmap(abs, [-i for i in range(10)], workers=200)
    assert out == list(range(10)) and seen == [10]


def _pdeathsig(_):
    import ctypes

    sig = ctypes.c_int(0)
    ctypes.CDLL(None).prctl(2, ctypes.byref(sig), 0, 0, 0)  # PR_GET_PDEATHSIG
    return sig.value


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="PR_SET_PDEATHSIG is Linux")
def test_pool_workers_are_tied_to_their_parent():
    import signal

    values = parallel.pmap(_pdeathsig, range(16), workers=2)
    assert set(values) == {int(signal.SIGKILL)}


KILL_SCRIPT = """
import os, sys, time
from exactband.parallel import pmap
def task(i):
    with open(sys.argv[1] + f".{os.getpid()}", "w") as fh:
        fh.write("up")
    time.sleep(600)
pmap(task, range(16), workers=2)
"""


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="PR_SET_PDEATHSIG is Linux")
def test_killed_parent_leaves_no_worker(tmp_path):
    import signal
    import time

    stem = tmp_path / "worker"
    parent = subprocess.Popen([sys.executable, "-c", KILL_SCRIPT, str(stem)])
    try:
        pids = []
        for _ in range(600):  # wait for the named stop point: both workers started a task
            pids = [int(p.name.rsplit(".", 1)[1]) for p in tmp_path.glob("worker.*")]
            if len(pids) >= 2:
                break
            time.sleep(0.1)
        assert len(pids) >= 2
    finally:
        parent.send_signal(signal.SIGKILL)
        parent.wait()

    def alive(pid):
        try:
            with open(f"/proc/{pid}/stat") as fh:
                return fh.read().split(")")[-1].split()[0] != "Z"
        except FileNotFoundError:
            return False

    for _ in range(300):
        if not any(alive(p) for p in pids):
            break
        time.sleep(0.1)
    leftover = [p for p in pids if alive(p)]
    for p in leftover:
        os.kill(p, signal.SIGKILL)
    assert not leftover


# -- item 8: strict numbers ---------------------------------------------------------
@pytest.mark.parametrize("option,value", [("--n", "2_5"), ("--n", "２５"), ("--n", "25 "),
                                          ("--alpha", "0.0_5"), ("--low", "inf"),
                                          ("--alpha", "٠.05")])
def test_numbers_are_ascii_digits_only(cli, option, value):
    args = list(BAND)
    args[args.index(option) + 1] = value
    if value.strip() == "25":
        assert cli("design", *args)[0] == 0  # surrounding spaces are fine
        return
    err = one_line(cli, "design", *args)
    assert f"invalid {option[2:]} = " in err and "ASCII" in err or "finite" in err


@pytest.mark.parametrize("y", ["3_9", "1e30", "39.0", "３９", "0x27"])
def test_counts_are_plain_digits(cli, y):
    err = one_line(cli, "decide", *BAND, "--y", y)
    assert f"invalid y = {y}" in err and "1000000000000000019884624838656" not in err


def test_huge_values_are_echoed_as_given(cli):
    big = "1" + "0" * 30
    rc, out, err = cli("decide", *BAND, "--y", big, "--json")
    assert rc == 0 and json.loads(out)["y"] == int(big)
    err = one_line(cli, "design", "--family", "poisson", "--kind", "upper", "--n", "1e30",
                   "--value", "2", "--alpha", "0.05")
    assert "invalid n = 1e30" in err
    err = one_line(cli, "design", "--family", "binomial", "--kind", "upper", "--n", big,
                   "--value", "0.1", "--alpha", "0.05")
    assert f"invalid n = {big}" in err


@pytest.mark.parametrize("call,field", [
    (lambda: exactband.design("poisson", [], n=25, value=2, alpha=0.05), "kind"),
    (lambda: exactband.design({"a": 1}, "upper", n=25, value=2, alpha=0.05), "family"),
    (lambda: exactband.design("poisson", "upper", n=[25], value=2, alpha=0.05), "n"),
    (lambda: exactband.design("poisson", "upper", n=25, value={2}, alpha=0.05), "value"),
    (lambda: exactband.design("poisson", "upper", n=25, value=2, alpha=b"0.05"), "alpha"),
    (lambda: exactband.design("poisson", "upper", n=25, value=2, alpha=0.05, precision="x"),
     "precision"),
    (lambda: exactband.design("poisson", "upper", n=25, value=2, alpha=0.05, verify="no"),
     "verify"),
    (lambda: exactband.designs({"family": ["poisson"]}), "frame"),
    (lambda: exactband.designs(pd.DataFrame([dict(GOOD)]), workers="x"), "workers"),
    (lambda: exactband.designs(pd.DataFrame([dict(GOOD)]), workers=[2]), "workers"),
])
def test_api_raises_its_own_errors(call, field):
    with pytest.raises(DesignError) as info:
        call()
    msg = str(info.value)
    assert isinstance(info.value, ValueError) and "\n" not in msg
    assert f"invalid {field} = " in msg, msg


def test_decide_api_errors():
    from exactband.decide import DecideError, decide

    d = exactband.design(**GOOD)
    for call, field in ((lambda: decide("d", 3), "design"), (lambda: decide(d, [3]), "y"),
                        (lambda: decide(d, 3, rule=["x"]), "rule"),
                        (lambda: decide(d, d.c1, digits_read=4.82), "digits-read"),
                        (lambda: decide(d, 3, random_digits="3_"), "random-digits")):
        with pytest.raises(DecideError, match=f"invalid {field} = "):
            call()
    assert decide(d, Decimal(d.c1), digits_read="000").y == d.c1


def test_api_accepts_decimal_fraction_and_numpy():
    ref = exactband.design(**GOOD)
    for n in (Decimal("25"), np.int64(25), np.float64(25.0), Fraction(25)):
        d = exactband.design("poisson", "band", n=n, alpha=Decimal("0.05"), low=Decimal("2"),
                             high=np.float32(2.5))
        assert (d.c1, d.c2, d.gamma1, d.gamma2) == (ref.c1, ref.c2, ref.gamma1, ref.gamma2)
    b = exactband.design("binomial", "upper", n=Decimal("25"), value=0.1, alpha=0.05)
    assert b.n == 25 and isinstance(b.n, int)
    with pytest.raises(DesignError, match="invalid n = 25.5"):
        exactband.design("binomial", "upper", n=Decimal("25.5"), value=0.1, alpha=0.05)


def test_spec_names_get_the_nearest(tmp_path):
    from exactband.tables.spec import SpecError, load_spec

    p = tmp_path / "s.toml"
    p.write_text('title = "t"\nfamily = "poison"\nkinds = ["uper"]\nalpha = [0.05]\nn = [5]\n'
                 'values = [2]\n')
    with pytest.raises(SpecError, match="did you mean poisson"):
        load_spec(p)
    p.write_text(p.read_text().replace('"poison"', '"poisson"'))
    with pytest.raises(SpecError, match="did you mean upper"):
        load_spec(p)


# -- strict readers, property form ---------------------------------------------------
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from exactband import strict  # noqa: E402


@settings(max_examples=60, deadline=None)
@given(st.integers(min_value=0, max_value=10 ** 40))
def test_whole_reads_plain_digits_exactly(i):
    assert strict.whole("y", str(i)) == i  # no float in between: exact for 40 digits
    assert strict.whole("y", Decimal(i)) == i
    with pytest.raises(DesignError):
        strict.whole("y", f"{i}.5")


@settings(max_examples=60, deadline=None)
@given(st.text(min_size=1, max_size=8))
def test_text_with_any_non_ascii_or_underscore_is_refused(text):
    bad = any(not c.isascii() or c == "_" for c in text)
    if bad:
        with pytest.raises(DesignError):
            strict.real("x", text)
        with pytest.raises(DesignError):
            strict.whole("x", text)
    else:  # what Python's float() reads, less inf/nan/underscores; refused cleanly otherwise
        try:
            value = strict.real("x", text)
        except DesignError as e:
            assert str(e).startswith(("invalid x = ", "missing x: "))
        else:
            assert value == float(text)
