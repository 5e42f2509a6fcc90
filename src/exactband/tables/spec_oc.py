"""The optional ``[oc]`` table of a spec: operating characteristics in the table set.

::

    [oc]
    thetas = [1.0, 1.5, 3.0, 3.5]        # the spreadsheet's Power sheet: power at these
    curves = true                        # PDF pages of OC curves (default true)
    n = [10, 25, 50]                     # the n drawn (default: every n of the spec)
    n_per_chart = 4                      # curves per chart, 1 to 6 (default 4)
    rules = ["randomised", "conservative"]   # one column of charts per rule

Every check raises SpecError with one line naming the file, the key (``oc.thetas[2]``),
the value and what is allowed, like the other keys (spec_keys.Checker).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import DesignError
from .spec_keys import TWO_POINT, Checker

OC_KEYS = ("thetas", "curves", "n", "n_per_chart", "rules")
RULES = ("randomised", "conservative", "digits")
RULE_ALIASES = {"randomized": "randomised"}  # accepted spelling
MAX_THETAS = 12  # columns of the Power sheet: still readable across a landscape page
MAX_PER_CHART = 6  # curves one chart can keep apart in greyscale (line style and marker)
MAX_PAGES = 120  # pages of OC curves in one PDF (each takes about a second to draw)
ROWS_PER_PAGE = 4  # rows of charts on a page of OC curves


@dataclass(frozen=True)
class OcSpec:
    """The validated ``[oc]`` table: what the table set shows of the operating characteristics."""

    thetas: tuple  # ascending; empty: no Power sheet
    curves: bool
    n: tuple  # the n drawn on the curve pages, in the spec's order
    n_per_chart: int
    rules: tuple  # rules drawn, one column of charts each

    def to_dict(self) -> dict:
        out = {"thetas": list(self.thetas), "curves": self.curves, "n": list(self.n),
               "n_per_chart": self.n_per_chart, "rules": list(self.rules)}
        return {k: v for k, v in out.items() if v != []}


def chart_rows(count: int, per_chart: int) -> list:
    """Sizes of the charts that hold ``count`` curves, at most ``per_chart`` each, as even
    as possible (9 by 4 -> 3, 3, 3): a last chart with one lonely curve reads badly."""
    charts = max(1, math.ceil(count / per_chart))
    base, extra = divmod(count, charts)
    return [base + (1 if i < extra else 0) for i in range(charts)]


def page_count(rows: int) -> int:
    return max(1, math.ceil(rows / ROWS_PER_PAGE))


def curve_pages(kinds, n_alpha: int, n_bands: int, n_values: int, oc: OcSpec) -> int:
    """Pages of OC curves the spec asks for: per kind and band (or value), one row of charts
    per alpha and chart of n, ROWS_PER_PAGE rows to a page."""
    if not oc.curves:
        return 0
    rows = n_alpha * len(chart_rows(len(oc.n), oc.n_per_chart))
    return sum((n_bands if k in TWO_POINT else n_values) * page_count(rows) for k in kinds)


def parse_oc(v: Checker, fam, value, spec_n: tuple, conservative: bool) -> OcSpec:
    """Check the ``[oc]`` table (``value``) of a spec whose sample sizes are ``spec_n``."""
    if not isinstance(value, dict):
        raise v.bad("oc", value, "a table, e.g. [oc] with thetas = [1.5, 3.0] on the next line "
                    "(or oc = {thetas = [1.5, 3.0]})")
    extra = [k for k in value if k not in OC_KEYS]
    if extra:
        raise v.bad(f"oc.{extra[0]}", value[extra[0]],
                    f"unknown key; [oc] takes {', '.join(OC_KEYS)}")
    thetas = ()
    if "thetas" in value:
        thetas = tuple(sorted(_thetas(v, fam, value["thetas"])))
    curves = value.get("curves", True)
    if not isinstance(curves, bool):
        raise v.bad("oc.curves", curves, "true or false (without quotes)")
    if not curves and not thetas:
        raise v.bad("oc.curves", curves, "with curves = false the [oc] table asks for nothing: "
                    "give oc.thetas (the Power sheet) or leave curves at true")
    ns = spec_n
    if "n" in value:
        ns = _subset_n(v, value["n"], spec_n)
    per = v.integer("oc.n_per_chart", value.get("n_per_chart", 4), 1, MAX_PER_CHART)
    default = ["randomised", "conservative"] if conservative and fam.discrete else ["randomised"]
    rules = tuple(_rules(v, value.get("rules", default)))
    if not fam.discrete and rules != ("randomised",):
        raise v.bad("oc.rules", value.get("rules"), f"the {fam.name} family's rules have real "
                    "cutoffs and never randomise: there is one rule; leave oc.rules out")
    return OcSpec(thetas, curves, ns, per, rules)


def _thetas(v: Checker, fam, value) -> tuple:
    if isinstance(value, list) and len(value) > MAX_THETAS:
        raise v.bad("oc.thetas", value, f"at most {MAX_THETAS} values (one column of the Power "
                    "sheet each)")

    def check(v_, key, x):
        try:
            return fam.check_theta(key, x)
        except DesignError as e:
            raise v_.rekey(key, e) from None

    return v.number_list("oc.thetas", value, check)


def _subset_n(v: Checker, value, spec_n: tuple) -> tuple:
    def check(v_, key, x):
        for n in spec_n:
            if x == n:
                return n
        shown = ", ".join(str(n) for n in spec_n[:8]) + (", ..." if len(spec_n) > 8 else "")
        raise v_.bad(key, x, f"each n drawn must be one of the spec's n ({shown})")

    picked = set(v.number_list("oc.n", value, check))
    return tuple(n for n in spec_n if n in picked)


def _rules(v: Checker, value) -> list:
    if not isinstance(value, list) or not value:
        raise v.bad("oc.rules", value, f"a list of rules from {', '.join(RULES)}, e.g. "
                    'rules = ["randomised", "conservative"]')
    out = []
    for i, x in enumerate(value):
        key = x.strip().lower() if isinstance(x, str) else x
        key = RULE_ALIASES.get(key, key)
        if key not in RULES:
            raise v.bad(f"oc.rules[{i}]", x, "one of " + ", ".join(RULES))
        if key in out:
            raise v.bad(f"oc.rules[{i}]", x, f"each rule once; it repeats "
                        f"oc.rules[{out.index(key)}]")
        out.append(key)
    return out
