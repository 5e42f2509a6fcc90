"""Bad input of every kind gives one clear line naming the field, the value and the rule."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import exactband
from exactband import DesignError

BASE = dict(family="poisson", kind="band", n=25, alpha=0.05, low=2.0, high=2.5)
CASES = [
    # (changes to BASE, field named in the message, text that must appear)
    (dict(alpha=0.0), "alpha", "0 < alpha < 1"),
    (dict(alpha=1.0), "alpha", "0 < alpha < 1"),
    (dict(alpha=-0.1), "alpha", "0 < alpha < 1"),
    (dict(alpha=1.5), "alpha", "0 < alpha < 1"),
    (dict(alpha=math.nan), "alpha", "finite"),
    (dict(alpha="often"), "alpha", "finite"),
    (dict(low=3.0), "low", "smaller than high"),
    (dict(low=2.5), "low", "smaller than high"),
    (dict(low=-1.0), "low", "> 0"),
    (dict(low=0.0), "low", "> 0"),
    (dict(high=math.inf), "high", "finite"),
    (dict(low=math.nan), "low", "finite"),
    (dict(n=0), "n", "> 0"),
    (dict(n=-3), "n", "> 0"),
    (dict(n=math.inf), "n", "> 0"),
    (dict(n=None), "n", "required"),
    (dict(family="binomial", low=0.2, high=1.2), "high", "between 0 and 1"),
    (dict(family="binomial", low=0.0, high=0.5), "low", "between 0 and 1"),
    (dict(family="binomial", n=25.5, low=0.2, high=0.3), "n", "whole number"),
    (dict(family="binomial", n=0, low=0.2, high=0.3), "n", "whole number"),
    (dict(family="negative-binomial", n=3.5, dispersion=2.0), "n", "whole number"),
    (dict(family="negative-binomial"), "dispersion", "dispersion k"),
    (dict(family="negative-binomial", dispersion=0.0), "dispersion", "> 0"),
    (dict(family="negative-binomial", dispersion=math.nan), "dispersion", "finite"),
    (dict(dispersion=2.0), "dispersion", "negative-binomial"),
    (dict(value=2.2), "value", "takes only low and high"),
    (dict(high=None), "high", "needs low and high"),
    (dict(kind="upper"), "low", "takes only value"),
    (dict(kind="upper", low=None, high=None), "value", "needs value"),
    (dict(family="weibull"), "family", "poisson, binomial, negative-binomial, normal, gamma"),
    (dict(kind="two-sided"), "kind", "upper, lower, point, band, equivalence"),
]


@pytest.mark.parametrize("change,field,text", CASES)
def test_bad_input_gives_one_clear_line(change, field, text):
    kw = dict(BASE)
    kw.update(change)
    with pytest.raises(DesignError) as info:
        exactband.design(kw.pop("family"), kw.pop("kind"), **kw)
    msg = str(info.value)
    assert "\n" not in msg
    assert msg.startswith(f"invalid {field} = " if dict(BASE, **change).get(field) is not None
                          else f"missing {field}: "), msg
    assert "None" not in msg, msg  # an absent value is "missing", never "= None"
    assert text in msg, msg


@pytest.mark.parametrize("precision", [0, 5, 19, 1001, 50.5, "many", True])
def test_bad_precision(precision):
    with pytest.raises(DesignError, match="invalid precision"):
        exactband.design("poisson", "upper", n=3, value=1, alpha=0.05, precision=precision)


def test_batch_reports_the_bad_row():
    frame = pd.DataFrame({
        "family": ["poisson", "poisson", "binomial"],
        "kind": ["band", "upper", "upper"],
        "n": [25, 10, 12.5],
        "alpha": [0.05, 0.05, 0.05],
        "low": [2.0, None, None], "high": [2.5, None, None], "value": [None, 2.0, 0.1],
    }, index=["first", "second", "third"])
    with pytest.raises(DesignError) as info:
        exactband.designs(frame, verify=False)
    assert str(info.value).startswith("row third: invalid n = 12.5")


def test_batch_requires_the_core_columns():
    with pytest.raises(DesignError, match="missing column"):
        exactband.designs(pd.DataFrame({"family": ["poisson"], "n": [3]}))


def test_power_rejects_theta_outside_the_family_space():
    d = exactband.design("binomial", "upper", n=10, value=0.2, alpha=0.05, verify=False)
    with pytest.raises(DesignError, match="invalid theta"):
        d.power([0.1, 1.2])


@pytest.mark.parametrize("change,field", [
    (dict(alpha="abc"), "alpha"), (dict(value=2.0), "value"), (dict(family="weibull"), "family"),
    (dict(kind=None), "kind"), (dict(high=np.nan), "high"), (dict(n=True), "n"),
    (dict(dispersion=1.0), "dispersion"), (dict(low=9.0), "low"),
])
def test_batch_message_is_the_single_design_message(change, field):
    good = dict(family="poisson", kind="band", n=25.0, alpha=0.05, low=2.0, high=2.5,
                value=np.nan, dispersion=np.nan)
    bad = dict(good)
    bad.update(change)
    frame = pd.DataFrame([good, good, bad, good], dtype=object)
    with pytest.raises(DesignError) as info:
        exactband.designs(frame, verify=False)
    assert str(info.value).startswith((f"row 2: invalid {field} = ", f"row 2: missing {field}: ")), \
        str(info.value)


values = st.one_of(st.none(), st.just(np.nan), st.floats(allow_nan=True, allow_infinity=True),
                   st.integers(-3, 3000), st.sampled_from(["2", "x", "", "0.5"]))


@settings(max_examples=400)
@given(st.sampled_from(["poisson", "binomial", "negative-binomial", "Poisson ", "other"]),
       st.sampled_from(["upper", "lower", "point", "band", "equivalence", "BAND"]),
       values, values, values, values, values, values)
def test_batch_validation_agrees_with_make_problem(family, kind, n, alpha, low, high, value, k):
    # the column-wise check of designs() must accept exactly what make_problem accepts
    from exactband.params import make_problem

    def clean(v):
        return None if v is None or (isinstance(v, float) and math.isnan(v)) else v

    try:
        make_problem(family, kind, n=clean(n), alpha=clean(alpha), low=clean(low),
                     high=clean(high), value=clean(value), dispersion=clean(k))
        single_ok = True
    except DesignError:
        single_ok = False
    frame = pd.DataFrame([dict(family=family, kind=kind, n=n, alpha=alpha, low=low, high=high,
                               value=value, dispersion=k)], dtype=object)
    try:
        exactband.designs(frame, verify=False)
        batch_ok = True
    except DesignError:
        batch_ok = False
    assert single_ok == batch_ok


def test_too_spread_for_the_precise_solver_is_a_clear_line():
    # a Poisson mean of 1e12 is read from its tails, but alpha = 0.5 puts the cutoff at
    # the centre, where the continued fractions take ~sd terms: declined before the work
    with pytest.raises(DesignError, match="too spread out"):
        exactband.design("poisson", "upper", n=1e12, value=1.0, alpha=0.5)
    fast = exactband.design("poisson", "upper", n=1e12, value=1.0, alpha=0.5, verify=False)
    assert fast.c2 >= 1e12
