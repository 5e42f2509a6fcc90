"""Operating characteristics of a table set, computed in the build (writers only lay them out).

Two products, both from the verified Designs of the table and the three rules of
``oc.rule_designs`` (randomised, conservative, field rule with the spec's random
digits); every number is an exact sum over the law of Y (``Design.power``):

* ``powers``: for each design of the table, the power of each rule at the
  spec's ``oc.thetas`` and whether each theta lies in H0 (the Power sheet);
* ``groups``: for each kind and band (or value), the curves of the OC pages,
  one chart per alpha and a few n (``oc.operating_characteristics`` on one
  theta grid per band or value, ``oc.shared_thetas``: the null region and the
  climb of every chart's curves; for upper tests all of H0).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import kinds as K
from ..oc import operating_characteristics, rule_designs, shared_thetas
from .grid import hypotheses, sections
from .spec import TableSpec
from .spec_oc import RULES, chart_rows

CURVE_POINTS = 161  # thetas per curve: smooth at print size, cheap to compute


@dataclass(frozen=True)
class DesignPower:
    """Power of the three rules of one design at the spec's thetas."""

    row: int  # index of the design in TableSet.rows
    section: int  # number of its printed table
    in_null: tuple  # one bool per theta: theta lies in H0
    power: tuple  # (rule, tuple of powers at the thetas) for each rule of oc.RULES


@dataclass(frozen=True)
class Chart:
    """One chart of OC curves: one alpha, a few n, the curves of every rule."""

    alpha: float
    designs: tuple  # ascending n
    frames: tuple  # oc.operating_characteristics of each design on the chart's theta grid


@dataclass(frozen=True)
class CurveGroup:
    """The OC pages of one kind and band (or value): charts in print order."""

    kind: str
    points: tuple  # (low, high) or (value,)
    sections: tuple  # numbers of the printed tables the curves belong to
    charts: tuple  # Chart, alpha as the spec lists them, then n ascending


@dataclass(frozen=True)
class OcData:
    thetas: tuple
    powers: tuple  # DesignPower per row of the table (empty without oc.thetas)
    groups: tuple  # CurveGroup (empty when oc.curves is false)


def compute(spec: TableSpec, rows) -> OcData | None:
    """The operating characteristics ``spec.oc`` asks for, from the verified rows."""
    if spec.oc is None:
        return None
    number = {sec: i for i, sec in enumerate(sections(spec), start=1)}
    thetas = spec.oc.thetas
    powers = tuple(_design_power(i, r.design, number[(r.design.kind, r.design.alpha)], thetas,
                                 spec.random_digits)
                   for i, r in enumerate(rows)) if thetas else ()
    groups = tuple(_groups(spec, rows, number)) if spec.oc.curves else ()
    return OcData(thetas, powers, groups)


def _design_power(i, d, section, thetas, random_digits) -> DesignPower:
    th = np.asarray(thetas, dtype=float)
    inside = np.atleast_1d(K.in_null(d.kind, th, d.low, d.high, d.value))
    rules = rule_designs(d, random_digits)
    power = tuple((name, tuple(float(x) for x in np.atleast_1d(rules[name].power(th))))
                  for name in RULES)
    return DesignPower(i, section, tuple(bool(x) for x in inside), power)


def _groups(spec: TableSpec, rows, number: dict):
    drawn = set(spec.oc.n)
    for kind in spec.kinds:
        for hyp in hypotheses(spec, kind):
            points = tuple(hyp)  # Design.points: (low, high) or (value,)
            mine = [r.design for r in rows if r.design.kind == kind
                    and r.design.points == points and r.design.n in drawn]
            # one x-range for every chart of the band (or value): all alpha, all n
            theta = shared_thetas(mine, CURVE_POINTS) if mine else None
            charts = []
            for alpha in spec.alpha:
                ds = sorted((r.design for r in rows if r.design.kind == kind
                             and r.design.alpha == alpha and r.design.points == points
                             and r.design.n in drawn), key=lambda d: d.n)
                start = 0
                for size in chart_rows(len(ds), spec.oc.n_per_chart):
                    group = ds[start:start + size]
                    start += size
                    if group:
                        charts.append(_chart(alpha, group, spec.random_digits, theta))
            yield CurveGroup(kind, points, tuple(number[(kind, a)] for a in spec.alpha),
                             tuple(charts))


def _chart(alpha, designs, random_digits, theta) -> Chart:
    """Curves of a few n on the band's theta grid (``oc.shared_thetas``)."""
    frames = tuple(operating_characteristics(d, theta, random_digits=random_digits)
                   for d in designs)
    return Chart(alpha, tuple(designs), frames)
