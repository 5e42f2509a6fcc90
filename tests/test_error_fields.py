"""Errors carry what their one line says: ``field``, ``value`` and ``allowed`` as attributes.

A caller that relabels an error (a table spec names the key that held the value;
decide, power and the audit re-type the core's DesignError) reads the attributes,
so the message is built once and the attributes agree with it.
"""

from __future__ import annotations

import pickle

import pytest

import exactband
from exactband.audit import audit
from exactband.decide import DecideError, decide
from exactband.errors import DesignError, ExactbandError, invalid, recast, show
from exactband.oc import PlanningError, check_thetas
from exactband.tables import SpecError, load_spec

from .conftest import design_row, write_csv

SPEC = """title = "t"
family = "binomial"
kinds = ["band"]
alpha = [0.05]
n = [10]
bands = [[0.2, BAD]]
"""


def _agrees(err: ExactbandError, field: str):
    """The attributes are the facts the message states."""
    assert err.field == field
    assert f"invalid {field} = {show(err.value)}: {err.allowed}" in str(err)


def test_invalid_sets_the_attributes_and_keeps_the_message():
    e = invalid("alpha", 1.5, "0 < alpha < 1")
    assert isinstance(e, DesignError) and str(e) == "invalid alpha = 1.5: 0 < alpha < 1"
    assert (e.field, e.value, e.allowed) == ("alpha", 1.5, "0 < alpha < 1")
    missing = invalid("n", None, "n is required", PlanningError)
    assert isinstance(missing, PlanningError) and str(missing) == "missing n: n is required"
    assert (missing.field, missing.value) == ("n", None)
    plain = DesignError("something else")  # a message naming no value
    assert (plain.field, plain.value, plain.allowed) == (None, None, None)


def test_recast_keeps_the_attributes_and_survives_a_process_boundary():
    e = recast(invalid("y", -1, "a whole number >= 0"), DecideError, "table t row 2: ")
    assert isinstance(e, DecideError) and str(e).startswith("table t row 2: invalid y = -1")
    back = pickle.loads(pickle.dumps(e))  # errors cross the worker pool pickled
    assert type(back) is DecideError and str(back) == str(e)
    assert (back.field, back.value, back.allowed) == ("y", -1, "a whole number >= 0")


def test_design_errors_name_their_field():
    with pytest.raises(DesignError) as info:
        exactband.design("binomial", "upper", n=10, alpha=0.05, value=1.25)
    _agrees(info.value, "value")
    assert info.value.value == 1.25


@pytest.mark.parametrize("bad, key", [("1.3", "bands[0][1]"), ("-0.5", "bands[0][1]"),
                                      ('"x"', "bands[0][1]")])
def test_spec_error_names_the_key_from_the_attributes(tmp_path, bad, key):
    path = tmp_path / "s.toml"
    path.write_text(SPEC.replace("BAD", bad), encoding="utf-8")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    e = info.value
    assert str(e).startswith(f"{path}: invalid {key} = ")
    _agrees(e, key)


def test_spec_error_relabels_a_family_check(tmp_path):
    """The family's own message (field 'value' or 'theta') under the spec's key."""
    path = tmp_path / "s.toml"
    path.write_text(SPEC.replace("BAD", "1.3"), encoding="utf-8")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    with pytest.raises(DesignError) as core:
        exactband.design("binomial", "band", n=10, alpha=0.05, low=0.2, high=1.3)
    assert info.value.allowed == core.value.allowed  # the family's words, not re-parsed text
    assert info.value.value == core.value.value == 1.3


def test_decide_and_planning_errors_carry_the_fields():
    d = exactband.design("poisson", "upper", n=10, alpha=0.05, value=1, verify=False)
    with pytest.raises(DecideError) as info:
        decide(d, 15, digits_read="12a")
    _agrees(info.value, "digits-read")
    with pytest.raises(DecideError) as info:
        decide(d, -1)
    _agrees(info.value, "y")  # from strict.whole, re-typed by recast
    with pytest.raises(PlanningError) as info:
        check_thetas(d, [-1.0])
    _agrees(info.value, "theta")


def test_audit_invalid_row_names_its_field(cli, tmp_path):
    """An invalid row's verdict keeps the field its error names, and the XLSX report
    marks that cell (the same as a wrong number's cell)."""
    from openpyxl import load_workbook

    kw = dict(family="poisson", kind="band", n=25, alpha=0.05, low=2, high=2.5)
    d = exactband.design(**kw)
    ok = design_row(d, **kw)
    rows = [ok, dict(ok, alpha="1.5"), dict(ok, c1="")]
    path = write_csv(tmp_path / "vendor.csv", rows)
    result = audit(path, workers=1)
    fields = [v.error_field for v in result.verdicts]
    assert [v.verdict for v in result.verdicts] == ["ok", "invalid", "invalid"]
    assert fields == [None, "alpha", "c1"]
    code, _, _ = cli("audit", path, "--report", tmp_path / "r", "--workers", "1")
    assert code == 1
    ws = load_workbook(tmp_path / "r" / "audit-report.xlsx")["audit"]
    header = [c.value for c in ws[6]]
    fill = {name: [ws.cell(r, header.index(name) + 1).fill.fgColor.rgb for r in (7, 8, 9)]
            for name in ("alpha", "their c1")}  # headings: the column names, spaced
    marked = "00F4B6B6"  # xlsx_report.WRONG[0], the fill of a cell holding a wrong number
    assert fill["alpha"][1] == marked and fill["their c1"][2] == marked
    assert fill["alpha"][0] != marked and fill["alpha"][2] != marked


def test_spec_unknown_and_missing_keys_name_the_key(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(SPEC.replace("BAD", "0.3") + "colour = 3\n", encoding="utf-8")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    assert "unknown key colour" in str(info.value)
    assert (info.value.field, info.value.value) == ("colour", 3)
    path.write_text(SPEC.replace("BAD", "0.3").replace('title = "t"\n', ""), encoding="utf-8")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    assert "missing key 'title'" in str(info.value) and info.value.field == "title"
